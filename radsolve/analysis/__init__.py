"""What follows from the levels: observables, E1 lines, sweeps, thresholds, fits, the check.

Built on :mod:`radsolve.core`; may use :mod:`radsolve.output` for text tables.
"""
