"""Source text of small plug-in families that several test files write to tmp folders."""


def square_well_source(name: str, depth: float, radius: float, units: str | None = None) -> str:
    """A square well -depth for r < radius, declaring its limit, small-r law and edge."""
    units_line = f'UNITS = "{units}"\n' if units else ""
    return f'''
import numpy as np
NAME = "{name}"
{units_line}PARAMETERS = {{"depth": {depth!r}, "radius": {radius!r}}}
def V(r, depth, radius):
    return np.where(r < radius, -depth, 0.0)
def v_infinity(depth, radius):
    return 0.0
def small_r(depth, radius):
    return (-depth, 0.0)
def breakpoints(depth, radius):
    return [radius]
'''
