import numpy as np
NAME = "gauss_well"
PARAMETERS = {"depth": 2.0, "width": 1.5}   # defaults, atomic units
def V(r, depth, width):
    return -depth * np.exp(-(r / width) ** 2)
