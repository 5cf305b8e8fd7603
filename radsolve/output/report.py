"""Rendering of solve results as a text table, JSON or CSV.

Every function here is pure: it takes a :class:`radsolve.core.result.SolveResult`
(energies in hartree) and a target energy unit and returns a string.  The
text table is meant for an 80-column terminal and rounds to 12 significant
digits; JSON and CSV carry every digit of the double-precision values.

Non-finite numbers (an infinite error estimate, say) are written as ``null``
in JSON and as an empty cell in CSV rather than as a number that could be
mistaken for a result.
"""

from __future__ import annotations

import math
import textwrap
from typing import Any

TABLE_WIDTH = 80


# ---------------------------------------------------------------- helpers


def _energy_text(x: float | None) -> str:
    """An energy with 12 significant digits, trailing zeros kept so columns line up."""
    if x is None:
        return ""
    if not math.isfinite(x):
        return str(x)
    return f"{x:#.12g}"


def _small_text(x: float | None, signed: bool = False) -> str:
    """A two-digit figure for error estimates and deviations."""
    if x is None:
        return ""
    if not math.isfinite(x):
        return str(x)
    return f"{x:+.1e}" if signed else f"{x:.1e}"


def _value_text(x: Any) -> str:
    """A parameter value for the header line."""
    if isinstance(x, bool) or isinstance(x, str):
        return str(x)
    try:
        return f"{float(x):.10g}"
    except (TypeError, ValueError):
        return str(x)


def _unit_factor(unit: str, result: Any = None) -> float:
    """Stored energy units per ``unit``: hartree per unit, or MeV per unit for a nuclear result."""
    from radsolve.units import stored_energy_factor

    return stored_energy_factor(getattr(result, "units", "atomic"), unit)


def _system_of(result):
    from radsolve.units import unit_system

    return unit_system(getattr(result, "units", "atomic"))


def _output_unit(result, unit: str | None) -> str:
    """``unit``, or the result's own energy unit (hartree or MeV) when None."""
    return _system_of(result).energy_unit if unit is None else unit


def _j_text(j: float | None) -> str:
    """j as a fraction: 0.5 -> "1/2"."""
    return "" if j is None else f"{int(round(2 * j))}/2"


def _level_rows(result, unit: str) -> tuple[list[dict[str, Any]], bool]:
    """Plain per-level dicts in ``unit`` and whether exact values are present."""
    factor = _unit_factor(unit, result)
    rows = [lev.to_dict(factor) for lev in result.levels]
    has_exact = any(lev.exact is not None for lev in result.levels)
    return rows, has_exact


def format_columns(header: list[str], rows: list[list[str]], right: set[int],
                   width: int = TABLE_WIDTH) -> list[str]:
    """Align ``rows`` under ``header``; columns in ``right`` are right-aligned.

    Two spaces separate columns, or one when two would exceed ``width``.
    Returns the lines, header first (no trailing spaces).
    """
    widths = [len(h) for h in header]
    for row in rows:
        for i, cell in enumerate(row):
            widths[i] = max(widths[i], len(cell))
    sep = "  " if sum(widths) + 2 * (len(widths) - 1) <= width else " "

    def line(cells: list[str]) -> str:
        parts = [c.rjust(w) if i in right else c.ljust(w)
                 for i, (c, w) in enumerate(zip(cells, widths))]
        return sep.join(parts).rstrip()

    return [line(header)] + [line(r) for r in rows]


def _wrap(text: str, indent: str = "  ") -> list[str]:
    return textwrap.wrap(text, width=TABLE_WIDTH, subsequent_indent=indent,
                         break_on_hyphens=False) or [""]


# ---------------------------------------------------------------- levels


