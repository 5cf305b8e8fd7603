"""The convergence reporter: every solver against exact hydrogen-like levels.

:func:`check` solves the Coulomb potential V(r) = -Z/r for several nuclear
charges Z and reduced masses μ, for every n up to ``nmax`` and every l < n,
with each numerical method separately, and compares each energy with the
exact non-relativistic point-nucleus value

    E(n) = -μ Z² / (2 n²)   hartree  (textbook formula; μ in electron masses),

computed here from that formula, independently of the potential family's own
``exact_energy`` hook.  :func:`format_check` renders the report as text.

A result is marked as a failure when

* the level is missing (the solver returned fewer levels than asked, or
  raised an error), or did not reach ``tol`` by its own account;
* its relative error ``(E - E_exact)/|E_exact|`` exceeds ``tol`` in size; or
* its error estimate understates the true error by more than a factor of
  10 (``|E - E_exact| > 10 * error_estimate``), unless the true error is at
  the double-precision floor, ``|E - E_exact| <= 1e-14 * |E_exact|``
  (common practice: about 50 ulp of accumulated rounding), where no
  estimate can be expected to resolve it.

The relativistic section (``equations`` with ``"dirac"`` and
``"klein-gordon"``, both in by default) does the same for the Dirac and
Klein-Gordon equations with the point charge, against (textbook formulas)

    Dirac:         E - mu c^2 = mu c^2 [(1 + (Z a)^2 / (n - |k| + sqrt(k^2 - (Z a)^2))^2)^(-1/2) - 1]
    Klein-Gordon:  E - mu c^2 = mu c^2 [(1 + (Z a)^2 / (n - l - 1/2 + sqrt((l + 1/2)^2 - (Z a)^2))^2)^(-1/2) - 1]

(a = alpha, k = kappa; also computed here, not by the solver's code).  Levels
whose point-charge solution does not exist (Z alpha >= |kappa|, or >= l + 1/2
for Klein-Gordon) are not compared.

This is a self-test of the numerics, not a statement about real atoms: the
model has no Lamb shift, no hyperfine structure and no finite nuclear size.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Sequence

from radsolve.core.protocol import Note, Outcome, ResultProtocol
from radsolve.core.solvers.registry import METHODS

#: How much the error estimate may understate the true error (common practice).
UNDERSTATEMENT_FACTOR = 10.0
#: Relative size of errors treated as rounding noise (common practice).
DOUBLE_PRECISION_FLOOR = 1e-14

DEFAULT_CHARGES = (1, 2, 10, 92)
DEFAULT_MASSES = (1.0, "electron+proton", "muon+proton")
DEFAULT_METHODS = tuple(METHODS)  # every registered method
#: The full set of cases and the reduced one of ``check(quick=True)``.
FULL_SET = {"charges": DEFAULT_CHARGES, "masses": DEFAULT_MASSES, "nmax": 10}
QUICK_SET = {"charges": (1, 92), "masses": (1.0,), "nmax": 4}


def exact_relativistic_energy(equation: str, n: int, l: int, j: float | None, Z: float, mass: float) -> float | None:
    """E - mu c^2 of the point charge for the Dirac (with j) or Klein-Gordon equation, hartree (textbook
    formulas, :mod:`radsolve.core.relativistic.exact`).

    None where the point-charge level does not exist (Z alpha too large).
    """
    from scipy.constants import fine_structure

    from radsolve.core.relativistic.effective import kappa_of
    from radsolve.core.relativistic.exact import dirac_coulomb, klein_gordon_coulomb
    from radsolve.units import unit_system

    za, rest = Z * fine_structure, unit_system("atomic").rest_energy(mass)
    if equation == "dirac":
        return dirac_coulomb(n, kappa_of(l, j), za, rest)
    return klein_gordon_coulomb(n, l, za, rest)


def exact_coulomb_energy(n: int, Z: float, mass: float) -> float:
    """Exact level of -Z/r with reduced mass ``mass`` (electron masses), hartree.

    E = -μ Z² / (2 n²) (textbook formula, non-relativistic, point nucleus).
    """
    return -mass * Z * Z / (2.0 * n * n)


@dataclass
class MethodOutcome:
    """One method's result for one level, compared with the exact value.

    Attributes
    ----------
    energy : float or None
        The method's energy, hartree (None when the level is missing).
    error_estimate : float or None
        Its own estimate of its absolute error, hartree.
    relative_error : float or None
        ``(energy - exact) / |exact|``.
    relative_estimate : float or None
        ``error_estimate / |exact|``.
    order : float or None
        Observed order of convergence in the grid step.
    converged : bool
        Whether the solver says it reached ``tol``.
    problems : list of str
        Why this outcome fails the check (empty when it passes).
    """

    energy: float | None
    error_estimate: float | None
    relative_error: float | None
    relative_estimate: float | None
    order: float | None
    converged: bool
    problems: list[str] = field(default_factory=list)

    @property
    def failed(self) -> bool:
        return bool(self.problems)


@dataclass
class CheckRow:
    """One level (Z, μ, n, l) with every method's outcome.

    Attributes
    ----------
    Z : float
        Nuclear charge.
    mass : float
        Reduced mass, electron masses.
    mass_name : str
        The mass as given (``"1.0"``, ``"electron+proton"``, ...).
    label : str
        Spectroscopic label, e.g. ``"3d"``.
    n, l : int
        Principal and orbital quantum numbers.
    exact : float
        -μZ²/(2n²), hartree.
    outcomes : dict
        Method name -> :class:`MethodOutcome`.
    """

    Z: float
    mass: float
    mass_name: str
    label: str
    n: int
    l: int
    exact: float
    outcomes: dict[str, MethodOutcome]
    equation: str = "schrodinger"
    j: float | None = None

    def energy(self, method: str) -> float | None:
        return self.outcomes[method].energy

    def relative_error(self, method: str) -> float | None:
        return self.outcomes[method].relative_error

    def relative_estimate(self, method: str) -> float | None:
        return self.outcomes[method].relative_estimate

    def order(self, method: str) -> float | None:
        return self.outcomes[method].order

    @property
    def failed(self) -> bool:
        return any(o.failed for o in self.outcomes.values())


@dataclass(repr=False)
class CheckReport(ResultProtocol):
    """What :func:`check` found.

    Attributes
    ----------
    rows : list of CheckRow
        In the order Z, μ, l, n.
    tol : float
        The tolerance asked of the solvers and used for the verdict.
    methods : tuple of str
        The methods compared.
    failures : list of str
        One line per failing (level, method): which, and why.
    status : Outcome
        ``success`` when every level passed, ``failed`` otherwise (the
        command line exits with 1).
    """

    rows: list[CheckRow]
    tol: float
    methods: tuple[str, ...]
    failures: list[str]

    @property
    def passed(self) -> bool:
        return not self.failures and bool(self.rows)

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if self.passed else Outcome.FAILED

    @property
    def notes(self) -> tuple[Note, ...]:
        if not self.rows:
            return (Note("nothing_compared", "nothing was compared"),)
        return tuple(Note("wrong_level", text) for text in self.failures)

    @property
    def message(self) -> str:
        return self.verdict

    def _header(self) -> list[tuple[str, Any]]:
        return [("tol", self.tol), ("methods", ",".join(self.methods)), ("levels", len(self.rows))]

    def _table_columns(self):
        return ("label", "Z", "mass", "method", "relative_error", "relative_estimate", "passed")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One row per (level, method): the exact and computed energies (hartree), errors, verdict."""
        rows = []
        for row in self.rows:
            for method, o in row.outcomes.items():
                rows.append({"equation": row.equation, "label": row.label, "n": row.n, "l": row.l, "j": row.j,
                             "Z": row.Z, "mass": row.mass,
                             "mass_name": row.mass_name, "method": method, "exact": row.exact,
                             "energy": o.energy, "error_estimate": o.error_estimate,
                             "relative_error": o.relative_error, "relative_estimate": o.relative_estimate,
                             "order": o.order, "converged": o.converged, "passed": not o.failed,
                             "problems": list(o.problems)})
        return rows

    def to_table(self, unit: str | None = None) -> str:
        return format_check(self)

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        return {"tol": self.tol, "methods": list(self.methods), "success": self.success,
                "status": str(self.status), "message": self.message,
                "notes": [n.to_dict() for n in self.notes], "rows": self.records(unit)}

    @property
    def verdict(self) -> str:
        """One line: passed or failed, and how many results were compared."""
        total = sum(len(row.outcomes) for row in self.rows)
        n_fail = len(self.failures)
        if not self.rows:
            return "check FAILED: nothing was compared"
        if n_fail == 0:
            if total != len(self.rows) * len(self.methods):  # the Dirac rows add the first-order method
                return (f"check passed: {len(self.rows)} levels, {total} results within tol {self.tol:.1e}, "
                        "estimates honest")
            return (f"check passed: {len(self.rows)} levels x {len(self.methods)} methods "
                    f"within tol {self.tol:.1e}, estimates honest")
        return (f"check FAILED: {n_fail} of {total} results marked "
                f"(tol {self.tol:.1e}); see the marks above")


