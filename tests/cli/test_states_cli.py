"""The `radsolve wave` and `radsolve transitions` commands.

Physics references, beside each check:
- hydrogen <r> = (3n^2 - l(l+1))/2 for unit mass (textbook formula);
- A(2p -> 1s) = 6.2649e8 s^-1 with the electron-proton reduced mass (NIST
  Atomic Spectra Database; Wiese & Fuhr, J. Phys. Chem. Ref. Data 38 (2009);
  from memory).
"""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest

from helpers import invoke


def _row(text: str, name: str) -> list[str]:
    for line in text.splitlines():
        if line.startswith(name + " "):
            return line.split()
    raise AssertionError(f"no row {name!r} in\n{text}")


def test_wave_summary_table():
    result = invoke("wave", "coulomb", "--n", "3", "--l", "1", "--moment=-2.5", "--inside", "9")
    assert result.exit_code == 0, result.stderr
    value = float(_row(result.stdout, "<r>")[2])
    assert value == pytest.approx((27 - 2) / 2, rel=1e-9)  # textbook formula
    for words in ("<r^-2.5>", "P(r < 9)", "virial", "turning point", "u(r) > 0 as r -> 0"):
        assert words in result.stdout
    assert max(len(line) for line in result.stdout.splitlines()) <= 80


def test_wave_values_at_radii_in_units():
    result = invoke("wave", "coulomb", "--n", "1", "--l", "0", "--at", "0", "--at", "0.5angstrom",
                    "--format", "csv")
    assert result.exit_code == 0, result.stderr
    rows = list(csv.reader(io.StringIO(result.stdout)))
    assert rows[0][0] == "r/bohr" and len(rows) == 3
    assert float(rows[1][3]) == pytest.approx(2.0, rel=1e-9)  # R_1s(0) = 2, textbook formula


def test_wave_files_and_plot(tmp_path):
    out, plot = tmp_path / "w.npz", tmp_path / "w.svg"
    result = invoke("wave", "harmonic", "--n", "2", "--l", "1", "--out", out, "--plot", plot, "--unit", "eV")
    assert result.exit_code == 0, result.stderr
    data = np.load(out)
    assert np.sum(data["weights"] * data["u"] ** 2) == pytest.approx(1.0, abs=1e-10)
    assert "<svg" in plot.read_text()[:500]
    assert "energy E" in result.stdout  # the summary still goes to stdout
    js = invoke("wave", "coulomb", "--n", "2", "--l", "0", "--format", "json")
    doc = json.loads(js.stdout)
    assert doc["properties"]["r"]["value"] == pytest.approx(6.0, rel=1e-9)  # textbook formula


def test_transitions_json_and_csv(tmp_path):
    result = invoke("transitions", "coulomb", "--nmax", "2", "--mass", "electron+proton",
                    "--format", "json", "--unit", "eV")
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    (line,) = doc["lines"]
    assert (line["upper"], line["lower"]) == ("2p", "1s")
    # NIST ASD (Wiese & Fuhr 2009; from memory)
    assert line["einstein_A"] == pytest.approx(6.2649e8, rel=1e-3)
    states = {s["label"]: s for s in doc["states"]}
    assert states["2s"]["lifetime_s"] is None and states["2s"]["metastable"] is True
    assert states["2p"]["branching"] == {"1s": 1.0}
    assert "vacuum" in doc["conventions"]["wavelengths"]
    out = tmp_path / "t.csv"
    result = invoke("transitions", "coulomb", "--nmax", "3", "--format", "csv", "--out", out)
    assert result.exit_code == 0, result.stderr
    text = out.read_text()
    # The model-calculation caveat: a leading '#' line in the file and a note on stderr.
    assert text.startswith("#") and "model calculation" in text.splitlines()[0]
    assert "model calculation" in result.stderr and "evaluated data" in result.stderr
    rows = list(csv.DictReader(line for line in io.StringIO(text) if not line.startswith("#")))
    lines = [r for r in rows if r["record"] == "line"]
    assert len(lines) == 5  # 2p-1s, 3s-2p, 3p-1s, 3p-2s, 3d-2p (E1 rule, textbook)
    assert {r["label"] for r in rows if r["record"] == "state" and r["metastable"] == "true"} == {"1s", "2s"}


def test_transitions_table_and_plot(tmp_path):
    plot = tmp_path / "levels.png"
    result = invoke("transitions", "coulomb", "--nmax", "3", "--plot", plot)
    assert result.exit_code == 0, result.stderr
    assert "vacuum" in result.stdout and "metastable (no E1 decay)" in result.stdout
    assert "model calculation" in result.stdout
    assert plot.read_bytes()[:4] == b"\x89PNG"
    assert max(len(line) for line in result.stdout.splitlines()) <= 80