def levels_table(result, unit: str | None = None) -> str:
    """Text table of the levels of ``result`` with energies in ``unit``.

    Parameters
    ----------
    result : SolveResult
        What :func:`radsolve.solve` returned (energies in hartree).
    unit : str, optional
        Energy unit of the table (see :func:`radsolve.units.energy_unit_factor`);
        by default the result's own (hartree, or MeV in nuclear units).

    Returns
    -------
    str
        Header lines (potential, its parameters in the result's unit system,
        reduced mass, unit, method, tolerance, the dimension when it is not
        3), one row per level (label, n, l, j and the degeneracy 2j+1 when
        spin-orbit split, nodes, energy, estimated absolute error, whether it
        converged, and when the exact energy is known the exact value and the
        deviation from it), and the solver's message.  At most 80 columns for
        ordinary labels.
    """
    unit = _output_unit(result, unit)
    system = _system_of(result)
    rows, has_exact = _level_rows(result, unit)
    has_j = any(getattr(lev, "j", None) is not None for lev in result.levels)
    factor = _unit_factor(unit, result)
    pot = result.potential
    specs = getattr(getattr(pot, "family", None), "parameters", {})
    params = []
    for key, value in dict(pot.parameters).items():
        p_unit = getattr(specs.get(key), "unit", "") if isinstance(value, (int, float)) else ""
        params.append(f"{key} = {_value_text(value)}" + (f" {p_unit}" if p_unit else ""))
    lines = _wrap(f"potential {pot.name}" + (": " + ", ".join(params) if params else "")
                  + f"  ({system.name} units)")
    if getattr(getattr(pot, "family", None), "origin", "") == "program":
        lines += _wrap(pot.family.description)  # a formula or a table: say which
    settings = (f"reduced mass {result.mass:.10g} {system.mass_unit} | energies in {unit} | "
                f"method {result.method} | tol {result.tol:.1e}")
    if getattr(result, "dimension", 3) != 3:
        settings += f" | dimension {result.dimension}"
    v_inf = getattr(result, "v_infinity", 0.0)
    if v_inf is not None and math.isfinite(v_inf) and v_inf != 0.0:
        settings += f" | V(r->inf) = {_energy_text(v_inf / factor)} {unit}"
    lines += _wrap(settings)
    if getattr(result, "convention", None):
        lines += _wrap(result.convention)  # a relativistic equation: its mass, potential and energy zero
    lines.append("")

    if not rows:
        lines.append("no bound level found")
    else:
        header = ["level", "n", "l", "nodes", f"energy/{unit}", "est.err", "conv"]
        right = {1, 2, 3, 4, 5}
        if has_j:
            header[3:3] = ["j", "2j+1"]
            right = {1, 2, 3, 4, 5, 6, 7}
        if has_exact:
            header += ["exact", "deviation"]
            right |= {len(header) - 2, len(header) - 1}
        table = []
        for lev, d in zip(result.levels, rows):
            cells = [d["label"], str(d["n"]), str(d["l"]), str(d["nodes"]),
                     _energy_text(d["energy"]), _small_text(d["error_estimate"]),
                     "yes" if d["converged"] else "NO"]
            if has_j:
                cells[3:3] = [_j_text(getattr(lev, "j", None)), str(getattr(lev, "degeneracy", ""))]
            if has_exact:
                cells += [_energy_text(d.get("exact")), _small_text(d.get("deviation"), True)]
            table.append(cells)
        lines += format_columns(header, table, right)
        unconverged = [d["label"] + (f" ({d['status']})" if d.get("status") else "")
                       for d in rows if not d["converged"]]
        if unconverged:
            lines.append("")
            lines += _wrap("WARNING: not converged to tol: " + ", ".join(unconverged)
                           + " (their energies are less accurate than asked)")
    counts = certificate_text(result)
    if counts:
        lines.append("")
        lines += _wrap(counts)
    if result.message:
        lines.append("")
        lines += _wrap(result.message)
    return "\n".join(lines) + "\n"


def certificate_text(result) -> str:
    """One line: how many levels each l binds, and whether that count is certain."""
    certs = getattr(result, "certificates", None) or {}
    if not certs:
        return ""
    parts = []
    for key, cert in certs.items():
        name = key if isinstance(key, str) else f"l={key}"
        parts.append(f"{name}: {cert.text()}")
    return "bound levels (counted without a box): " + "; ".join(parts)


