"""Turning results into plain data, JSON and CSV: the one serialiser every result uses."""

from __future__ import annotations

import csv
import io
import json
import math
from typing import Any, Iterable, Mapping, Sequence


def plain(value: Any) -> Any:
    """``value`` as JSON-ready Python data.

    Mappings become dicts with string keys, sequences and numpy arrays lists,
    numpy scalars Python numbers, enums their value, and non-finite floats
    None (JSON has no NaN or infinity; None reads as "not available").
    """
    if isinstance(value, Mapping):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):
        return plain(value.tolist())  # numpy scalar or array
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        if isinstance(value, str) and hasattr(value, "value"):  # a str-valued Enum
            return str(value.value)
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if hasattr(value, "value") and isinstance(getattr(value, "value"), (str, int)):
        return value.value  # an Enum
    return str(value)


def dumps_json(doc: Any, indent: int | None = 2) -> str:
    """``doc`` (after :func:`plain`) as JSON text ending in a newline."""
    return json.dumps(plain(doc), indent=indent, allow_nan=False) + "\n"


def csv_cell(value: Any) -> Any:
    """One CSV cell: plain data, with None as an empty cell and lists joined by ``;``."""
    value = plain(value)
    if value is None:
        return ""
    if isinstance(value, list):
        return ";".join("" if v is None else str(v) for v in value)
    if isinstance(value, dict):
        return json.dumps(value, allow_nan=False)
    return value


def columns_of(rows: Iterable[Mapping[str, Any]]) -> list[str]:
    """Every key of ``rows``, in the order they first appear."""
    columns: list[str] = []
    for row in rows:
        columns.extend(k for k in row if k not in columns)
    return columns


def records_to_csv(rows: Sequence[Mapping[str, Any]]) -> str:
    """CSV text of ``rows`` with the columns of :func:`columns_of`."""
    return rows_to_csv(rows, columns_of(rows))


def rows_to_csv(rows: Iterable[Mapping[str, Any]], columns: Sequence[str]) -> str:
    """CSV text with a header line of ``columns`` and one line per row."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([csv_cell(row.get(c)) for c in columns])
    return buffer.getvalue()