def _assess(outcome: MethodOutcome, exact: float, tol: float) -> None:
    """Fill ``outcome.problems`` according to the rules in the module docstring."""
    if outcome.energy is None:
        return
    if not outcome.converged:
        outcome.problems.append("not converged")
    err = outcome.energy - exact
    if not abs(outcome.relative_error) <= tol:  # also catches NaN
        outcome.problems.append("error > tol")
    est = outcome.error_estimate
    if (abs(err) > DOUBLE_PRECISION_FLOOR * abs(exact)
            and not abs(err) <= UNDERSTATEMENT_FACTOR * est):
        outcome.problems.append("estimate too small")


def _coulomb(Z: float):
    from radsolve.potentials import potential

    return potential("coulomb", Z=Z)


def check(tol: float = 1e-10, *,
          charges: Sequence[float] | None = None,
          masses: Sequence[float | str] | None = None,
          nmax: int | None = None,
          methods: Sequence[str] = DEFAULT_METHODS,
          progress: Callable[[str], None] | None = None,
          quick: bool = False,
          equations: Sequence[str] = ("schrodinger", "dirac", "klein-gordon")) -> CheckReport:
    """Solve -Z/r for each charge, mass and method and compare with exact levels.

    Parameters
    ----------
    tol : float
        Relative tolerance asked of the solver and used to judge each level,
        0 < tol < 1 (:data:`radsolve.core.targets.JUDGED_TOL_RANGE`).
    charges : sequence of float
        Nuclear charges Z (positive).  Default: :data:`DEFAULT_CHARGES`, or
        those of :data:`QUICK_SET` with ``quick``; likewise ``masses`` and
        ``nmax``.
    masses : sequence of float or str
        Reduced masses in electron masses, or particle expressions such as
        ``"electron+proton"`` (see :func:`radsolve.units.parse_mass`).
    nmax : int
        Largest principal number n; every l < nmax is solved with
        ``count = nmax - l`` levels, i.e. every (n, l) with l < n <= nmax.
    methods : sequence of str
        Numerical methods, each solved and judged separately.
    progress : callable, optional
        Called with a short text before each (Z, μ, method) case.
    quick : bool
        The reduced set :data:`QUICK_SET` (a fast smoke run) for every one
        of ``charges``, ``masses``, ``nmax`` not given.
    equations : sequence of str
        The wave equations checked (``"schrodinger"``, ``"dirac"``,
        ``"klein-gordon"``; every one by default).

    Returns
    -------
    CheckReport
        Rows for every level, failures, ``passed`` and a one-line ``verdict``.
        A level fails when missing, not converged, off by more than ``tol``,
        or when its error estimate understates the true error more than 10
        times while that error is above the double-precision floor
        ``1e-14 |E|``.
    """
    from radsolve.errors import InputError, RadsolveError
    from radsolve.core.result import level_label
    from radsolve.core.spectrum import solve
    from radsolve.units import parse_mass

    from radsolve.core.targets import JUDGED_TOL_RANGE, validated_tol

    # The tolerance judged: any 0 < tol < 1 may be asked; one the solver refuses
    # (below 1e-14, say) makes the check fail with the solver's reason.
    tol = validated_tol(tol, "tol", JUDGED_TOL_RANGE)
    preset = QUICK_SET if quick else FULL_SET
    charges = preset["charges"] if charges is None else charges
    masses = preset["masses"] if masses is None else masses
    nmax = preset["nmax"] if nmax is None else nmax
    if isinstance(nmax, bool) or int(nmax) != nmax or nmax < 1:
        raise InputError(f"nmax must be a whole number >= 1, got {nmax!r}", parameter="nmax")
    nmax = int(nmax)
    methods = tuple(methods)
    if not methods:
        raise InputError("methods: at least one method is needed", parameter="methods")

    from radsolve.core.relativistic import SCHRODINGER, validated_equation

    equations = tuple(dict.fromkeys(validated_equation(e) for e in equations))
    if not equations:
        raise InputError("equations: at least one equation is needed", parameter="equations")
    rows: list[CheckRow] = []
    failures: list[str] = []
    for equation in equations:
        if equation != SCHRODINGER:
            for Z in charges:
                if not Z > 0:
                    raise InputError(f"charges must be positive, got {Z!r}", parameter="charges")
                rows += _relativistic_block(equation, Z, masses, nmax, methods, tol, progress, failures)
    if SCHRODINGER not in equations:
        return CheckReport(rows=rows, tol=tol, methods=methods, failures=failures)
    relativistic_rows, rows = rows, []
    for Z in charges:
        if not Z > 0:
            raise InputError(f"charges must be positive, got {Z!r}", parameter="charges")
        pot = _coulomb(Z)
        for mass_spec in masses:
            mu = parse_mass(mass_spec)
            block: dict[tuple[int, int], CheckRow] = {}
            for l in range(nmax):
                for n in range(l + 1, nmax + 1):
                    block[(n, l)] = CheckRow(Z, mu, str(mass_spec), level_label(n, l), n, l,
                                             exact_coulomb_energy(n, Z, mu), {})
            for method in methods:
                if progress is not None:
                    progress(f"Z = {Z:g}, mass = {mass_spec}, method {method}")
                for l in range(nmax):
                    found = {}
                    reason = "missing"
                    try:
                        res = solve(pot, l=l, count=nmax - l, mass=mu, tol=tol, method=method)
                        found = {lev.n: lev for lev in res.levels if lev.l == l}
                    except RadsolveError as exc:
                        reason = f"missing ({exc})"
                    for n in range(l + 1, nmax + 1):
                        row = block[(n, l)]
                        lev = found.get(n)
                        if lev is None:
                            outcome = MethodOutcome(None, None, None, None, None, False,
                                                    [reason])
                        else:
                            scale = abs(row.exact)
                            outcome = MethodOutcome(
                                energy=float(lev.energy),
                                error_estimate=float(lev.error_estimate),
                                relative_error=(float(lev.energy) - row.exact) / scale,
                                relative_estimate=float(lev.error_estimate) / scale,
                                order=None if lev.order is None else float(lev.order),
                                converged=bool(lev.converged),
                            )
                            _assess(outcome, row.exact, tol)
                        row.outcomes[method] = outcome
                        if outcome.failed:
                            failures.append(
                                f"Z={Z:g} mass={mass_spec} {row.label} {method}: "
                                + "; ".join(outcome.problems))
            rows += sorted(block.values(), key=lambda r: (r.l, r.n))
    return CheckReport(rows=rows + relativistic_rows, tol=tol, methods=methods, failures=failures)


