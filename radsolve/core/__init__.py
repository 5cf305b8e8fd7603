"""The numerical core: grids, probing, counting, refinement, the solvers and their results.

Nothing here knows about command lines, files or plots; it imports only
:mod:`radsolve.errors`, :mod:`radsolve.units` and :mod:`radsolve.potentials`.
"""