def levels_json(result, unit: str | None = None) -> str:
    """:meth:`SolveResult.to_json`: one JSON document, energies in ``unit`` (None: the result's own)."""
    return result.to_json(unit=unit)


def levels_csv(result, unit: str | None = None) -> str:
    """:meth:`SolveResult.to_csv`: a header row, then one row per level, energies in ``unit``.

    The columns are those of :meth:`SolveResult.records`, ending with a
    ``unit`` column so that a file read on its own still says its unit.
    Floats are written with every digit (``repr``); non-finite ones as an
    empty cell.
    """
    return result.to_csv(unit=unit)


# ---------------------------------------------------------------- families


def parameter_text(name: str, param: Any) -> str:
    """``name = default unit [range]`` for one :class:`radsolve.potentials.Parameter`."""
    text = f"{name} = {param.default_text()}"
    rng = param.range_text()
    return text + (f" [{rng}]" if rng else "")


def family_description(family: Any) -> str:
    """The one-line description of a family, or '' if it has none."""
    desc = family.description
    if not desc and family.doc.strip():
        desc = family.doc.strip().splitlines()[0]
    return str(desc).strip()


def families_list(families: dict[str, Any]) -> str:
    """Every family of ``families`` (name -> PotentialFamily) with its parameters.

    One block per family: the name and its one-line description, then its
    parameters with defaults in atomic units, and where it came from when it
    is not a built-in.
    """
    if not families:
        return "no potential families found\n"
    broken = {k: v for k, v in families.items() if getattr(v, "broken", False)}
    usable = {k: v for k, v in families.items() if k not in broken}
    lines = [f"{len(usable)} potential families (defaults in atomic units unless marked); "
             "'radsolve potentials NAME' shows one in full", ""]
    for name in sorted(usable):
        fam = families[name]
        desc = family_description(fam)
        system = getattr(fam, "units", "atomic")
        mark = f" [{system} units]" if system != "atomic" else ""
        lines += _wrap(f"{name}{mark}" + (f" -- {desc}" if desc else ""), indent="    ")
        params = dict(fam.parameters)
        for key, spec in params.items():
            desc = f"  -- {spec.description}" if spec.description else ""
            lines += _wrap(f"    {parameter_text(key, spec)}{desc}", indent="        ")
        if not params:
            lines.append("    (no parameters)")
        if getattr(fam, "origin", "built-in") != "built-in":
            lines += _wrap(f"    from {fam.source} ({fam.origin})", indent="    ")
    if broken:
        lines += ["", f"{len(broken)} broken (not usable until fixed):"]
        for name in sorted(broken):
            lines += _wrap(f"{name} -- BROKEN: {broken[name].cause}", indent="    ")
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- states (radsolve wave)


def _estimate_cells(est, factor: float = 1.0) -> list[str]:
    """Value (12 digits), estimate, and 'NO' when not converged."""
    return [_energy_text(est.value / factor), _small_text(est.error / factor),
            "yes" if est.converged else "NO"]


