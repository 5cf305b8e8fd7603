"""Presentation: text tables and reports, files, plots.

It formats results of :mod:`radsolve.core`; it never solves anything.
"""
