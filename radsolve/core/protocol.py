"""The one protocol every result type follows.

Like scipy's result objects, every result of radsolve (a spectrum, a state,
E1 lines, a sweep, a threshold, a fit, the check) answers the same questions
the same way:

- ``success`` (bool) and ``status`` (an :class:`Outcome`; the command line's
  exit code is ``EXIT_CODES[status]``);
- ``notes``: structured :class:`Note` objects (a machine-readable ``code``,
  the text, and the item it concerns), and ``message``, built from them;
- ``to_dict(unit=None)``; ``to_json(path=None, unit=None)``: one JSON document
  (also written to ``path`` when given);
- ``records(unit=None)``: one flat dict per row (level, line, point, ...),
  which is what ``to_csv(path=None, unit=None)`` and ``to_pandas()`` (pandas
  optional) show;
- a compact ``repr`` (a short ordered header and a table of at most
  ``REPR_ROWS`` rows) and ``_repr_html_`` for notebooks.  Heavy arrays (grids,
  wavefunctions) stay reachable as attributes but never appear in either.

A result type subclasses :class:`ResultProtocol` and implements ``status``,
``notes``, ``to_dict``, ``records`` and ``_header`` (and ``_table_columns`` to
pick the columns its repr shows).
"""

from __future__ import annotations

import html
from dataclasses import dataclass
from enum import Enum
from typing import Any, Sequence

from radsolve.core.serialize import columns_of, dumps_json, plain, records_to_csv

#: Rows a repr shows before it says how many more there are.
REPR_ROWS = 12


class Outcome(str, Enum):
    """How a computation ended (``result.status``)."""

    SUCCESS = "success"
    """Everything asked for was computed to the tolerance asked."""
    NOT_CONVERGED = "not converged"
    """Everything was computed, but some values did not reach the tolerance (their estimates say how far)."""
    INCOMPLETE = "incomplete"
    """Something asked for is missing or not known complete: a level the count says is bound but that
    could not be resolved, an uncertain count, sweep points not done."""
    FAILED = "failed"
    """The computation's own verdict is negative (the check found a wrong level; a fit did not converge)."""

    def __str__(self) -> str:
        return self.value


#: Exit status of the command line for each outcome (2 is bad input and 4 an internal error; see the README).
EXIT_CODES = {Outcome.SUCCESS: 0, Outcome.FAILED: 1, Outcome.NOT_CONVERGED: 3, Outcome.INCOMPLETE: 3}


def worst(outcomes: Sequence[Outcome]) -> Outcome:
    """The most serious of ``outcomes`` (SUCCESS for none)."""
    order = [Outcome.SUCCESS, Outcome.NOT_CONVERGED, Outcome.INCOMPLETE, Outcome.FAILED]
    return max(outcomes, key=order.index, default=Outcome.SUCCESS)


@dataclass(frozen=True)
class Note:
    """One fact about a result that its user should know.

    ``code`` is stable and machine-readable (e.g. ``"not_converged"``,
    ``"levels_missing"``, ``"fewer_bound"``); ``text`` is the sentence shown in
    the message; ``subject`` names what it concerns (a level label, a partial
    wave, a parameter) when it concerns one thing.
    """

    code: str
    text: str
    subject: str | None = None

    def to_dict(self) -> dict[str, Any]:
        out = {"code": self.code, "text": self.text}
        if self.subject is not None:
            out["subject"] = self.subject
        return out


def message_of(notes: Sequence[Note], default: str) -> str:
    """The human-readable message: the notes' texts joined, or ``default`` when there are none."""
    return "; ".join(n.text for n in notes) if notes else default