def state_table(state, props: dict[str, Any], unit: str = "hartree",
                extra: list[tuple[str, str, Any]] | None = None, wave=None) -> str:
    """Text summary of one state: energy, sizes, energies, diagnostics.

    Parameters
    ----------
    state : radsolve.analysis.observables.State
    props : dict
        :meth:`State.properties`.
    unit : str
        Energy unit of energies.
    extra : list of (name, unit, Estimate)
        More rows (asked-for moments, probabilities inside radii).
    wave : Wavefunction, optional
        Values at given radii, shown as a second table.
    """
    factor = _unit_factor(unit)
    pot = state.potential
    params = ", ".join(f"{k} = {_value_text(v)}" for k, v in pot.parameters.items())
    lines = _wrap(f"level {state.label} of potential {pot.name}" + (f": {params}" if params else "")
                  + "  (atomic units)")
    lines += _wrap(f"reduced mass {state.mass:.10g} electron masses | energies in {unit} | "
                   f"lengths in bohr | method {state.level.method} | tol {state.tol:.1e}")
    lines.append("")
    rows: list[list[str]] = []

    def add(name: str, quantity_unit: str, est, energy: bool = False) -> None:
        rows.append([name, quantity_unit] + _estimate_cells(est, factor if energy else 1.0))

    add("energy E", unit, props["energy"], True)
    for key, name, qunit in (("r", "<r>", "bohr"), ("r2", "<r^2>", "bohr^2"),
                             ("inv_r", "<1/r>", "bohr^-1"), ("inv_r2", "<1/r^2>", "bohr^-2")):
        if key in props:
            add(name, qunit, props[key])
    for key, name in (("potential_energy", "<V>"), ("kinetic_energy", "<T>"),
                      ("energy_residual", "E - <T> - <V>")):
        if key in props:
            add(name, unit, props[key], True)
    add("most probable r", "bohr", props["most_probable_radius"])
    for i, tp in enumerate(props.get("turning_points", [])):
        count = len(props["turning_points"])
        which = ("inner " if i == 0 else "outer ") if count == 2 else ""
        add(f"{which}turning point" + (f" {i + 1}" if count > 2 else ""), "bohr", tp)
    if "contact_density" in props:
        add("|psi(0)|^2", "bohr^-3", props["contact_density"])
    for name, qunit, est in extra or []:
        add(name, qunit, est)
    virial = props.get("virial")
    if virial is not None and virial.available:
        label = (f"virial 2<T>/(k<V>), k={virial.exponent:g}" if virial.kind == "power law"
                 else "virial 2<T>/<r dV/dr>")
        add(label, "", virial.ratio)
    lines += format_columns(["quantity", "unit", "value", "est.err", "conv"], rows, {2, 3})
    if virial is not None and not virial.available:
        lines.append("")
        lines += _wrap(f"virial check not available: {virial.reason}")
    lines.append("")
    lines += _wrap("u(r) > 0 as r -> 0; integral of u^2 dr = 1; psi = R(r) Y_lm with R = u/r. "
                   "The virial ratio is 1 and E - <T> - <V> is 0 for an exact eigenstate.")
    if wave is not None and not wave.on_grid:
        lines.append("")
        table = [[_energy_text(r), _energy_text(u), _small_text(du), _energy_text(R), _small_text(dR)]
                 for r, u, du, R, dR in zip(wave.r, wave.u, wave.u_error, wave.R, wave.R_error)]
        lines += format_columns(["r/bohr", "u/bohr^-1/2", "est.err", "R/bohr^-3/2", "est.err"],
                                table, {0, 1, 2, 3, 4})
    unconverged = [r[0] for r in rows if r[-1] == "NO"]
    if unconverged:
        lines.append("")
        lines += _wrap("WARNING: not converged: " + ", ".join(unconverged))
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- radsolve transitions


def _sci(x: float | None, digits: int = 4) -> str:
    if x is None:
        return ""
    if not math.isfinite(x):
        return str(x)
    return f"{x:.{digits}e}"