@pytest.mark.parametrize("args, words", [
    (["wave", "coulomb", "--n", "1", "--l", "1"], ["n must be at least l + 1"]),
    (["wave", "yukawa", "-p", "screening_length=1", "--n", "2", "--l", "0"], ["2s", "not bound"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--moment=-3"], ["--moment", "diverges", "k > -3"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--plot", "/no/such/folder/w.png"],
     ["--plot", "does not exist"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--plot", "w.bmp"], ["--plot", ".png"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--out", "w.txt"], ["--out", ".csv, .json, .npz"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--out", "w.csv", "--format", "json"], ["disagree"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--at=-2"], ["--at", ">= 0"]),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--format", "xml"], ["--format"]),
    (["transitions", "coulomb", "--nmax", "40"], ["--nmax", "1 to 25"]),
    (["transitions", "coulomb", "--nmax", "2", "--format", "yaml"], ["--format"]),
    (["transitions", "coulomb", "--nmax", "2", "--unit", "furlong"], ["--unit", "allowed"]),
    (["transitions", "coulomb", "--nmax", "2", "--plot", "/no/such/folder/d.png"], ["does not exist"]),
    (["transitions", "yukawa", "-p", "screening_length=0.5", "--nmax", "2"], ["no bound level"]),
])
def test_bad_input(args, words):
    result = invoke(*args)
    assert result.exit_code == 2, (result.stdout, result.stderr)
    for word in words:
        assert word in result.stderr, (word, result.stderr)
    assert "Traceback" not in result.stderr + result.stdout


def test_real_process_has_no_traceback(radsolve_process):
    proc = radsolve_process("wave", "coulomb", "--n", "2", "--l", "0", "--moment=-4")
    assert proc.returncode == 2
    assert "diverges" in proc.stderr and "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1


def test_transitions_with_occupied_levels():
    result = invoke("transitions", "alkali_model", "-p", "element=Na", "--nmax", "3",
                    "--occupied", "1s,2s,2p", "--format", "json")
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    assert doc["occupied"] == ["1s", "2s", "2p"]
    assert all(line["lower"] not in ("1s", "2s", "2p") for line in doc["lines"])
    bad = invoke("transitions", "alkali_model", "--nmax", "3", "--occupied", "9q")
    assert bad.exit_code == 2 and "--occupied" in bad.stderr and "9q" in bad.stderr


def test_wave_hellmann_feynman_rows():
    # dE/dZ = -mu Z/n^2 for -Z/r (textbook formula): -1/4 for n = 2, Z = 1.  tol 1e-10 is
    # well within reach, so the command must converge (exit 0, every row "yes").
    result = invoke("wave", "coulomb", "--n", "2", "--l", "1", "--hellmann-feynman", "Z", "--tol", "1e-10")
    assert result.exit_code == 0, result.stderr
    assert _row(result.stdout, "<dV/dZ>")[-1] == "yes"
    assert _row(result.stdout, "dE/dZ")[-1] == "yes"
    assert float(_row(result.stdout, "<dV/dZ>")[2]) == pytest.approx(-0.25, rel=1e-9)
    assert float(_row(result.stdout, "dE/dZ")[3]) == pytest.approx(-0.25, rel=1e-7)
    bad = invoke("wave", "coulomb", "--n", "1", "--l", "0", "--hellmann-feynman", "depth")
    assert bad.exit_code == 2 and "--hellmann-feynman" in bad.stderr and "depth" in bad.stderr


def test_transitions_sum_rule_table_and_json():
    # Thomas-Reiche-Kuhn (textbook): with the electron-proton reduced mass the f of hydrogen 1s sum to
    # m_e/mu (the f use the electron-mass convention); mu from scipy.constants (CODATA).
    from scipy.constants import m_e, m_p

    mu = m_e * m_p / (m_e + m_p) / m_e
    args = ["transitions", "coulomb", "--nmax", "7", "--mass", "electron+proton", "--sum-rule", "1s"]
    doc = json.loads(invoke(*args, "--format", "json").stdout)
    (rule,) = doc["sum_rules"]
    assert rule["level"] == "1s" and rule["complete"]
    assert rule["expected"] == pytest.approx(1 / mu, rel=1e-12)
    assert abs(rule["total"] - 1 / mu) < 1e-5 and abs(rule["total"] - 1 / mu) <= rule["total_error"]
    table = invoke(*args)
    assert "f continuum" in table.stdout and "TRK" in table.stdout
