"""Tabulated potentials: V(r) from a table of (r, V), interpolated by a cubic spline.

``tabulated_potential("V.csv", r_unit="fm", v_unit="MeV", units="nuclear")``
is a :class:`Potential` like any family's.  Between the first and the last
radius of the table V is the cubic spline through the points
(``scipy.interpolate.CubicSpline``, not-a-knot ends), or on request a
quintic one (``spline_degree=5``, ``scipy.interpolate.make_interp_spline``).  Outside the table a
stated rule applies:

beyond the last radius r_N (``beyond=``)
    ``"constant"`` (the default): V(r) = V(r_N), so V is continuous and the
    threshold is V(r_N);
    ``"zero"``: V(r) = 0 (a jump at r_N unless the table ends at 0);
    ``"coulomb:Z"``: V(r) = -Z k / r with k = 1 hartree bohr (atomic units)
    or k = alpha hbar c = 1.44 MeV fm (nuclear units, from scipy.constants);
    a negative Z is repulsive.
inside the first radius r_1 (``inside=``)
    ``"constant"`` (the default): V(r) = V(r_1);
    ``"coulomb:Z"``: V(r) = -Z k / r + c with c making V continuous at r_1.
    A table that starts at r = 0 needs neither.

The radius where a rule takes over is passed to the solver as a breakpoint
when V or its slope changes there by more than 1e-13 of the table's largest
|V| (a rule that continues the table smoothly adds no breakpoint).

Accuracy.  The cubic spline's error is of order h**4 V'''' (h the spacing;
h**6 for the quintic); a level
of the tabulated potential differs from the level of the potential that was
sampled by about <|S - V|>, the interpolation error averaged with the
level's density, which is at most its largest value where the level lives.
:meth:`TabulatedTable.interpolation_error` estimates that error from the
table itself, by comparing with the spline through every other point
(common practice: the h**4 law makes that difference 16 times the error).
It cannot see features between the points: tabulate finely enough.

Cost.  The cubic spline's third derivative jumps at every point; with a
coarse table (say 1 % spacing) the solver's Richardson extrapolation then
needs more grids than for a smooth V to reach a tight tol.  A finer table
or ``spline_degree=5`` restores the smooth-potential cost (see
benchmarks/formula_tabulated_benchmark.py).

File format.  Plain text, one point per line: r and V separated by a comma,
semicolon, tab or spaces.  Blank lines and everything after ``#`` are
ignored; one header line of non-numeric text (``r,V``) may precede the data.
The radii must be >= 0 and strictly increasing, every value finite, and at
least :data:`MIN_POINTS` points given.  Units are declared when the table is
read (``r_unit``, ``v_unit``), not in the file.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from radsolve.errors import InputError

#: The fewest points a table may have (the error estimate drops every other one).
MIN_POINTS = 12

#: Spline degrees offered: 3 (cubic, the default) and 5 (quintic).
SPLINE_DEGREES = (3, 5)

#: The rules beyond the last point and inside the first one.
BEYOND_RULES = ("constant", "zero", "coulomb:Z")
INSIDE_RULES = ("constant", "coulomb:Z")

_SPLIT = re.compile(r"[,;\s]+")


@dataclass(frozen=True)
class Rule:
    """A rule outside the table: ``kind`` is "constant", "zero" or "coulomb"; ``charge`` Z."""

    kind: str
    charge: float = 0.0

    @property
    def text(self) -> str:
        return f"coulomb:{self.charge:g}" if self.kind == "coulomb" else self.kind


def parse_rule(text: Any, option: str, allowed: tuple[str, ...], parameter: str | None = None) -> Rule:
    """Read a rule such as ``"zero"``, ``"constant"`` or ``"coulomb:2.5"``.

    Raises
    ------
    InputError
        Naming ``option`` and listing the allowed rules; ``parameter`` is the
        API argument, set on the error.
    """
    if isinstance(text, Rule):
        return text
    if not isinstance(text, str):
        raise InputError(f"{option} must be one of {', '.join(allowed)}, got {text!r}", parameter=parameter)
    key = text.strip().lower()
    if key in allowed and key != "coulomb:z":
        return Rule(key)
    if key.startswith("coulomb") and "coulomb:Z" in allowed:
        _, sep, charge = key.partition(":")
        try:
            z = float(charge) if sep else math.nan
        except ValueError:
            z = math.nan
        if not math.isfinite(z):
            raise InputError(f"{option} {text!r}: write coulomb:Z with a number Z, e.g. coulomb:1 "
                             "for -1/r (atomic units)", parameter=parameter)
        return Rule("coulomb", z)
    raise InputError(f"{option} {text!r}: unknown rule; allowed: {', '.join(allowed)} "
                     "(Z a number, e.g. coulomb:1)", parameter=parameter)


def read_table(path: str | os.PathLike, option: str = "--file") -> tuple[np.ndarray, np.ndarray]:
    """The (r, V) columns of a table file, as given (no unit conversion).

    Raises
    ------
    InputError
        For a missing or unreadable file, and for malformed content: the
        message names the file and the line (a field that is not a number, a
        wrong number of columns, NaN or infinite values, negative or
        non-increasing radii, too few points).
    """
    p = Path(path).expanduser()
    where = f"{option} {str(path)!r}"
    if not p.is_file():
        raise InputError(f"{where}: no such file", parameter="source")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{where}: cannot read it as text ({exc})", parameter="source") from None
    rs: list[float] = []
    vs: list[float] = []
    lines: list[int] = []
    header_allowed = True
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        fields = [f for f in _SPLIT.split(line) if f]
        values = []
        for field in fields:
            try:
                values.append(float(field))
            except ValueError:
                values = None
                break
        if values is None:
            if header_allowed and not rs:
                header_allowed = False
                continue  # one header line of column names
            raise InputError(f"{where}, line {number}: cannot read {line!r} as two numbers r and V",
                             parameter="source")
        header_allowed = False
        if len(values) != 2:
            raise InputError(f"{where}, line {number}: expected 2 columns (r and V), found {len(values)}",
                             parameter="source")
        r, v = values
        for name, x in (("r", r), ("V", v)):
            if not math.isfinite(x):
                raise InputError(f"{where}, line {number}: {name} is {x}; every value must be a finite number",
                                 parameter="source")
        if r < 0:
            raise InputError(f"{where}, line {number}: r = {r:g} is negative; radii must be >= 0",
                             parameter="source")
        if rs and r <= rs[-1]:
            raise InputError(f"{where}, line {number}: r = {r:g} does not exceed r = {rs[-1]:g} on line "
                             f"{lines[-1]}; the radii must increase strictly", parameter="source")
        rs.append(r)
        vs.append(v)
        lines.append(number)
    if len(rs) < MIN_POINTS:
        raise InputError(f"{where}: {len(rs)} data point{'s' if len(rs) != 1 else ''}; a table needs "
                         f"at least {MIN_POINTS} (r, V) lines", parameter="source")
    return np.array(rs), np.array(vs)


def _check_arrays(r: Any, v: Any) -> tuple[np.ndarray, np.ndarray]:
    try:
        r = np.asarray(r, dtype=float)
        v = np.asarray(v, dtype=float)
    except (TypeError, ValueError):
        raise InputError("table: r and V must be sequences of numbers", parameter="source") from None
    if r.ndim != 1 or v.shape != r.shape:
        raise InputError(f"table: r and V must be 1-d of the same length (got shapes {r.shape} and {v.shape})",
                         parameter="source")
    if r.size < MIN_POINTS:
        raise InputError(f"table: {r.size} points; a table needs at least {MIN_POINTS}", parameter="source")
    for name, x in (("r", r), ("V", v)):
        bad = np.flatnonzero(~np.isfinite(x))
        if bad.size:
            raise InputError(f"table: {name}[{bad[0]}] is {x[bad[0]]}; every value must be a finite number",
                             parameter="source")
    if r[0] < 0:
        raise InputError(f"table: r[0] = {r[0]:g} is negative; radii must be >= 0", parameter="source")
    steps = np.flatnonzero(np.diff(r) <= 0)
    if steps.size:
        i = steps[0] + 1
        raise InputError(f"table: r[{i}] = {r[i]:g} does not exceed r[{i - 1}] = {r[i - 1]:g}; "
                         "the radii must increase strictly", parameter="source")
    return r, v


def _spline(r: np.ndarray, v: np.ndarray, degree: int):
    """The interpolating spline of ``degree`` through (r, v); callable as s(x) and s(x, 1)."""
    if degree == 3:
        from scipy.interpolate import CubicSpline

        return CubicSpline(r, v, bc_type="not-a-knot")
    from scipy.interpolate import make_interp_spline

    return make_interp_spline(r, v, k=degree)


class TabulatedTable:
    """The interpolant of one table, in one unit system (what V of a ``table`` family calls).

    Parameters
    ----------
    r, v : array
        Radii and values, already in the unit system's length and energy.
    beyond, inside : Rule
        The rules outside the table.
    coulomb_constant : float
        k of the Coulomb rules: 1 (hartree bohr) or alpha hbar c (MeV fm).
    degree : {3, 5}
        Degree of the interpolating spline.
    """

    def __init__(self, r: np.ndarray, v: np.ndarray, beyond: Rule, inside: Rule, coulomb_constant: float,
                 degree: int = 3):
        self.r, self.v = r, v
        self.beyond, self.inside = beyond, inside
        self.k = coulomb_constant
        self.degree = degree
        self.spline = _spline(r, v, degree)
        self.r_first, self.r_last = float(r[0]), float(r[-1])
        # Inside rule: V(r) = -Z k / r + shift, continuous at r_1.
        self._inside_shift = float(v[0]) + (inside.charge * self.k / self.r_first if self.r_first > 0 else 0.0)

    def __call__(self, r: np.ndarray) -> np.ndarray:
        r = np.asarray(r, dtype=float)
        flat = r.reshape(-1)
        out = np.empty_like(flat)
        below = flat < self.r_first
        above = flat > self.r_last
        middle = ~(below | above)
        out[middle] = self.spline(flat[middle])
        if below.any():
            if self.inside.kind == "coulomb":
                out[below] = -self.inside.charge * self.k / flat[below] + self._inside_shift
            else:
                out[below] = self.v[0]
        if above.any():
            if self.beyond.kind == "coulomb":
                out[above] = -self.beyond.charge * self.k / flat[above]
            elif self.beyond.kind == "zero":
                out[above] = 0.0
            else:
                out[above] = self.v[-1]
        return out.reshape(r.shape)

    def v_infinity(self) -> float:
        return float(self.v[-1]) if self.beyond.kind == "constant" else 0.0

    def small_r(self) -> tuple[float, float]:
        if self.r_first == 0.0:
            return float(self.v[0]), 0.0
        if self.inside.kind == "coulomb" and self.inside.charge != 0.0:
            return -self.inside.charge * self.k, -1.0
        return float(self.v[0]), 0.0

    def _rule_value_slope(self, r: float, side: str) -> tuple[float, float]:
        """V and dV/dr of the rule that applies just below (inside) or above (beyond) ``r``."""
        rule = self.inside if side == "inside" else self.beyond
        if rule.kind == "coulomb":
            value = -rule.charge * self.k / r + (self._inside_shift if side == "inside" else 0.0)
            return value, rule.charge * self.k / r**2
        if rule.kind == "zero":
            return 0.0, 0.0
        return (float(self.v[0]) if side == "inside" else float(self.v[-1])), 0.0

    def _is_rough(self, r: float, side: str) -> bool:
        """Whether V or its slope changes visibly where the rule takes over at ``r``."""
        value, slope = self._rule_value_slope(r, side)
        spline_value = float(self.spline(r))
        spline_slope = float(self.spline(r, 1))
        scale = float(np.max(np.abs(self.v))) or 1.0
        # A jump or kink far below rounding of the table's values is no feature at all.
        return (abs(value - spline_value) > 1e-13 * scale
                or abs(slope - spline_slope) * max(r, self.r_last - self.r_first) > 1e-13 * scale)

    def breakpoints(self) -> list[float]:
        """Where a rule takes over with a visible jump or kink (the solver places grid points there)."""
        points = []
        if self._is_rough(self.r_last, "beyond"):
            points.append(self.r_last)
        if self.r_first > 0 and self._is_rough(self.r_first, "inside"):
            points.append(self.r_first)
        return points

    def error_profile(self, r: np.ndarray) -> np.ndarray:
        """Estimated |S - V| of the spline at radii ``r`` (0 outside the table).

        The same estimate as :meth:`interpolation_error`, point by point,
        linearly interpolated between table points; the solver weighs it with
        each level's density to know how well the level can be known at all.
        """
        if not hasattr(self, "_profile"):
            keep = np.arange(0, self.r.size, 2)
            if keep[-1] != self.r.size - 1:
                keep = np.append(keep, self.r.size - 1)
            half = _spline(self.r[keep], self.v[keep], self.degree)
            miss = np.abs(half(self.r) - self.v) / 2.0 ** (self.degree + 1)
            self._profile = miss
        r = np.asarray(r, dtype=float)
        inside = (r >= self.r_first) & (r <= self.r_last)
        return np.where(inside, np.interp(r, self.r, self._profile), 0.0)

    def interpolation_error(self) -> tuple[float, float]:
        """Estimated largest |S(r) - V(r)| of the spline, and the radius where it is.

        The spline through every other point misses the dropped points by
        about 2**(k+1) times the full spline's error there (the h**(k+1) law
        of a degree-k spline: 16 for cubic), so the estimate is that miss
        divided by 2**(k+1) (common practice).  Energies in the unit
        system's unit, radius in its length unit.
        """
        keep = np.arange(0, self.r.size, 2)
        if keep[-1] != self.r.size - 1:
            keep = np.append(keep, self.r.size - 1)
        half = _spline(self.r[keep], self.v[keep], self.degree)
        dropped = np.setdiff1d(np.arange(self.r.size), keep)
        miss = np.abs(half(self.r[dropped]) - self.v[dropped]) / 2.0 ** (self.degree + 1)
        i = int(np.argmax(miss))
        return float(miss[i]), float(self.r[dropped][i])


def tabulated_potential(source: Any, *, r_unit: str | None = None, v_unit: str | None = None,
                        units: str = "atomic", beyond: str = "constant", inside: str = "constant",
                        spline_degree: int = 3):
    """A potential interpolated from a table of (r, V).

    Parameters
    ----------
    source : path or (r, V)
        A table file (see the module docstring for the format) or two
        sequences of numbers.
    r_unit : str, optional
        Length unit of the radii (bohr, angstrom, nm, pm, fm); by default the
        unit system's (bohr or fm).
    v_unit : str, optional
        Energy unit of V (hartree, eV, meV, keV, MeV, rydberg, cm-1); by
        default the unit system's (hartree or MeV).
    units : {"atomic", "nuclear"}
        The unit system the potential is solved in (``solve`` uses it).
    beyond : str
        Rule beyond the last radius: ``"constant"`` (default), ``"zero"`` or
        ``"coulomb:Z"``.
    inside : str
        Rule inside the first radius: ``"constant"`` (default) or
        ``"coulomb:Z"``.
    spline_degree : {3, 5}
        3, the cubic spline (default), or 5, a quintic spline: smoother, so
        that the solver's extrapolation in the grid step converges on fewer
        grids when the table is coarse (a few points per feature of V).

    Returns
    -------
    Potential
        Of a family named ``table`` without parameters; its module holds the
        :class:`TabulatedTable` as ``TABLE`` (``pot.family.module.TABLE``),
        with :meth:`~TabulatedTable.interpolation_error`.

    Raises
    ------
    InputError
        For a malformed file (naming the line), bad arrays, unknown units or
        rules.
    """
    from radsolve.potentials import make_family
    from radsolve.units import energy_unit_factor, length_unit_factor, unit_system

    system = unit_system(units)
    if isinstance(spline_degree, bool) or spline_degree not in SPLINE_DEGREES:
        raise InputError(f"--spline {spline_degree!r}: allowed degrees: "
                         + ", ".join(map(str, SPLINE_DEGREES)), parameter="spline_degree")
    beyond_rule = parse_rule(beyond, "--beyond", BEYOND_RULES, parameter="beyond")
    inside_rule = parse_rule(inside, "--inside", INSIDE_RULES, parameter="inside")
    r_unit = system.length_unit if r_unit is None else r_unit
    v_unit = system.energy_unit if v_unit is None else v_unit
    try:
        r_factor = length_unit_factor(r_unit) / length_unit_factor(system.length_unit)
    except InputError as exc:
        raise InputError(f"--r-unit: {exc}", parameter="r_unit") from None
    try:
        v_factor = energy_unit_factor(v_unit, None) / energy_unit_factor(system.energy_unit)
    except InputError as exc:
        raise InputError(f"--v-unit: {exc}", parameter="v_unit") from None

    if isinstance(source, (str, os.PathLike)):
        r, v = read_table(source)
        where = str(Path(source).expanduser().resolve())
    else:
        try:
            r_raw, v_raw = source
        except (TypeError, ValueError):
            raise InputError("table: give a file path or a pair (r, V) of sequences",
                             parameter="source") from None
        r, v = _check_arrays(r_raw, v_raw)
        where = f"table of {r.size} points"
    r_sys, v_sys = r * r_factor, v * v_factor
    # Potentials compare equal by family name and source: make the source name the data.
    import hashlib

    digest = hashlib.sha1(np.concatenate([r_sys, v_sys, [spline_degree]]).tobytes()).hexdigest()[:10]
    where = f"{where} [{system.name} units, data {digest}]"
    k = system.coulomb_constant()
    table = TabulatedTable(r_sys, v_sys, beyond_rule, inside_rule, k, spline_degree)

    def V(r):
        return table(r)

    family = make_family(
        "table",
        V,
        {},
        units=system.name,
        description=f"{'cubic' if spline_degree == 3 else 'quintic'} spline through {r.size} points of {where}",
        formula=(f"V(r) = spline of the table for {r_sys[0]:g} <= r <= {r_sys[-1]:g} "
                 f"{system.length_unit}; inside: {inside_rule.text}; beyond: {beyond_rule.text}"),
        doc=__doc__,
        source=where,
        rebuild=(tabulated_potential, ((r_sys, v_sys),), {"units": system.name, "beyond": beyond_rule,
                                                          "inside": inside_rule,
                                                          "spline_degree": spline_degree}),
        v_infinity=table.v_infinity,
        small_r=table.small_r,
        breakpoints=table.breakpoints,
        potential_error=lambda r: table.error_profile(r),
    )
    family.module.TABLE = table
    return family.bind()
