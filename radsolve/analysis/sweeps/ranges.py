"""Sweep axes: parameter ranges from numbers or text ("1:40:1000", log spacing), checked against the family."""

from __future__ import annotations

import math
from typing import Iterable, Mapping

import numpy as np

from radsolve.errors import InputError


def parameter_values(start: float, stop: float, num: int, log: bool = False, name: str = "value") -> np.ndarray:
    """``num`` values from ``start`` to ``stop`` inclusive, evenly or geometrically spaced.

    Parameters
    ----------
    start, stop : float
        Ends of the range, in the parameter's atomic unit.
    num : int
        Number of values, >= 1 (``num = 1`` gives ``[start]``).
    log : bool
        Geometric spacing (both ends must be nonzero and of one sign).
    name : str
        How the input is called in error messages.

    Raises
    ------
    InputError
        ``num < 1``, non-finite ends, an empty range (``start == stop`` with
        ``num > 1``) or a geometric range through or from zero.
    """
    if isinstance(num, bool) or not isinstance(num, (int, np.integer)):
        raise InputError(f"{name}: the number of values must be a whole number >= 1, got {num!r}")
    if num < 1:
        raise InputError(f"{name}: the number of values must be >= 1, got {num}")
    start, stop = float(start), float(stop)
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise InputError(f"{name}: the range ends must be finite numbers, got {start}:{stop}")
    if num > 1 and start == stop:
        raise InputError(f"{name}: empty range (start = stop = {start:g}); give two different "
                         "ends, or 1 as the number of values")
    if log:
        if start == 0.0 or stop == 0.0 or (start > 0) != (stop > 0):
            raise InputError(f"{name}: a logarithmic range needs two nonzero ends of the same sign, "
                             f"got {start:g}:{stop:g}")
        return np.geomspace(start, stop, int(num))
    return np.linspace(start, stop, int(num))


def parse_vary(text: str, family, log: bool = False) -> tuple[str, np.ndarray]:
    """Read one ``--vary`` item: ``KEY=START:STOP:NUM`` or ``KEY=V1,V2,...``.

    ``START``, ``STOP`` and the listed values may carry units of the
    parameter's kind (``screening_length=1angstrom:1nm:20``).  ``log`` makes
    a ``START:STOP:NUM`` range geometric.

    Returns
    -------
    (key, values)
        The parameter name and its values in the family's units.

    Raises
    ------
    InputError
        Malformed text, an unknown or non-numeric parameter, a bad value or
        range; the message quotes the item.
    """
    where = f"--vary {text!r}"
    key, sep, spec = text.partition("=")
    key, spec = key.strip(), spec.strip()
    if not sep or not key or not spec:
        raise InputError(f"{where}: expected KEY=START:STOP:NUM (e.g. screening_length=1:10:50) "
                         "or KEY=V1,V2,...")
    param = _numeric_parameter(family, key, where)
    if "," in spec:
        if log:
            raise InputError(f"{where}: --log applies to START:STOP:NUM ranges, not to a list of values")
        items = [item.strip() for item in spec.split(",")]
        if any(not item for item in items):
            raise InputError(f"{where}: empty value in the list")
        return key, np.array([param.parse(item, key, family.name) for item in items])
    parts = spec.split(":")
    if len(parts) == 1:
        return key, np.array([param.parse(parts[0].strip(), key, family.name)])
    if len(parts) != 3 or any(not p.strip() for p in parts):
        raise InputError(f"{where}: expected START:STOP:NUM with three parts, e.g. 1:10:50")
    try:
        num = int(parts[2].strip())
    except ValueError:
        raise InputError(f"{where}: NUM must be a whole number >= 1, got {parts[2].strip()!r}") from None
    start = param.parse(parts[0].strip(), key, family.name)
    stop = param.parse(parts[1].strip(), key, family.name)
    return key, parameter_values(start, stop, num, log, name=where)


def _numeric_parameter(family, key: str, where: str):
    import difflib

    if key not in family.parameters:
        known = list(family.parameters)
        near = difflib.get_close_matches(key, known, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise InputError(f"{where}: potential {family.name!r} has no parameter {key!r}{hint}; "
                         f"its parameters: {', '.join(known) if known else 'none'}")
    param = family.parameters[key]
    if not param.is_numeric:
        raise InputError(f"{where}: parameter {key!r} of {family.name} is a {param.kind}, not a "
                         "number; only numeric parameters can be swept over a range")
    return param


def axes_of(base, vary) -> dict[str, np.ndarray]:
    family = base.family
    if not isinstance(vary, Mapping) or not vary:
        raise InputError("vary must be a dict of at least one parameter name -> sequence of values, "
                         "e.g. vary={'screening_length': [1, 2, 5]}")
    axes: dict[str, np.ndarray] = {}
    for key, values in vary.items():
        where = f"vary[{key!r}]"
        param = _numeric_parameter(family, key, where)
        if isinstance(values, (str, bytes)):
            raise InputError(f"{where} must be a sequence of values, got the text {values!r}")
        if isinstance(values, (int, float, np.number)) or not isinstance(values, Iterable):
            values = [values]
        items = list(values)
        if not items:
            raise InputError(f"{where}: no values given (at least one is needed)")
        axes[key] = np.array([param.parse(v.item() if isinstance(v, np.generic) else v, key, family.name)
                              for v in items], dtype=float)
        # Bind each value once here so that a value the family rejects (its
        # validate hook) is reported before anything is solved.
        for v in axes[key][: min(len(axes[key]), 1000)]:
            base.with_parameters(**{key: float(v)})
    return axes


def looks_geometric(values: np.ndarray) -> bool:
    v = np.asarray(values, dtype=float)
    if v.size < 3 or np.any(v <= 0):
        return False
    ratios = v[1:] / v[:-1]
    steps = np.diff(v)
    return bool(np.allclose(ratios, ratios[0], rtol=1e-9) and not np.allclose(steps, steps[0], rtol=1e-9))
