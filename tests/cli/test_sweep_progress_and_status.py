"""radsolve sweep: the progress bar when asked, and the exit status and warnings from the sweep's status.

Physics anchor: hydrogen-like levels -Z^2/(2 n^2) hartree (textbook formula).
"""

from __future__ import annotations

import csv
import dataclasses
import io

import pytest

import radsolve.core.spectrum as spectrum
from helpers import invoke
from radsolve.core.protocol import Note, Outcome

ARGS = ("--vary", "Z=1:3:3", "-l", "0", "--count", "2", "--tol", "1e-8", "--workers", "1")


def test_progress_only_when_asked_when_stderr_is_not_a_terminal():
    quiet = invoke("sweep", "coulomb", *ARGS)
    assert quiet.exit_code == 0, quiet.stderr
    assert "points" not in quiet.stderr
    shown = invoke("sweep", "coulomb", *ARGS, "--progress")
    assert shown.exit_code == 0, shown.stderr
    assert "3/3" in shown.stderr and "points" in shown.stderr
    assert shown.stdout == quiet.stdout  # the bar never mixes with the rows
    rows = list(csv.DictReader(io.StringIO(shown.stdout)))
    for row in rows:
        assert float(row["energy"]) == pytest.approx(-float(row["Z"]) ** 2 / (2 * int(row["n"]) ** 2), rel=1e-8)


def test_a_level_not_resolved_exits_3_and_says_so(monkeypatch):
    real = spectrum.solve

    def solve(pot, *args, **kwargs):  # as a too-small box would: 2s not resolved at Z = 3
        result = real(pot, *args, **kwargs)
        if pot.parameters["Z"] != 3.0:
            return result
        return dataclasses.replace(result, levels=[lev for lev in result.levels if lev.label != "2s"],
                                   status=Outcome.INCOMPLETE, notes=(Note("levels_missing", "LEVELS MISSING"),))

    monkeypatch.setattr(spectrum, "solve", solve)
    run = invoke("sweep", "coulomb", *ARGS)
    assert run.exit_code == 3
    assert "not proven unbound" in run.stderr and "first at Z = 3" in run.stderr
    rows = {(r["Z"], r["label"]): r for r in csv.DictReader(io.StringIO(run.stdout))}
    assert rows[("3.0", "2s")]["status"] == "missing" and rows[("3.0", "2s")]["energy"] == ""
    assert rows[("2.0", "2s")]["status"] == "converged"
