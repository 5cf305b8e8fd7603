"""Rendering of solve results as a text table, JSON or CSV.

Every function here is pure: it takes a :class:`radsolve.result.SolveResult`
(energies in hartree) and a target energy unit and returns a string.  The
text table is meant for an 80-column terminal and rounds to 12 significant
digits; JSON and CSV carry every digit of the double-precision values.

Non-finite numbers (an infinite error estimate, say) are written as ``null``
in JSON and as an empty cell in CSV rather than as a number that could be
mistaken for a result.
"""

from __future__ import annotations

import csv
import io
import json
import math
import textwrap
from typing import Any

TABLE_WIDTH = 80

#: Fields of one level in JSON and CSV, in order.
LEVEL_FIELDS = ("n", "l", "nodes", "label", "energy", "error_estimate", "converged")
#: Extra fields when the exact energy is known (pure Coulomb and the like).
EXACT_FIELDS = ("exact", "deviation")


# ---------------------------------------------------------------- helpers


def _plain(value: Any) -> Any:
    """``value`` with numpy scalars/arrays turned into Python data, non-finite floats into None."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):
        return _plain(value.tolist())  # numpy scalar or array
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    return str(value)


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


def _unit_factor(unit: str) -> float:
    from .units import energy_unit_factor

    return energy_unit_factor(unit)


def _level_rows(result, unit: str) -> tuple[list[dict[str, Any]], bool]:
    """Plain per-level dicts in ``unit`` and whether exact values are present."""
    factor = _unit_factor(unit)
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


def levels_table(result, unit: str = "hartree") -> str:
    """Text table of the levels of ``result`` with energies in ``unit``.

    Parameters
    ----------
    result : SolveResult
        What :func:`radsolve.solve` returned (energies in hartree).
    unit : str
        Energy unit of the table (see :func:`radsolve.units.energy_unit_factor`).

    Returns
    -------
    str
        Header lines (potential, its parameters in atomic units, reduced mass,
        unit, method, tolerance), one row per level (label, n, l, nodes,
        energy, estimated absolute error, whether it converged, and when the
        exact energy is known the exact value and the deviation from it),
        and the solver's message.  At most 80 columns for ordinary labels.
    """
    rows, has_exact = _level_rows(result, unit)
    factor = _unit_factor(unit)
    pot = result.potential
    specs = getattr(getattr(pot, "family", None), "parameters", {})
    params = []
    for key, value in dict(pot.parameters).items():
        p_unit = getattr(specs.get(key), "unit", "") if isinstance(value, (int, float)) else ""
        params.append(f"{key} = {_value_text(value)}" + (f" {p_unit}" if p_unit else ""))
    lines = _wrap(f"potential {pot.name}" + (": " + ", ".join(params) if params else "")
                  + "  (atomic units)")
    settings = (f"reduced mass {result.mass:.10g} electron masses | energies in {unit} | "
                f"method {result.method} | tol {result.tol:.1e}")
    v_inf = getattr(result, "v_infinity", 0.0)
    if v_inf is not None and math.isfinite(v_inf) and v_inf != 0.0:
        settings += f" | V(r->inf) = {_energy_text(v_inf / factor)} {unit}"
    lines += _wrap(settings)
    lines.append("")

    if not rows:
        lines.append("no bound level found")
    else:
        header = ["level", "n", "l", "nodes", f"energy/{unit}", "est.err", "conv"]
        right = {1, 2, 3, 4, 5}
        if has_exact:
            header += ["exact", "deviation"]
            right |= {7, 8}
        table = []
        for d in rows:
            cells = [d["label"], str(d["n"]), str(d["l"]), str(d["nodes"]),
                     _energy_text(d["energy"]), _small_text(d["error_estimate"]),
                     "yes" if d["converged"] else "NO"]
            if has_exact:
                cells += [_energy_text(d.get("exact")), _small_text(d.get("deviation"), True)]
            table.append(cells)
        lines += format_columns(header, table, right)
        unconverged = [d["label"] for d in rows if not d["converged"]]
        if unconverged:
            lines.append("")
            lines += _wrap("WARNING: not converged to tol: " + ", ".join(unconverged)
                           + " (their energies are less accurate than asked)")
    if result.message:
        lines.append("")
        lines += _wrap(result.message)
    return "\n".join(lines) + "\n"


def levels_json(result, unit: str = "hartree") -> str:
    """One JSON document describing ``result``, energies in ``unit``.

    Keys: ``potential``, ``parameters`` (atomic units), ``mass`` (electron
    masses), ``unit``, ``levels`` (each with ``n``, ``l``, ``nodes``,
    ``label``, ``energy``, ``error_estimate``, ``converged`` and, when the
    exact energy is known, ``exact`` and ``deviation``), plus the bookkeeping
    keys of :meth:`SolveResult.to_dict` (``method``, ``tol``, ``success``,
    ``message``).  Non-finite numbers become ``null``.
    """
    doc = _plain(result.to_dict(unit))
    return json.dumps(doc, indent=2, allow_nan=False) + "\n"


def levels_csv(result, unit: str = "hartree") -> str:
    """CSV text: a header row, then one row per level, energies in ``unit``.

    Columns are those of a level in :func:`levels_json` (``exact`` and
    ``deviation`` only when the exact energy is known), followed by a
    ``unit`` column so that a file read on its own still says its unit.
    Floats are written with every digit (``repr``); non-finite ones as an
    empty cell.
    """
    rows, has_exact = _level_rows(result, unit)
    fields = list(LEVEL_FIELDS) + (list(EXACT_FIELDS) if has_exact else []) + ["unit"]
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(fields)
    for d in rows:
        d = dict(d, unit=unit)
        cells = []
        for f in fields:
            v = _plain(d.get(f))
            cells.append("" if v is None else (repr(v) if isinstance(v, float) else v))
        writer.writerow(cells)
    return buf.getvalue()


RENDERERS = {"table": levels_table, "json": levels_json, "csv": levels_csv}


def render(result, unit: str = "hartree", fmt: str = "table") -> str:
    """``result`` in format ``fmt`` (``"table"``, ``"json"`` or ``"csv"``)."""
    from .errors import InputError

    try:
        renderer = RENDERERS[fmt]
    except KeyError:
        raise InputError(f"unknown output format {fmt!r}; allowed: "
                         + ", ".join(RENDERERS)) from None
    return renderer(result, unit)


# ---------------------------------------------------------------- families


def parameter_text(name: str, param: Any) -> str:
    """``name = default unit [range]`` for one :class:`radsolve.registry.Parameter`."""
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
    lines = [f"{len(families)} potential families (defaults in atomic units); "
             "'radsolve potentials NAME' shows one in full", ""]
    for name in sorted(families):
        fam = families[name]
        desc = family_description(fam)
        lines += _wrap(f"{name}" + (f" -- {desc}" if desc else ""), indent="    ")
        params = dict(fam.parameters)
        for key, spec in params.items():
            desc = f"  -- {spec.description}" if spec.description else ""
            lines += _wrap(f"    {parameter_text(key, spec)}{desc}", indent="        ")
        if not params:
            lines.append("    (no parameters)")
        if getattr(fam, "origin", "built-in") != "built-in":
            lines += _wrap(f"    from {fam.source} ({fam.origin})", indent="    ")
    return "\n".join(lines) + "\n"
