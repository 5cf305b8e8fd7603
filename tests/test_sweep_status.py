"""A sweep's status and each row's status: "unbound" only when proven, and the points' own verdicts kept.

Outside anchors: the critical screening lengths of the Yukawa potential (Rogers, Graboske &
Harwood, Phys. Rev. A 1, 1577 (1970) -- from memory) and hydrogen-like levels -Z^2/(2 n^2)
(textbook formula).  The incomplete cases hand the sweep a solve that drops a level at one point,
as a too-small box would, and check that the sweep does not turn that into "unbound".
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import radsolve.core.spectrum as spectrum
from radsolve.analysis.sweeps import sweep
from radsolve.core.protocol import Note, Outcome

D_C_1S = 0.83991  # 1s bound for D > D_C_1S (Rogers et al. 1970, from memory)
ARGS = dict(l=[0, 1], count=2, tol=1e-8, workers=1)


def test_unbound_rows_are_those_the_count_proves_unbound():
    res = sweep("yukawa", {"screening_length": [0.7, 1.0, 5.0]}, l=0, count=1, tol=1e-8, workers=1)
    rows = res.records()
    assert [r["status"] for r in rows] == ["unbound", "converged", "converged"]
    assert [r["screening_length"] > D_C_1S for r in rows] == [r["bound"] for r in rows]
    assert res.status is Outcome.SUCCESS and res.unresolved == 0


def _solve_dropping(monkeypatch, at_z: float, certain: bool):
    """solve() as it is, except that at Z = at_z the 2s level is not resolved."""
    real = spectrum.solve

    def solve(pot, *args, **kwargs):
        result = real(pot, *args, **kwargs)
        if pot.parameters["Z"] != at_z:
            return result
        levels = [lev for lev in result.levels if lev.label != "2s"]
        certificates = {k: dataclasses.replace(c, certain=certain) for k, c in result.certificates.items()}
        note = Note("levels_missing", "LEVELS MISSING: l=0: 1 of 2") if certain else \
            Note("count_uncertain", "COUNT UNCERTAIN for l=0 (two grids disagreed)")
        return dataclasses.replace(result, levels=levels, certificates=certificates, status=Outcome.INCOMPLETE,
                                   notes=(note,))

    monkeypatch.setattr(spectrum, "solve", solve)


@pytest.mark.parametrize("certain, row_status, code", [(True, "missing", "levels_missing"),
                                                       (False, "unknown", "count_uncertain")])
def test_a_level_not_resolved_is_not_called_unbound(monkeypatch, certain, row_status, code):
    _solve_dropping(monkeypatch, at_z=2.0, certain=certain)
    res = sweep("coulomb", {"Z": [1.0, 2.0, 3.0]}, **ARGS)
    by = {(r["Z"], r["label"]): r for r in res.records()}
    dropped = by[(2.0, "2s")]
    assert not dropped["bound"] and dropped["status"] == row_status and np.isnan(dropped["energy"])
    # the other rows are untouched: -Z^2/(2 n^2) hartree (textbook formula)
    for (z, label), row in by.items():
        if (z, label) != (2.0, "2s"):
            assert row["status"] == "converged"
            assert row["energy"] == pytest.approx(-z**2 / (2 * row["n"] ** 2), rel=1e-8)
    assert res.status is Outcome.INCOMPLETE and not res.success and res.exit_code == 3
    assert res.unresolved == 1
    codes = [n.code for n in res.notes]
    assert "levels_unresolved" in codes and code in codes
    point_note = next(n for n in res.notes if n.code == code)
    assert point_note.subject == "Z = 2" and "1 of 3 point(s)" in point_note.text
    assert list(res.point_status) == ["success", "incomplete", "success"]
    doc = res.to_dict()
    assert doc["status"] == "incomplete" and code in [n["code"] for n in doc["notes"]]


def test_not_converged_at_one_point_makes_the_sweep_not_converged(monkeypatch):
    real = spectrum.solve

    def solve(pot, *args, **kwargs):
        result = real(pot, *args, **kwargs)
        if pot.parameters["Z"] == 3.0:
            first = dataclasses.replace(result.levels[0], converged=False, status=None)
            return dataclasses.replace(result, levels=[first, *result.levels[1:]], status=Outcome.NOT_CONVERGED)
        return result

    monkeypatch.setattr(spectrum, "solve", solve)
    res = sweep("coulomb", {"Z": [1.0, 3.0]}, **ARGS)
    assert res.status is Outcome.NOT_CONVERGED and res.unconverged == 1
    row = next(r for r in res.records() if r["Z"] == 3.0 and r["label"] == "1s")
    assert row["bound"] and not row["converged"] and row["status"] == "not converged"
    assert [n.code for n in res.notes] == ["not_converged"]


@pytest.mark.needs_xarray
def test_row_status_in_xarray_and_netcdf(monkeypatch, tmp_path):
    import xarray as xr

    _solve_dropping(monkeypatch, at_z=2.0, certain=True)
    res = sweep("coulomb", {"Z": [1.0, 2.0]}, **ARGS)
    path = tmp_path / "s.nc"
    res.to_netcdf(path)
    with xr.open_dataset(path) as back:
        assert str(back["status"].sel(Z=2.0, level="2s").values) == "missing"
        assert str(back["status"].sel(Z=1.0, level="2s").values) == "converged"
        assert list(back["point_status"].values) == ["success", "incomplete"]
        assert back.attrs["status"] == "incomplete"
