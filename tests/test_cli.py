"""The command line and the renderers of radsolve.report.

Two kinds of test live here:

* rendering tests on a hand-built SolveResult (a test double made from
  result.py's dataclasses; its numbers are made up and only exercise the
  layout, never physics);
* end-to-end tests that run the real solver through the command line and
  compare with outside references: exact hydrogen-like levels from
  sympy.physics.hydrogen.E_nl (source: sympy; E = -Z^2/(2 n^2) hartree for
  infinite nuclear mass, scaled here by the reduced mass mu, textbook
  formula) and unit factors from scipy.constants (source: CODATA via
  scipy.constants).
"""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
import textwrap
from pathlib import Path
from types import SimpleNamespace

import pytest
from scipy.constants import physical_constants
from sympy.physics.hydrogen import E_nl
from typer.testing import CliRunner

from radsolve.cli import app
from radsolve.result import Level, SolveResult
from radsolve import report

runner = CliRunner()

# CODATA via scipy.constants: 1 eV in hartree.
EV_IN_HARTREE = physical_constants["electron volt-hartree relationship"][0]


def exact_hydrogenic(n: int, Z: float, mu: float) -> float:
    """Exact level of -Z/r in hartree: sympy's E_nl (infinite mass) times mu."""
    return float(E_nl(n, Z)) * mu


def run(*args: str, env: dict | None = None):
    """Invoke the CLI in-process; stdout and stderr separately."""
    return runner.invoke(app, list(args), env=env)


# ---------------------------------------------------------------- test double


def fake_result(levels, message="", mass=1.0, name="fake_well", parameters=None,
                v_infinity=0.0, method="fd"):
    """A SolveResult built by hand, for rendering tests only."""
    pot = SimpleNamespace(name=name, parameters=parameters or {"depth": 2.0, "width": 1.5})
    return SolveResult(levels=levels, success=all(l.converged for l in levels),
                       message=message, potential=pot, mass=mass, tol=1e-10,
                       method=method, bound_counts={}, v_infinity=v_infinity)


def fake_level(n, l, energy, err=1e-12, converged=True, exact=None, label=None):
    from radsolve.result import level_label

    return Level(n=n, l=l, nodes=n - l - 1, label=label or level_label(n, l), energy=energy,
                 error_estimate=err, converged=converged, method="fd", order=4.0, exact=exact)


@pytest.fixture
def exact_levels():
    # Made-up numbers with an "exact" column, the widest table layout.
    return fake_result([fake_level(n, l, -1.2345678901234 / n**2 - 1e-9,
                                   exact=-1.2345678901234 / n**2)
                        for l in range(3) for n in range(l + 1, 11)],
                       message="made-up message", parameters={"Z": 92.0})


def test_table_fits_80_columns_with_exact_columns(exact_levels):
    for unit in ("hartree", "eV", "cm-1"):
        text = report.levels_table(exact_levels, unit)
        widths = [len(line) for line in text.splitlines()]
        assert max(widths) <= 80, (unit, max(widths))
        assert "exact" in text and "deviation" in text
        assert f"energies in {unit}" in text
        assert "made-up message" in text.splitlines()[-1]


def test_table_header_and_rows():
    res = fake_result([fake_level(1, 0, -0.75), fake_level(2, 0, -0.1, converged=False)],
                      message="1 level not converged")
    text = report.levels_table(res, "hartree")
    assert "fake_well" in text and "depth = 2" in text and "width = 1.5" in text
    assert "method fd" in text and "tol 1.0e-10" in text
    assert "exact" not in text  # no exact values: no such column
    rows = [line.split() for line in text.splitlines() if line.startswith(("1s", "2s"))]
    assert rows[0][:4] == ["1s", "1", "0", "0"] and rows[0][-1] == "yes"
    assert rows[1][:4] == ["2s", "2", "0", "1"] and rows[1][-1] == "NO"
    assert float(rows[0][4]) == pytest.approx(-0.75, rel=1e-12)
    assert "WARNING: not converged" in text and "2s" in text.split("WARNING")[1]


def test_table_without_levels_says_so():
    text = report.levels_table(fake_result([], message="nothing is bound for l = 0"))
    assert "no bound level" in text and "nothing is bound for l = 0" in text


def test_json_schema_and_unit_conversion(exact_levels):
    doc = json.loads(report.levels_json(exact_levels, "eV"))
    assert {"potential", "parameters", "mass", "unit", "levels"} <= set(doc)
    assert doc["potential"] == "fake_well" and doc["unit"] == "eV"
    assert doc["parameters"] == {"Z": 92.0} and doc["mass"] == 1.0
    lev = doc["levels"][0]
    assert set(lev) == {"n", "l", "nodes", "label", "energy", "error_estimate", "converged",
                        "exact", "deviation"}
    src = exact_levels.levels[0]
    # CODATA via scipy.constants
    assert lev["energy"] == pytest.approx(src.energy / EV_IN_HARTREE, rel=1e-15)
    assert lev["exact"] == pytest.approx(src.exact / EV_IN_HARTREE, rel=1e-15)


def test_json_writes_non_finite_as_null():
    res = fake_result([fake_level(1, 0, -0.5, err=float("inf"), converged=False)])
    text = report.levels_json(res, "hartree")
    assert "Infinity" not in text and "NaN" not in text
    assert json.loads(text)["levels"][0]["error_estimate"] is None


def test_csv_round_trips_every_digit(exact_levels):
    rows = list(csv.DictReader(io.StringIO(report.levels_csv(exact_levels, "hartree"))))
    assert len(rows) == len(exact_levels.levels)
    assert list(rows[0]) == ["n", "l", "nodes", "label", "energy", "error_estimate",
                             "converged", "exact", "deviation", "unit"]
    for row, lev in zip(rows, exact_levels.levels):
        assert float(row["energy"]) == lev.energy  # repr: exact round trip
        assert row["label"] == lev.label and int(row["n"]) == lev.n
        assert row["converged"] == "True" and row["unit"] == "hartree"


def test_csv_without_exact_has_no_exact_columns():
    header = report.levels_csv(fake_result([fake_level(1, 0, -0.75)])).splitlines()[0]
    assert header == "n,l,nodes,label,energy,error_estimate,converged,unit"