def transitions_table(tr, unit: str | None = "hartree") -> str:
    """Text tables of a :class:`radsolve.analysis.radiative.TransitionResult`: lines, then states."""
    unit = unit or "hartree"
    factor = _unit_factor(unit)
    res = tr.result
    pot = res.potential
    params = ", ".join(f"{k} = {_value_text(v)}" for k, v in pot.parameters.items())
    lines = _wrap(f"E1 transitions of potential {pot.name}" + (f": {params}" if params else "")
                  + f", levels with n <= {tr.nmax}  (atomic units)")
    lines += _wrap(f"reduced mass {res.mass:.10g} electron masses | energies in {unit} | "
                   f"vacuum wavelengths | method {res.method} | tol {res.tol:.1e}"
                   + (f" | dipole charge {tr.dipole_charge:g}" if tr.dipole_charge != 1.0 else ""))
    lines.append("")
    if tr.lines:
        rows = [[x.upper, x.lower, _energy_text(x.energy / factor), f"{x.wavelength_nm:.6f}",
                 _sci(x.oscillator_strength), _sci(x.einstein_A), f"{x.branching_ratio:.4f}"]
                for x in tr.lines]
        lines += format_columns(["upper", "lower", f"dE/{unit}", "vac.wl/nm", "f(abs)", "A/s^-1",
                                 "branch"], rows, {2, 3, 4, 5, 6})
    else:
        lines.append("no E1 line among these levels")
    lines.append("")
    rows = []
    for s in tr.states:
        if s.lifetime_s is not None:
            top = sorted(s.branching.items(), key=lambda kv: -kv[1])[:2]
            status = "to " + ", ".join(f"{k} {100 * v:.3g}%" for k, v in top)
            if len(s.branching) > 2:
                status += ", ..."
        else:
            status = s.status
        if not s.complete:
            status += " (INCOMPLETE)"
        rows.append([s.label, _energy_text(s.energy / factor),
                     _sci(s.lifetime_s) if s.lifetime_s is not None else "-", status])
    lines += format_columns(["level", f"energy/{unit}", "lifetime/s", "decay"], rows, {1, 2})
    lines.append("")
    if tr.sum_rules:
        rows = []
        for r in tr.sum_rules:
            def num(v):
                return "-" if v is None else f"{v:.9f}"
            rows.append([r["level"], num(r["bound"]), num(r["rydberg_tail"]), num(r["continuum"]), num(r["total"]),
                         "-" if r["total_error"] is None else f"{r['total_error']:.1e}", num(r["expected"]),
                         ("ok" if r["converged"] else "NOT CONVERGED") if r["complete"] else "INCOMPLETE: " + r["why"]])
        lines += format_columns(["level", "f bound", "f beyond nmax", "f continuum", "sum", "estimate",
                                 "TRK", "status"], rows, {1, 2, 3, 4, 5, 6})
        lines += _wrap("Oscillator-strength sums of each level: bound partners (emission counted negative), the "
                       "Rydberg series beyond the computed levels (Coulomb tails), and the continuum integral of "
                       "df/dE; TRK is the Thomas-Reiche-Kuhn sum dipole_charge^2 m_e/mu.")
        lines.append("")
    lines += _wrap("f(abs): absorption oscillator strength lower -> upper (electron-mass "
                   "convention); A: spontaneous emission rate; branch: A / sum of A of the upper "
                   "level. Levels degenerate within their error estimates are not connected.")
    lines += _wrap("Note: " + tr.short_note)
    if tr.message:
        lines.append("")
        lines += _wrap(tr.message)
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------- the one writer

#: Output formats of every result type.
FORMATS = ("table", "json", "csv")


def _table_writers() -> dict[str, Any]:
    # Keyed by class name: the analysis layer's result types sit above this one.
    return {"SolveResult": levels_table, "TransitionResult": transitions_table}


def render(result, unit: str | None = None, fmt: str = "table") -> str:
    """Any result in format ``fmt``: ``"table"`` (text for a terminal), ``"json"`` or ``"csv"``.

    JSON and CSV come from the result protocol (``to_json``, ``to_csv``), so
    every result type is written the same way; tables are this module's for
    levels and E1 lines and the result's own ``to_table()`` otherwise (the
    analysis types draw theirs; the default is the compact repr).  ``unit``
    None: the result's own unit.
    """
    from radsolve.errors import InputError

    if fmt not in FORMATS:
        raise InputError(f"unknown output format {fmt!r}; allowed: " + ", ".join(FORMATS))
    if fmt == "json":
        return result.to_json(unit=unit)
    if fmt == "csv":
        return result.to_csv(unit=unit)
    table = _table_writers().get(type(result).__name__)
    return result.to_table(unit) if table is None else table(result, unit)
