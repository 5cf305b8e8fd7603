"""Writers that stream a sweep's rows to CSV or JSON as the points finish."""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path
from typing import Any


from radsolve.core.serialize import plain as _plain
from radsolve.errors import InputError


def _cell(value: Any) -> str:
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


class CsvSink:
    def __init__(self, stream, columns, unit: str):
        self.stream, self.columns, self.unit = stream, tuple(columns), unit
        self.writer = csv.writer(stream, lineterminator="\n")

    def start(self, meta) -> None:
        self.writer.writerow([*self.columns, "unit"])

    def write_row(self, row: dict) -> None:
        self.writer.writerow([_cell(row[c]) for c in self.columns] + [self.unit])

    def flush(self) -> None:
        self.stream.flush()

    def finish(self, meta) -> None:
        self.stream.flush()


class JsonSink:
    def __init__(self, stream, columns, unit: str):
        self.stream, self.columns, self.unit = stream, tuple(columns), unit
        self.first = True

    def start(self, meta) -> None:
        head = json.dumps(_plain(meta.metadata(self.unit)), indent=1, allow_nan=False)
        self.stream.write(head[:-2] + ',\n "rows": [')

    def write_row(self, row: dict) -> None:
        doc = {c: _plain(row[c]) for c in self.columns}
        self.stream.write(("\n  " if self.first else ",\n  ") + json.dumps(doc, allow_nan=False))
        self.first = False

    def flush(self) -> None:
        self.stream.flush()

    def finish(self, meta) -> None:
        tail = meta._tail()
        self.stream.write(("\n ],\n" if not self.first else "],\n")
                          + ",\n".join(f" {json.dumps(k)}: {json.dumps(_plain(v))}" for k, v in tail.items())
                          + "\n}\n")
        self.stream.flush()


def check_out_path(out) -> Path:
    """``out`` as a Path, if its name and folder are usable for a sweep's rows; InputError otherwise."""
    path = Path(out)
    if path.suffix.lower() not in (".csv", ".json", ".nc"):
        raise InputError(f"output file {str(path)!r}: the name must end in .csv or .json (rows written as the "
                         "points finish) or .nc (NetCDF, written at the end)", parameter="out")
    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"output file {str(path)!r}: folder {str(path.parent)!r} does not exist", parameter="out")
    return path


def open_sink(out, columns, unit: str):
    """A writer for ``out`` (a path ending .csv or .json, or an open text stream for CSV)."""
    if out is None:
        return None, None
    if hasattr(out, "write"):
        return CsvSink(out, columns, unit), None
    path = check_out_path(out)
    suffix = path.suffix.lower()
    try:
        stream = open(path, "w", encoding="utf-8", newline="")
    except OSError as exc:
        raise InputError(f"output file {str(path)!r}: cannot write: {exc.strerror}", parameter="out") from None
    sink = CsvSink(stream, columns, unit) if suffix == ".csv" else JsonSink(stream, columns, unit)
    return sink, stream