class ResultProtocol:
    """Base class of every result type; see the module docstring for the contract."""

    # -- to implement -------------------------------------------------------
    # ``status`` (an Outcome) and ``notes`` are given by each subclass, as a
    # dataclass field or a property; they are not declared here, because a
    # property of a base class would become the default of a dataclass field.
    status: Outcome

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:  # pragma: no cover
        raise NotImplementedError

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:  # pragma: no cover
        raise NotImplementedError

    def _header(self) -> list[tuple[str, Any]]:  # pragma: no cover
        raise NotImplementedError

    def _table_columns(self) -> Sequence[str] | None:
        """The record columns the repr shows (None: all of them)."""
        return None

    # -- provided ------------------------------------------------------------
    @property
    def success(self) -> bool:
        return self.status is Outcome.SUCCESS

    @property
    def exit_code(self) -> int:
        """The command line's exit status for this result."""
        return EXIT_CODES[self.status]

    def to_table(self, unit: str | None = None) -> str:
        """Text for a terminal (a type with a table of its own overrides this; the repr otherwise)."""
        return repr(self) + "\n"

    def to_json(self, path=None, unit: str | None = None, indent: int | None = 2) -> str:
        """:meth:`to_dict` as JSON text (non-finite numbers become null); also written to ``path`` if given."""
        return write_text(path, dumps_json(self.to_dict(unit), indent=indent))

    def to_csv(self, path=None, unit: str | None = None) -> str:
        """:meth:`records` as CSV text, one line per record; also written to ``path`` if given."""
        return write_text(path, records_to_csv(self.records(unit)))

    def to_pandas(self, unit: str | None = None):
        """:meth:`records` as a pandas DataFrame (needs the optional ``pandas`` extra)."""
        try:
            import pandas as pd
        except ImportError:  # pragma: no cover - depends on the environment
            from radsolve.errors import InputError

            raise InputError("to_pandas() needs pandas: pip install 'radsolve[pandas]'") from None
        rows = self.records(unit)
        return pd.DataFrame([{k: plain(v) for k, v in row.items()} for row in rows], columns=columns_of(rows))

    def _first_records(self, n: int) -> tuple[list[dict[str, Any]], int]:
        """The first ``n`` records and how many there are (a type with many rows answers without making all)."""
        rows = self.records()
        return rows[:n], len(rows)

    def _table(self) -> tuple[list[str], list[list[str]], int]:
        rows, total = self._first_records(REPR_ROWS)
        columns = list(self._table_columns() or columns_of(rows))
        shown = [[_cell(row.get(c)) for c in columns] for row in rows]
        return columns, shown, total - len(shown)

    def __repr__(self) -> str:
        head = ", ".join(f"{k}={_cell(v, quote=True)}" for k, v in self._header())
        lines = [f"{type(self).__name__}(status={str(self.status)!r}, {head})"]
        message = getattr(self, "message", "")
        if message:
            lines.append(f"  message: {_shorten(message, 300)}")
        columns, shown, more = self._table()
        if shown:
            widths = [max(len(c), *(len(r[i]) for r in shown)) for i, c in enumerate(columns)]
            lines.append("  " + "  ".join(c.rjust(w) for c, w in zip(columns, widths)))
            lines.extend("  " + "  ".join(v.rjust(w) for v, w in zip(r, widths)) for r in shown)
        if more > 0:
            lines.append(f"  ... {more} more (records(), to_pandas())")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        esc = html.escape
        head = "".join(f"<tr><th style='text-align:left'>{esc(str(k))}</th><td>{esc(_cell(v))}</td></tr>"
                       for k, v in [("status", str(self.status)), *self._header()])
        message = getattr(self, "message", "")
        if message:
            head += f"<tr><th style='text-align:left'>message</th><td>{esc(message)}</td></tr>"
        columns, shown, more = self._table()
        body = ""
        if shown:
            body = ("<table><thead><tr>" + "".join(f"<th>{esc(c)}</th>" for c in columns) + "</tr></thead><tbody>"
                    + "".join("<tr>" + "".join(f"<td>{esc(v)}</td>" for v in r) + "</tr>" for r in shown)
                    + "</tbody></table>")
            if more > 0:
                body += f"<p>… {more} more rows (records(), to_pandas())</p>"
        return f"<div><strong>{esc(type(self).__name__)}</strong><table>{head}</table>{body}</div>"


def write_text(path, text: str) -> str:
    """``text``, after writing it to ``path`` (UTF-8) when a path is given; InputError if it cannot be written."""
    if path is not None:
        try:
            with open(path, "w", encoding="utf-8", newline="") as handle:
                handle.write(text)
        except OSError as exc:
            from radsolve.errors import InputError

            raise InputError(f"cannot write {str(path)!r}: {exc.strerror}") from None
    return text


def _cell(value: Any, quote: bool = False) -> str:
    value = plain(value)
    if value is None:
        return "-"
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float):
        # twelve digits: enough to show an energy converged to tol = 1e-10 without a wall of noise
        return f"{value:.12g}" if abs(value) >= 1e-3 or value == 0 else f"{value:.4g}"
    if isinstance(value, (list, dict)):
        return _shorten(str(value), 60)
    return repr(value) if quote and isinstance(value, str) else str(value)


def _shorten(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"