def _relativistic_block(equation, Z, masses, nmax, methods, tol, progress, failures) -> list[CheckRow]:
    """The Dirac or Klein-Gordon rows of one charge, every mass and method (see the module docstring)."""
    from radsolve.errors import RadsolveError
    from radsolve.core.result import level_designation
    from radsolve.core.spectrum import solve
    from radsolve.units import parse_mass

    rows: list[CheckRow] = []
    pot = _coulomb(Z)
    for mass_spec in masses:
        mu = parse_mass(mass_spec)
        block: dict = {}
        for l in range(nmax):
            for j in ((None,) if equation != "dirac" else ((0.5,) if l == 0 else (l - 0.5, l + 0.5))):
                for n in range(l + 1, nmax + 1):
                    exact = exact_relativistic_energy(equation, n, l, j, Z, mu)
                    if exact is not None:
                        label = level_designation(n - l - 1, l, j)[1]
                        block[(n, l, j)] = CheckRow(Z, mu, str(mass_spec), label, n, l, exact, {}, equation, j)
        ls = sorted({l for (_, l, _) in block})
        # the Dirac equation's own independent method is checked beside the registered ones
        own = ("first-order",) if equation == "dirac" and "first-order" not in methods else ()
        for method in tuple(methods) + own:
            if progress is not None:
                progress(f"{equation}: Z = {Z:g}, mass = {mass_spec}, method {method}")
            for l in ls:
                found, reason = {}, "missing"
                try:
                    res = solve(pot, l=l, count=nmax - l, mass=mu, tol=tol, method=method, equation=equation)
                    found = {(lev.n, lev.l, lev.j): lev for lev in res.levels}
                except RadsolveError as exc:
                    reason = f"missing ({exc})"
                for key, row in block.items():
                    if key[1] != l:
                        continue
                    lev = found.get(key)
                    if lev is None:
                        outcome = MethodOutcome(None, None, None, None, None, False, [reason])
                    else:
                        scale = abs(row.exact)
                        outcome = MethodOutcome(float(lev.energy), float(lev.error_estimate),
                                                (float(lev.energy) - row.exact) / scale,
                                                float(lev.error_estimate) / scale,
                                                None if lev.order is None else float(lev.order), bool(lev.converged))
                        _assess(outcome, row.exact, tol)
                    row.outcomes[method] = outcome
                    if outcome.failed:
                        failures.append(f"{equation} Z={Z:g} mass={mass_spec} {row.label} {method}: "
                                        + "; ".join(outcome.problems))
        rows += sorted(block.values(), key=lambda r: (r.l, r.j or 0.0, r.n))
    return rows


