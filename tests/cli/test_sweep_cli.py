"""The sweep, threshold and fit commands of the command line.

Outside references:

* Yukawa 1s critical screening: 1/D_c = 1.19061 bohr**-1 (Rogers, Graboske &
  Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards et al., arXiv:1706.09979
  (2017) — from memory).
* Unit factors: CODATA via scipy.constants.

The rest checks that the command line gives what the Python API gives, that
its files are well formed, that Ctrl-C keeps the rows finished, and that bad
input gets one clear line and exit status 2, never a traceback.
"""

from __future__ import annotations

import csv
import io
import json
import os
import signal
import subprocess
import sys
import time

import pytest

from helpers import invoke
from radsolve.analysis.sweeps import sweep


def no_traceback(result) -> None:
    assert "Traceback" not in result.output + result.stderr


def test_sweep_csv_on_stdout_equals_the_api():
    result = invoke("sweep", "yukawa", "--vary", "screening_length=0.5:4:4", "-l", "0", "-l", "1",
                    "--count", "2", "--tol", "1e-8", "--workers", "1")
    assert result.exit_code == 0, result.stderr
    api = sweep("yukawa", vary={"screening_length": [0.5, 5.0 / 3.0, 2.0 + 5.0 / 6.0, 4.0]}, l=[0, 1],
                count=2, tol=1e-8, workers=1)
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    expected = list(csv.DictReader(io.StringIO(api.to_csv())))
    assert len(rows) == 16
    for got, want in zip(rows, expected):
        assert got["label"] == want["label"] and got["bound"] == want["bound"]
        assert float(got["screening_length"]) == pytest.approx(float(want["screening_length"]), rel=1e-15)
        if want["energy"]:
            assert float(got["energy"]) == pytest.approx(float(want["energy"]), rel=1e-12)


def test_sweep_json_file_with_units_and_log_spacing(tmp_path):
    out = tmp_path / "s.json"
    result = invoke("sweep", "yukawa", "--vary", "screening_length=1angstrom:1nm:3", "--log",
                    "--count", "1", "--tol", "1e-7", "--unit", "eV", "--out", str(out), "-w", "1")
    assert result.exit_code == 0, result.stderr
    doc = json.loads(out.read_text())
    assert doc["unit"] == "eV" and doc["complete"] is True
    from scipy.constants import physical_constants

    bohr_in_m = physical_constants["Bohr radius"][0]  # CODATA
    d = doc["axes"]["screening_length"]
    assert d[0] == pytest.approx(1e-10 / bohr_in_m, rel=1e-12)
    assert d[2] == pytest.approx(1e-9 / bohr_in_m, rel=1e-12)
    assert d[1] == pytest.approx((d[0] * d[2]) ** 0.5, rel=1e-12)  # geometric
    assert "wrote 3 rows" in result.stderr


def test_sweep_plot_files_are_png(tmp_path):
    one = tmp_path / "one.png"
    two = tmp_path / "two.png"
    r1 = invoke("sweep", "yukawa", "--vary", "screening_length=0.6:6:8", "-l", "0", "-l", "1", "--count", "2",
                "--tol", "1e-7", "--plot", str(one), "-w", "1", "--out", str(tmp_path / "one.csv"))
    r2 = invoke("sweep", "yukawa", "--vary", "Z=0.5:2:3", "--vary", "screening_length=0.5:4:3", "--count", "1",
                "--tol", "1e-7", "--plot", str(two), "-w", "1", "--out", str(tmp_path / "two.csv"))
    assert r1.exit_code == 0 and r2.exit_code == 0, r1.stderr + r2.stderr
    for path in (one, two):
        assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_threshold_command():
    result = invoke("threshold", "yukawa", "--vary", "screening_length", "--level", "1s", "--bracket", "0.5:1.5",
                    "--format", "json")
    assert result.exit_code == 0, result.stderr
    (doc,) = json.loads(result.stdout)
    # 1/D_c = 1.19061 bohr**-1 (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970);
    # also Edwards et al., arXiv:1706.09979 (2017) — from memory).
    assert abs(1.0 / doc["value"] / 1.19061 - 1.0) < 1e-5
    assert doc["converged"] is True and doc["approach"].startswith("quadratic")
    assert doc["note"].startswith("model calculation")  # the caveat travels with the number
    table = invoke("threshold", "yukawa", "--vary", "screening_length", "--nmax", "2", "--bracket", "0.5:6")
    assert table.exit_code == 0, table.stderr
    assert "model calculation" in table.stdout
    assert [line.split()[0] for line in table.stdout.splitlines()[3:6]] == ["1s", "2s", "2p"]


