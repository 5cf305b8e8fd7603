"""The rules of a solve's inputs: one validator per concept, used by every entry point.

:func:`radsolve.solve`, the sweeps, thresholds, fits, states and transitions
all check their angular momenta, level counts and space dimension here, so
that a rule and its range exist once (the command line shows these ranges
in its help and adds none of its own).  The tolerance has its validator in
:mod:`radsolve.core.targets`, the mass and the unit system theirs in
:mod:`radsolve.units`.  Each error names its argument in
:attr:`radsolve.errors.InputError.parameter`.

Only the standard library is imported, so that the command line can read
the ranges without loading numpy.
"""

from __future__ import annotations

import numbers
from collections.abc import Iterable

from radsolve.errors import InputError

#: Largest orbital angular momentum solved.
L_MAX = 200
#: Most levels asked for per partial wave.
COUNT_MAX = 1000
#: Space dimensions solved (inclusive).
DIMENSION_RANGE = (2, 50)


def _whole(value) -> bool:
    return isinstance(value, numbers.Integral) and not isinstance(value, bool)


def validated_l(l, parameter: str = "l") -> list[int]:
    """``l`` (a whole number or a non-empty sequence of them) as a sorted list of distinct values."""
    if _whole(l):
        values = [int(l)]
    elif isinstance(l, Iterable) and not isinstance(l, (str, bytes)):
        values = []
        for item in l:
            if not _whole(item):
                raise InputError(f"{parameter} must be a whole number >= 0 (got {item!r})",
                                 parameter=parameter)
            values.append(int(item))
        if not values:
            raise InputError(f"{parameter}: at least one angular momentum is needed (got none)",
                             parameter=parameter)
    else:
        raise InputError(f"{parameter} must be a whole number >= 0 or a list of them (got {l!r})",
                         parameter=parameter)
    for value in values:
        if value < 0:
            raise InputError(f"{parameter} must be >= 0 (got {value})", parameter=parameter)
        if value > L_MAX:
            raise InputError(f"{parameter} must be <= {L_MAX} (got {value})", parameter=parameter)
    return sorted(set(values))


def validated_count(count, parameter: str = "count") -> int:
    """``count`` as an int from 1 to :data:`COUNT_MAX`."""
    if not _whole(count) or count < 1:
        raise InputError(f"{parameter} must be a whole number >= 1 (got {count!r})", parameter=parameter)
    if count > COUNT_MAX:
        raise InputError(f"{parameter} must be <= {COUNT_MAX} levels per l (got {count})",
                         parameter=parameter)
    return int(count)


def validated_dimension(dimension, parameter: str = "dimension") -> int:
    """``dimension`` as an int inside :data:`DIMENSION_RANGE`."""
    low, high = DIMENSION_RANGE
    if not _whole(dimension) or not low <= dimension <= high:
        raise InputError(f"{parameter} {dimension!r}: the space dimension must be a whole number from "
                         f"{low} to {high} (the radial problem needs D >= 2)", parameter=parameter)
    return int(dimension)