#: Short marks used in the table, and their meaning (printed as a legend).
MARKS = {"missing": "!MISSING", "not converged": "!CONV", "error > tol": "!TOL",
         "estimate too small": "!EST"}


def _mark(problem: str) -> str:
    for key, mark in MARKS.items():
        if problem.startswith(key):
            return mark
    return "!" + problem


def _num(x: float | None, fmt: str) -> str:
    return "-" if x is None else format(x, fmt)


def format_check(report: CheckReport) -> str:
    """Text rendering of ``report``: a block per (Z, μ), the verdict last.

    Each level takes one line for the exact value and one per method with
    its energy, relative error, relative error estimate, observed order and,
    when it fails, a mark saying why.  At most 80 columns.
    """
    from radsolve.output.report import _wrap, format_columns

    lines: list[str] = []
    for text in (
        f"Coulomb levels of -Z/r against the exact E = -mu Z^2/(2 n^2) (textbook "
        f"formula); tol {report.tol:.1e}; energies in hartree",
        "rel.err = (E - exact)/|exact|; rel.est = error estimate/|exact|; "
        "order = observed order of convergence in the grid step",
        "marks: " + ", ".join(f"{m} {k}" for k, m in MARKS.items())
        + f" (by more than {UNDERSTATEMENT_FACTOR:g}x, above {DOUBLE_PRECISION_FLOOR:g}|E|)",
    ):
        lines += _wrap(text)
    if any(row.equation != "schrodinger" for row in report.rows):
        lines += _wrap("relativistic section (point charge, textbook formulas): Dirac, Sommerfeld's "
                       "fine-structure formula; Klein-Gordon, its Coulomb formula; energies E - mu c^2; "
                       "levels without a point-charge solution (Z alpha >= |kappa|, >= l + 1/2) are left out")
    blocks: dict[tuple, list[CheckRow]] = {}
    for row in report.rows:
        blocks.setdefault((row.equation, row.Z, row.mass_name), []).append(row)
    header = ["level", "source", "energy", "rel.err", "rel.est", "order", ""]
    for (equation, Z, mass_name), rows in blocks.items():
        mu = rows[0].mass
        lines.append("")
        name = "" if mass_name == str(mu) or _is_number(mass_name) else f" ({mass_name})"
        what = "" if equation == "schrodinger" else f", {equation}"
        lines.append(f"== Z = {Z:g}, reduced mass {mu:.10g} electron masses{name}{what}")
        table = []
        for row in rows:
            table.append([row.label, "exact", f"{row.exact:#.13g}", "", "", "", ""])
            for method, o in row.outcomes.items():
                mark = " ".join(_mark(p) for p in o.problems)
                table.append(["", method, "-" if o.energy is None else f"{o.energy:#.13g}",
                              _num(o.relative_error, "+.1e"), _num(o.relative_estimate, ".1e"),
                              _num(o.order, ".2f"), mark])
        lines += format_columns(header, table, right={2, 3, 4, 5})
    # Why levels are missing does not fit in the table: say it once per reason.
    reasons: dict[str, int] = {}
    for row in report.rows:
        for o in row.outcomes.values():
            for p in o.problems:
                if p.startswith("missing ("):
                    reasons[p[len("missing ("):-1]] = reasons.get(p[len("missing ("):-1], 0) + 1
    for reason, times in reasons.items():
        lines.append("")
        lines += _wrap(f"!MISSING x {times}: the solver refused: {reason}")
    lines.append("")
    lines.append(report.verdict)
    return "\n".join(lines) + "\n"


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
