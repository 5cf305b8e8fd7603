"""The `radsolve phases` and `radsolve scattering` commands.

Physics references, beside each check:
- hard sphere: delta_0 = -k a, a_0 = a, r_0 = 2a/3 (textbook formulas);
- square well: a_0 = R - tan(K R)/K (textbook formula).
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest

from helpers import invoke


def test_phases_table_csv_json_agree_with_hard_sphere(tmp_path):
    args = ["phases", "formula", "--expr", "0*r", "--hard-core", "1.5", "--energies", "0.1:2:5", "--l", "0"]
    table = invoke(*args)
    assert table.exit_code == 0, table.stderr
    assert "phase shifts of formula" in table.stdout and "model calculation" in table.stdout
    rows = list(csv.DictReader(io.StringIO(invoke(*args, "--format", "csv").stdout)))
    doc = json.loads(invoke(*args, "--format", "json").stdout)
    assert len(rows) == len(doc["rows"]) == 5
    for row in rows:
        k = math.sqrt(2 * float(row["energy"]))
        assert float(row["phase_shift"]) == pytest.approx(-k * 1.5, abs=1e-8)  # textbook: delta_0 = -k a
    assert doc["status"] == "success" and doc["hard_core"] == 1.5


def test_phases_in_electronvolts_and_plot(tmp_path):
    plot = tmp_path / "d.png"
    result = invoke("phases", "yukawa", "-p", "screening_length=1", "--energies", "1:20:4", "--unit", "eV",
                    "--lmax", "1", "--format", "json", "--plot", plot)
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    assert doc["energy_unit"] == "eV"
    assert [r["energy"] for r in doc["rows"][:4]] == pytest.approx([1.0, 7.333333333, 13.66666667, 20.0])
    assert plot.stat().st_size > 1000


def test_scattering_table_and_json():
    # square well V0 = 1.7, R = 2: a_0 = R - tan(KR)/K, K = sqrt(2 V0) (textbook formula)
    args = ["scattering", "formula", "--expr", "-V0*step(R-r)", "-p", "V0=1.7", "-p", "R=2", "--tol", "1e-8"]
    result = invoke(*args, "--format", "json")
    assert result.exit_code in (0, 3), result.stderr
    doc = json.loads(result.stdout)
    K = math.sqrt(3.4)
    a0 = 2 - math.tan(2 * K) / K
    assert doc["rows"][0]["scattering_length"] == pytest.approx(a0, rel=1e-8)
    assert doc["rows"][0]["levinson"] == "agrees" and doc["rows"][0]["bound_levels"] == 1
    table = invoke(*args)
    assert "Levinson" in table.stdout and "agrees" in table.stdout


@pytest.mark.parametrize("args, words", [
    (["phases", "yukawa", "--energies", "-1:1:3"], ["--energies", "above the threshold"]),
    (["phases", "yukawa", "--energies", "2:1:3"], ["--energies", "inverted"]),
    (["phases", "yukawa", "--energies", "1:1:3"], ["--energies", "empty"]),
    (["phases", "harmonic", "--energies", "1"], ["no continuum"]),
    (["phases", "linear", "--energies", "1"], ["no continuum"]),
    (["phases", "formula", "--expr", "-1/r**1.5", "--energies", "1"], ["no matching rule"]),
    (["phases", "formula", "--expr", "1 - exp(-r)/r - 1/sqrt(r)", "--energies", "2"], ["no matching rule"]),
    (["phases", "formula", "--expr", "1/r**2", "--energies", "2"], ["inverse-square"]),
    (["scattering", "coulomb"], ["Coulomb tail"]),
])
def test_bad_input_exits_2_naming_it(args, words):
    result = invoke(*args)
    assert result.exit_code == 2, (result.stdout, result.stderr)
    assert "Traceback" not in result.stderr
    for word in words:
        assert word in result.stderr, result.stderr


def test_photoionization_command_in_ev_and_megabarn(tmp_path):
    # hydrogen 1s at threshold: 6.30e-18 cm^2 = 6.30 Mb (textbook value, Bethe and Salpeter 1957;
    # from memory)
    plot = tmp_path / "s.png"
    result = invoke("photoionization", "coulomb", "--photons", "14:40:3", "--unit", "eV", "--format", "json",
                    "--plot", plot)
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    assert doc["threshold_cross_section_cm2"] == pytest.approx(6.30e-18, rel=1e-3)
    assert doc["ionization_energy"] == pytest.approx(13.6057, rel=1e-5)  # hartree/2 in eV (CODATA)
    for row in doc["rows"]:
        assert row["sigma_Mb"] == pytest.approx(row["sigma_cm2"] / 1e-18)
        assert row["sigma_velocity_cm2"] == pytest.approx(row["sigma_cm2"], rel=1e-6)
    assert plot.stat().st_size > 1000
    below = invoke("photoionization", "coulomb", "--photons", "10", "--unit", "eV")
    assert below.exit_code == 2 and "--photons" in below.stderr and "ionization energy" in below.stderr


def test_logderiv_command_warns_of_a_ghost_state(tmp_path):
    # deeper square well (V0 = 3) against V0 = 1.7: the model's u'/u at r_c = 1.5 has a pole at
    # E = (pi/1.5)**2/2 - 3 = -0.807 that the reference lacks (textbook: zero of j_0 at pi)
    plot = tmp_path / "ld.png"
    result = invoke("logderiv", "formula", "--expr", "-V0*step(2-r)", "-p", "V0=3", "--reference", "formula",
                    "--ref-expr", "-V0*step(2-r)", "--ref-param", "V0=1.7", "--energies=-1.5:0:7", "--radius", "1.5",
                    "--plot", plot)
    assert result.exit_code == 1, result.stderr
    assert "GHOST STATE" in result.stderr and "reference: formula" in result.stdout
    assert plot.stat().st_size > 1000


def test_resonances_command_finds_the_square_well_d_resonance():
    # pole at E = 0.1698040547 hartree (mpmath root of the textbook matching condition; see
    # tests/test_scattering.py)
    result = invoke("resonances", "formula", "--expr", "-V0*step(1-r)", "-p", "V0=9.8", "--lmax", "3",
                    "--window", "0.01:3", "--format", "json")
    assert result.exit_code == 0, result.stderr
    rows = json.loads(result.stdout)["rows"]
    assert len(rows) == 1 and rows[0]["l"] == 2 and rows[0]["agree"]
    assert rows[0]["energy_pole"] == pytest.approx(0.1698040547, abs=1e-8)


@pytest.mark.parametrize("args, words", [
    (["photoionization", "harmonic", "--photons", "5"], ["no continuum"]),
    (["photoionization", "yukawa", "--level", "3d", "--photons", "1"], ["--level", "not bound"]),
    (["photoionization", "coulomb", "--level", "xx", "--photons", "1"], ["--level", "not a level label"]),
    (["resonances", "yukawa", "--window=-1:1"], ["--window", "above the threshold"]),
    (["resonances", "yukawa", "--window", "1"], ["--window", "E1:E2"]),
    (["logderiv", "yukawa", "--energies", "0.1", "--radius", "1", "--ref-param", "Z=2"], ["--reference"]),
    (["phases", "yukawa", "--energies", "0.1:1:3", "--workers", "0"], ["--workers", "1 to"]),
    (["photoionization", "coulomb", "--photons", "1", "--workers", "-2"], ["--workers", "1 to"]),
    (["transitions", "coulomb", "--nmax", "2", "--sum-rule", "5g"], ["--sum-rule", "5g"]),
])
def test_more_bad_input_exits_2(args, words):
    result = invoke(*args)
    assert result.exit_code == 2, (result.stdout, result.stderr)
    assert "Traceback" not in result.stderr
    for word in words:
        assert word in result.stderr, result.stderr


def test_scattering_along_the_screening_length():
    # a_0 of -exp(-r/D)/r changes sign through infinity where the 1s level binds, D = 0.8399 bohr
    # (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); from memory)
    result = invoke("scattering", "yukawa", "--vary", "screening_length=0.8,0.83,0.85,0.9", "--l", "0",
                    "--tol", "1e-6", "--format", "json")
    assert result.exit_code == 0, result.stderr
    rows = json.loads(result.stdout)["rows"]
    a = [r["scattering_length"] for r in rows]
    assert a[1] < a[0] < 0 < a[3] < a[2]
    assert [r["bound_levels"] for r in rows] == [0, 0, 1, 1] and all(r["levinson"] == "agrees" for r in rows)


def test_rows_do_not_depend_on_the_worker_count(tmp_path):
    # 1100 energies make three pieces of the energy grid; serial and two worker processes give the
    # same rows, bit for bit (the pieces are fixed, not chosen by the worker count)
    args = ["phases", "yukawa", "--energies", "0.01:3:1100", "--lmax", "1", "--tol", "1e-6", "--format", "csv",
            "--no-progress"]
    one = invoke(*args)
    two = invoke(*args, "--workers", "2")
    assert one.exit_code == 0 and two.exit_code == 0, (one.stderr, two.stderr)
    assert one.stdout == two.stdout
    assert len(one.stdout.splitlines()) > 2200
    args = ["photoionization", "coulomb", "--photons", "0.6:4:1030", "--format", "csv", "--no-progress"]
    one, two = invoke(*args, "--workers", "1"), invoke(*args, "--workers", "2")
    assert one.exit_code == 0 and one.stdout == two.stdout


def test_progress_bar_on_request():
    result = invoke("phases", "yukawa", "--energies", "0.1:2:600", "--progress", "--format", "csv")
    assert result.exit_code == 0, result.stderr
    assert "phase shifts" in result.stderr and "600/600" in result.stderr
