"""Parameter sweeps (radsolve.analysis.sweeps): level identity, unbound rows, export, workers.

Outside references, each named again beside its test:

* Yukawa critical screening lengths: 1s D_c = 1/1.19061 bohr (Rogers,
  Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards et al.,
  arXiv:1706.09979 (2017) — from memory); 2p D_c = 4.5410 bohr (Rogers,
  Graboske & Harwood 1970, from memory).
* Hellmann-Feynman theorem (textbook): dE/dD = <dV/dD> = -Z <exp(-r/D)>/D**2 < 0,
  so every Yukawa level rises monotonically as D shrinks.
* Large-D expansion (textbook first-order perturbation theory with the
  hydrogen expectation values <r> = 3/2, <r**2> = 3 bohr**2):
  E_1s = -1/2 + 1/D - 3/(4 D**2) + 1/(2 D**3) + O(D**-4), the D**-4
  coefficient being about -0.34 (McEnnan, Kissel, Pratt, Phys. Rev. A 13,
  532 (1976), from memory).
* Scaling (textbook): E(Z, D) = Z**2 E(1, Z D) for V = -Z exp(-r/D)/r, mu = 1.

Internal-consistency checks (not outside references): sweep energies against
single solves with the other method (Numerov shooting instead of finite
differences), which must agree within the sum of their error estimates, and
against a single finite-difference solve, which must be the same number.
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest

from plugin_sources import square_well_source
from radsolve.errors import InputError
from radsolve.potentials import potential
from radsolve.core.spectrum import solve
from radsolve.analysis.sweeps import SweepInterrupted, parameter_values, sweep

# Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards et al.,
# arXiv:1706.09979 (2017) — from memory.
D_C_1S = 1.0 / 1.19061
D_C_2P = 4.5410  # Rogers et al. (1970), from memory

TOL = 1e-8


@pytest.fixture(scope="module")
def yukawa_sweep():
    values = [0.7, 1.0, 2.5, 5.0, 8.0]
    return sweep("yukawa", vary={"screening_length": values}, l=[0, 1], count=2, tol=TOL, workers=1)


def test_every_point_has_every_level_row(yukawa_sweep):
    res = yukawa_sweep
    assert len(res) == 5 * 2 * 2
    rows = list(res.rows())
    assert [r["label"] for r in rows[:4]] == ["1s", "2s", "2p", "3p"]
    by_point: dict[int, list[str]] = {}
    for row in rows:
        by_point.setdefault(row["point"], []).append(row["label"])
    assert all(labels == ["1s", "2s", "2p", "3p"] for labels in by_point.values())
    assert sorted(by_point) == list(range(5))


def test_bound_flags_follow_published_critical_screening_lengths(yukawa_sweep):
    one_s = yukawa_sweep.level("1s")
    two_p = yukawa_sweep.level("2p")
    d = one_s.values["screening_length"]
    # 1s bound for D > 0.83991 (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also
    # Edwards et al., arXiv:1706.09979 (2017) — from memory); 2p for D > 4.5410 (Rogers et al.
    # 1970, from memory).
    assert np.array_equal(one_s.bound, d > D_C_1S)
    assert np.array_equal(two_p.bound, d > D_C_2P)
    # Unbound rows carry no energy and are not "converged".
    assert np.all(np.isnan(one_s.energy[~one_s.bound]))
    assert not np.any(one_s.converged[~one_s.bound])
    assert np.all(one_s.converged[one_s.bound])


def test_sweep_rows_agree_with_single_solves_by_another_method(yukawa_sweep):
    # Internal-consistency check (not an outside reference): the sweep's fd energies
    # against single Numerov solves, within the sum of their error estimates.
    res = yukawa_sweep
    for index in range(res.points_total):
        (d,) = res.point_values(index)
        single = solve(potential("yukawa", screening_length=d), l=[0, 1], count=2, tol=TOL, method="numerov")
        found = {lev.label: lev for lev in single.levels}
        for row in (r for r in res.rows() if r["point"] == index):
            if not row["bound"]:
                assert row["label"] not in found
                continue
            other = found[row["label"]]
            assert abs(row["energy"] - other.energy) <= row["error_estimate"] + other.error_estimate + 1e-13


def test_sweep_row_is_the_same_as_a_single_fd_solve(yukawa_sweep):
    # Internal-consistency check (not an outside reference): a sweep row is the same
    # computation as a single finite-difference solve at that point.
    single = solve(potential("yukawa", screening_length=5.0), l=[0, 1], count=2, tol=TOL)
    track = yukawa_sweep.level("2s")
    i = int(np.flatnonzero(track.values["screening_length"] == 5.0)[0])
    assert track.energy[i] == single.level("2s").energy
    assert track.error_estimate[i] == single.level("2s").error_estimate


def test_1s_rises_monotonically_as_screening_length_shrinks():
    # Hellmann-Feynman (textbook): dE/dD < 0.
    d = np.geomspace(1.0, 40.0, 9)
    res = sweep("yukawa", vary={"screening_length": d}, l=0, count=1, tol=TOL, workers=1)
    track = res.level("1s")
    assert track.bound.all()
    steps = np.diff(track.energy)  # D increasing -> energy decreasing
    assert np.all(steps < -(track.error_estimate[1:] + track.error_estimate[:-1]))


def test_large_screening_length_follows_perturbation_series():
    # Textbook first-order perturbation theory; remainder O(D**-4) with coefficient ~0.34.
    d = np.array([30.0, 60.0, 120.0])
    res = sweep("yukawa", vary={"screening_length": d}, l=0, count=1, tol=1e-11, workers=1)
    energy = res.level("1s").energy
    series = -0.5 + 1.0 / d - 0.75 / d**2 + 0.5 / d**3
    remainder = (energy - series) * d**4
    assert np.all(np.abs(remainder) < 1.0)
    assert np.all(remainder < 0)  # the D**-4 term is negative


def test_two_parameter_grid_order_and_charge_scaling():
    # Textbook scaling: E(Z, D) = Z**2 E(1, Z D).
    res = sweep("yukawa", vary={"Z": [1.0, 2.0], "screening_length": [1.5, 3.0]}, l=0, count=1,
                tol=1e-10, workers=1)
    assert res.shape == (2, 2)
    assert [res.point_values(i) for i in range(4)] == [(1.0, 1.5), (1.0, 3.0), (2.0, 1.5), (2.0, 3.0)]
    grid = res.grid("1s")
    err = res.grid("1s", "error_estimate")
    assert abs(grid[1, 0] - 4.0 * grid[0, 1]) <= err[1, 0] + 4.0 * err[0, 1] + 1e-12


def test_csv_and_json_export_keep_unbound_rows(yukawa_sweep, tmp_path):
    res = yukawa_sweep
    text = res.to_csv(tmp_path / "s.csv", unit="eV")
    rows = list(csv.DictReader(io.StringIO(text)))
    assert len(rows) == len(res)
    assert set(rows[0]) == set(res.columns) | {"unit"}
    first = rows[0]
    assert first["label"] == "1s" and first["bound"] == "False" and first["energy"] == ""
    bound_row = next(r for r in rows if r["bound"] == "True")
    # Energies in eV: back to hartree with CODATA (scipy.constants).
    from scipy.constants import physical_constants

    ev = physical_constants["electron volt-hartree relationship"][0]
    lev = res.level(bound_row["label"])
    i = list(lev.points).index(int(bound_row["point"]))
    assert float(bound_row["energy"]) * ev == pytest.approx(lev.energy[i], rel=1e-13)
    assert (tmp_path / "s.csv").read_text() == text

    doc = json.loads(res.to_json(tmp_path / "s.json"))
    assert doc["complete"] is True and doc["points_done"] == 5
    assert len(doc["rows"]) == len(res)
    assert doc["rows"][0]["energy"] is None
    assert doc["parameter_units"]["screening_length"] == "bohr"


@pytest.mark.needs_pandas
def test_to_pandas(yukawa_sweep):
    import pandas as pd

    frame = yukawa_sweep.to_pandas()
    assert len(frame) == len(yukawa_sweep)
    assert list(frame.columns) == list(yukawa_sweep.columns)
    assert frame["energy"].isna().sum() == int((~yukawa_sweep.bound).sum())
    assert isinstance(frame, pd.DataFrame)


def test_worker_processes_give_the_serial_result_exactly(yukawa_sweep, tmp_path):
    parallel = sweep("yukawa", vary={"screening_length": [0.7, 1.0, 2.5, 5.0, 8.0]}, l=[0, 1],
                     count=2, tol=TOL, workers=2, out=tmp_path / "p.csv")
    assert np.array_equal(parallel.energy, yukawa_sweep.energy, equal_nan=True)
    assert np.array_equal(parallel.error_estimate, yukawa_sweep.error_estimate, equal_nan=True)
    assert np.array_equal(parallel.bound, yukawa_sweep.bound)
    assert (tmp_path / "p.csv").read_text() == yukawa_sweep.to_csv()


INTERRUPTING = '''
import numpy as np
NAME = "interrupting_well"
PARAMETERS = {"depth": 1.0}
def V(r, depth):
    if depth == 3.0:
        raise KeyboardInterrupt  # what Ctrl-C does in the middle of a point
    return -depth * np.exp(-r * r)
def v_infinity(depth):
    return 0.0
def small_r(depth):
    return (-depth, 0.0)
'''


@pytest.mark.parametrize("workers", [1, 2])
def test_interrupt_keeps_finished_rows(tmp_path, workers):
    (tmp_path / "interrupting_well.py").write_text(INTERRUPTING)
    out = tmp_path / "rows.json"
    with pytest.raises(SweepInterrupted) as info:
        sweep("interrupting_well", vary={"depth": [1.0, 2.0, 3.0, 4.0]}, plugins=[str(tmp_path)],
              count=1, tol=1e-6, workers=workers, out=out)
    partial = info.value.partial
    assert not partial.complete
    assert partial.done[0] and not partial.done[2]
    if workers == 1:
        assert partial.done[1]  # in order; with workers the point beside it may be cut short
    doc = json.loads(out.read_text())  # still a complete JSON document
    assert doc["complete"] is False
    assert doc["points_done"] == partial.points_done
    assert {row["point"] for row in doc["rows"]} == set(np.flatnonzero(partial.done))


def test_progress_bar_only_when_asked_or_on_a_terminal(capsys):
    sweep("yukawa", vary={"screening_length": [2.0, 3.0]}, count=1, tol=1e-6, workers=1, progress=True)
    assert "2/2 points" in capsys.readouterr().err
    sweep("yukawa", vary={"screening_length": [2.0, 3.0]}, count=1, tol=1e-6, workers=1)
    assert capsys.readouterr().err == ""  # pytest's stderr is not a terminal


def test_parameter_values():
    assert np.allclose(parameter_values(1.0, 100.0, 3, log=True), [1.0, 10.0, 100.0])
    assert np.allclose(parameter_values(0.0, 1.0, 5), [0, 0.25, 0.5, 0.75, 1.0])
    assert list(parameter_values(2.0, 2.0, 1)) == [2.0]


@pytest.mark.parametrize("kwargs, message", [
    (dict(vary={"depth": [1.0]}), "has no parameter 'depth'"),
    (dict(vary={}), "at least one parameter"),
    (dict(vary={"screening_length": []}), "no values"),
    (dict(vary={"screening_length": "1:2:3"}), "sequence of values"),
    (dict(vary={"screening_length": [-1.0]}), "must be > 0"),
    (dict(vary={"screening_length": [1.0]}, workers=0), "workers must be"),
    (dict(vary={"screening_length": [1.0]}, unit="furlong"), "unknown energy unit"),
    (dict(vary={"screening_length": [1.0]}, out="rows.txt"), "must end in .csv or .json"),
    (dict(vary={"screening_length": [1.0]}, count=0), "count must be"),
    (dict(vary={"screening_length": [1.0]}, l=-1), "l must be >= 0"),
])
def test_bad_input_is_named(kwargs, message):
    with pytest.raises(InputError, match=message):
        sweep("yukawa", tol=1e-6, **kwargs)


@pytest.mark.parametrize("args, message", [
    ((1.0, 2.0, 0), "must be >= 1"),
    ((1.0, 1.0, 3), "empty range"),
    ((0.0, 1.0, 3, True), "nonzero ends of the same sign"),
    ((1.0, math.inf, 3), "finite"),
])
def test_bad_ranges(args, message):
    with pytest.raises(InputError, match=message):
        parameter_values(*args)


SPIN_ORBIT_OSCILLATOR = '''
import numpy as np
NAME = "oscillator_with_constant_ls"
PARAMETERS = {"omega": 1.0, "ls": 0.1}
def V(r, omega, ls):
    return 0.5 * omega**2 * r**2
def spin_orbit(r, omega, ls):
    return np.full_like(r, ls)
def small_r(omega, ls):
    return (0.0, 0.0)
'''

NUCLEAR_WELL = square_well_source("nuclear_box_well", 40.0, 4.0, units="nuclear")


def test_spin_orbit_sweep_has_j_rows(tmp_path):
    # Textbook: a constant spin-orbit term c shifts each level by c <l.s>, with
    # <l.s> = l/2 for j = l + 1/2 and -(l+1)/2 for j = l - 1/2, on top of the
    # oscillator levels omega (2 nodes + l + 3/2) (mass 1).
    (tmp_path / "oscillator_with_constant_ls.py").write_text(SPIN_ORBIT_OSCILLATOR)
    res = sweep("oscillator_with_constant_ls", vary={"ls": [0.0, 0.05, 0.2]}, l=[0, 1], count=2,
                spin_orbit=True, plugins=[str(tmp_path)], tol=1e-10, workers=1)
    assert res.channels == ((0, 0.5), (1, 0.5), (1, 1.5))
    assert "j" in res.columns
    assert res.labels() == ["1s1/2", "2s1/2", "2p1/2", "3p1/2", "2p3/2", "3p3/2"]
    for label in res.labels():
        track = res.level(label)
        ls_factor = track.l / 2 if track.j > track.l else -(track.l + 1) / 2
        exact = (2 * track.nodes + track.l + 1.5) + track.values["ls"] * ls_factor
        assert np.all(np.abs(track.energy - exact) <= track.error_estimate + 1e-12)
    row = next(r for r in res.rows() if r["label"] == "2p3/2")
    assert row["j"] == 1.5


def test_nuclear_sweep_in_mev(tmp_path):
    # Textbook square well, l = 0: k cot(k R) = -kappa, with k = sqrt(2 mu (V0 + E))/(hbar c),
    # kappa = sqrt(-2 mu E)/(hbar c); hbar c and the neutron mass from scipy.constants (CODATA).
    from scipy import constants as const
    from scipy.optimize import brentq

    (tmp_path / "nuclear_box_well.py").write_text(NUCLEAR_WELL)
    res = sweep("nuclear_box_well", vary={"depth": [20.0, 40.0]}, l=0, count=1, mass="neutron",
                plugins=[str(tmp_path)], tol=1e-10, workers=1)
    assert res.units == "nuclear" and res.energy_unit == "MeV"
    hbar_c = const.hbar * const.c / (const.mega * const.e * const.femto)
    mu = const.physical_constants["neutron mass energy equivalent in MeV"][0]
    track = res.level("1s")
    for v0, energy, err in zip(track.values["depth"], track.energy, track.error_estimate):
        big_k2 = 2 * mu * v0 / hbar_c**2

        def matching(k):  # the ground state has pi/2 < k R < pi
            return k / math.tan(k * 4.0) + math.sqrt(big_k2 - k * k)

        k = brentq(matching, math.pi / 8.0 * (1 + 1e-12), min(math.pi / 4.0, math.sqrt(big_k2)) * (1 - 1e-12))
        exact = (hbar_c * k) ** 2 / (2 * mu) - v0
        assert abs(energy - exact) <= err + 1e-10 * abs(exact)
    assert res.to_csv().splitlines()[1].endswith(",MeV")