def test_fit_command(tmp_path):
    targets = tmp_path / "t.csv"
    # Targets made by radsolve itself (a self-consistency check): Z = 2, D = 3 bohr.
    from radsolve.potentials import potential
    from radsolve.core.spectrum import solve

    levels = solve(potential("yukawa", Z=2.0, screening_length=3.0), l=[0, 1], count=2, tol=1e-11).levels
    targets.write_text("label,energy,uncertainty,unit\n"
                       + "".join(f"{lev.label},{lev.energy!r},1e-4,hartree\n" for lev in levels))
    plot = tmp_path / "fit.png"
    result = invoke("fit", "yukawa", "--targets", str(targets), "--free", "Z:1:4", "--free", "screening_length",
                    "-p", "Z=1.5", "-p", "screening_length=5", "--format", "json", "--plot", str(plot))
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    assert doc["values"]["Z"] == pytest.approx(2.0, abs=1e-3 * doc["standard_errors"]["Z"])
    assert doc["errors_scaled_by_chi2_per_dof"] is False
    assert doc["note"].startswith("model calculation")  # the caveat travels with the numbers
    assert plot.read_bytes()[:4] == b"\x89PNG"
    text = invoke("fit", "yukawa", "--targets", str(targets), "--free", "Z", "-p", "screening_length=3")
    assert text.exit_code == 0
    assert "chi2/dof" in text.stdout and "model potential" in text.stdout
    assert "model calculation" in text.stdout


@pytest.mark.parametrize("args, message", [
    (["sweep", "yukawa", "--vary", "screening_length"], "expected KEY=START:STOP:NUM"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2"], "three parts"),
    (["sweep", "yukawa", "--vary", "depth=1:2:3"], "has no parameter 'depth'"),
    (["sweep", "yukawa", "--vary", "screening_length=1:1:5"], "empty range"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:0"], "must be >= 1"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:x"], "NUM must be a whole number"),
    (["sweep", "flat_core", "--vary", "well_depth=-1:2:3", "--log"], "nonzero ends of the same sign"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--vary", "screening_length=3:4:2"],
     "given twice"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "-p", "screening_length=2"], "both with --vary"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--out", "x.txt"], "must end in .csv or .json"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--plot", "x.jpg"], "must end in .png"),
    (["sweep", "yukawa", "--vary", "screening_length=1eV:2:3"], "'eV' is an energy unit"),
    # the address is checked before Dask is looked for, so this holds without the cluster extra too
    (["sweep", "yukawa", "--vary", "screening_length=1:2:2", "--cluster", "nowhere"], "expected 'local'"),
    (["threshold", "yukawa", "--vary", "screening_length", "--bracket", "1:2"], "does not bracket"),
    (["threshold", "yukawa", "--vary", "screening_length", "--bracket", "1"], "expected A:B"),
    (["threshold", "yukawa", "--vary", "screening_length", "--level", "1j"], "not an orbital letter"),
    (["threshold", "coulomb", "--vary", "Z"], "infinitely many levels"),
    (["threshold", "yukawa", "--vary", "width"], "has no parameter 'width'"),
    (["fit", "yukawa", "--targets", "missing.csv", "--free", "Z"], "does not exist"),
    (["fit", "yukawa", "--targets", "missing.csv", "--free", "Z:1"], "KEY:LO:HI"),
])
def test_bad_input_one_line_exit_2(args, message):
    result = invoke(*args)
    assert result.exit_code == 2, result.output
    assert message in result.stderr
    assert result.stderr.count("\n") == 1
    no_traceback(result)


@pytest.mark.parametrize("content, message", [
    ("label,energy,unit\n1s,-1,hartree\n", "missing column(s) uncertainty"),
    ("label,energy,uncertainty,unit\n1s,-1,0.1,parsec\n", "line 2"),
    ("label,energy,uncertainty,unit\n1s,-1,0.1,eV\n2p,minus one,0.1,eV\n", "line 3: energy 'minus one'"),
])
def test_bad_targets_file_names_the_line(tmp_path, content, message):
    path = tmp_path / "t.csv"
    path.write_text(content)
    result = invoke("fit", "yukawa", "--targets", str(path), "--free", "Z")
    assert result.exit_code == 2
    assert message in result.stderr
    no_traceback(result)


def test_ctrl_c_keeps_the_finished_rows(tmp_path):
    out = tmp_path / "rows.csv"
    cmd = [sys.executable, "-m", "radsolve", "sweep", "yukawa", "--vary", "screening_length=1:30:400",
           "-l", "0", "-l", "1", "--count", "3", "--tol", "1e-10", "--workers", "2", "--out", str(out)]
    proc = subprocess.Popen(cmd, cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    # Wait (without a deadline of our own: hang protection is the test runner's) until
    # some points are written, or the process ends, which would be a failure.
    while not (out.exists() and out.read_text().count("\n") > 1 + 6 * 5):
        if proc.poll() is not None:
            stdout, stderr = proc.communicate()
            pytest.fail(f"the sweep ended (exit {proc.returncode}) before it was interrupted:\n{stderr}")
        time.sleep(0.05)
    proc.send_signal(signal.SIGINT)  # what Ctrl-C sends
    stdout, stderr = proc.communicate(timeout=600)  # generous: only a guard against a hang
    assert proc.returncode == 130, stderr
    assert "interrupted" in stderr and "Traceback" not in stderr
    lines = out.read_text().splitlines()
    rows = list(csv.DictReader(lines))
    assert lines[-1] and out.read_text().endswith("\n")  # no half-written line
    points = sorted({int(r["point"]) for r in rows})
    assert points == list(range(len(points)))  # the finished points, in order, none missing
    assert len(rows) == 6 * len(points)  # every level of every finished point
    assert 0 < len(points) < 400
    assert f"{len(points)} of 400 points" in stderr
