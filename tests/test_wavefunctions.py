"""Wavefunction values, interpolation and export (radsolve.core.wavefunctions).

Sources of the reference values, beside each check:

- Hydrogen-like radial functions: sympy.physics.hydrogen.R_nl (sympy),
  positive near the origin like ours.
- 3D oscillator ground state u = 2 (omega^3/pi)^(1/4) r e^{-omega r^2/2}
  (textbook formula, unit mass).
- R_1s(0) = 2 Z^(3/2) (textbook formula).
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest
import sympy
from sympy.physics.hydrogen import R_nl

import radsolve
from radsolve.errors import InputError
from radsolve.analysis.observables import state
from radsolve.core.wavefunctions import export_format


def sympy_R(n, l, Z=1.0):
    r = sympy.symbols("r", positive=True)
    return sympy.lambdify(r, R_nl(n, l, r, Z), "numpy")


@pytest.mark.parametrize("n,l", [(1, 0), (3, 0), (3, 2), (4, 1)])
def test_grid_values_match_sympy(n, l):
    st = state("coulomb", n, l)
    wave = st.wavefunction()
    exact_R = sympy_R(n, l)(wave.r)  # sympy.physics.hydrogen.R_nl
    exact_u = exact_R * wave.r
    # the point-wise estimates are honest (10x margin above the rounding
    # floor), also in the last decay lengths, where the box's wall forces u = 0
    assert np.all(np.abs(wave.u - exact_u) <= 10 * wave.u_error + 1e-12)
    away_from_wall = wave.r < wave.box_radius - 3.0 * n  # u decays like e^{-r/n} (textbook)
    assert np.max(np.abs(wave.u - exact_u)[away_from_wall]) <= 1e-9
    assert np.sum(wave.weights * wave.u**2) == pytest.approx(1.0, abs=1e-10)
    inner = wave.r < 0.5
    assert np.allclose(wave.R[inner], exact_R[inner], rtol=1e-7, atol=1e-9)


@pytest.mark.parametrize("n,l", [(2, 0), (3, 1)])
def test_interpolated_values_match_sympy(n, l):
    st = state("coulomb", n, l)
    radii = np.array([0.0, 1e-4, 0.123456, 1.0, 2.71828, 7.5, 19.0])
    wave = st.wavefunction(radii)
    exact_R = sympy_R(n, l)(np.where(radii > 0, radii, 1e-300))
    if l == 0:
        exact_R[0] = float(R_nl(n, 0, 0, 1))
    # Near the origin R comes from the fitted law C r**lambda (1 + a r**q); its
    # accuracy there (~1e-8) depends on the grids the energies needed, and the
    # point-wise estimate says how large it is.
    assert np.all(np.abs(wave.R - exact_R) <= 10 * wave.R_error + 1e-10)
    assert np.allclose(wave.R, exact_R, rtol=3e-8, atol=1e-10)
    assert np.allclose(wave.u, exact_R * radii, atol=1e-10)
    assert not wave.on_grid and wave.weights is None


def test_contact_value_of_hydrogen_like_ions():
    Z = 3.0
    st = state(radsolve.potential("coulomb", Z=Z), 1, 0)
    wave = st.wavefunction([0.0, 1e-12])
    assert wave.R[0] == pytest.approx(2 * Z**1.5, rel=1e-9)  # textbook formula
    assert wave.R[1] == pytest.approx(2 * Z**1.5, rel=1e-9)


def test_oscillator_ground_state():
    omega = 0.7
    st = state(radsolve.potential("harmonic", omega=omega), 1, 0)
    wave = st.wavefunction([0.3, 1.0, 2.5])
    # textbook formula for unit mass
    exact = 2 * (omega**3 / math.pi) ** 0.25 * wave.r * np.exp(-omega * wave.r**2 / 2)
    assert np.allclose(wave.u, exact, rtol=1e-8)


@pytest.mark.parametrize("n,l", [(3, 0), (4, 1), (2, 1)])
def test_sign_convention_positive_at_the_origin(n, l):
    wave = state("coulomb", n, l).wavefunction()
    first = np.argmax(np.abs(wave.u) > 1e-6 * np.max(np.abs(wave.u)))
    assert wave.u[first] > 0
    assert "r -> 0" in wave.sign_convention


def test_beyond_the_box_is_zero():
    st = state("coulomb", 1, 0)
    wave = st.wavefunction([1e4])
    assert wave.u[0] == 0.0 and wave.box_radius < 1e4


def test_csv_json_npz_round_trip(tmp_path):
    st = state("coulomb", 2, 1)
    wave = st.wavefunction()
    for name in ("w.csv", "w.json", "w.npz"):
        wave.save(tmp_path / name)
    rows = list(csv.reader(io.StringIO((tmp_path / "w.csv").read_text())))
    assert rows[0][:3] == ["r/bohr", "u/bohr^-1/2", "u_error/bohr^-1/2"]
    assert float(rows[5][1]) == wave.u[4]
    doc = json.loads((tmp_path / "w.json").read_text())
    assert doc["label"] == "2p" and doc["sign_convention"].startswith("u(r) > 0")
    assert doc["u"][100] == wave.u[100]
    data = np.load(tmp_path / "w.npz")
    assert np.array_equal(data["R"], wave.R)
    meta = json.loads(str(data["metadata"]))
    assert meta["units"]["u"] == "bohr^-1/2"


def test_export_errors(tmp_path):
    wave = state("coulomb", 1, 0).wavefunction()
    with pytest.raises(InputError, match="allowed: .csv, .json, .npz"):
        wave.save(tmp_path / "w.txt")
    with pytest.raises(InputError, match="does not exist"):
        wave.save(tmp_path / "missing" / "w.csv")
    with pytest.raises(InputError):
        export_format("w")


@pytest.mark.parametrize("bad", [[-1.0], [float("nan")], [[1.0, 2.0]], ["one"]])
def test_bad_radii(bad):
    st = state("coulomb", 1, 0)
    with pytest.raises(InputError, match="r must"):
        st.wavefunction(bad)


def test_plots_are_written(tmp_path):
    from radsolve.output.plotting import plot_level_diagram, plot_wavefunction
    from radsolve.analysis.radiative import transitions

    png = plot_wavefunction(state("coulomb", 3, 1), tmp_path / "w.png", unit="eV")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    svg = plot_level_diagram(transitions("coulomb", 3), tmp_path / "d.svg")
    assert "<svg" in svg.read_text()[:500]
    with pytest.raises(InputError, match="does not exist"):
        plot_wavefunction(state("coulomb", 1, 0), tmp_path / "no" / "w.png")
    with pytest.raises(InputError, match="allowed"):
        plot_wavefunction(state("coulomb", 1, 0), tmp_path / "w.gif")
