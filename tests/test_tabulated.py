"""Tabulated potentials (radsolve.potentials.tabulated): reading, interpolation, rules, levels.

Sources of the reference values:

* exact hydrogen levels -1/(2 n^2) hartree: textbook formula;
* exact s levels of the exponential well V = -V0 exp(-r/a): J_{2 kappa a}(2a
  sqrt(2 mu V0)) = 0 with kappa = sqrt(-2 mu E) (textbook formula; the
  substitution z = 2a sqrt(2 mu V0) exp(-r/(2a)) gives Bessel's equation),
  roots found with scipy.special.jv and scipy.optimize.brentq;
* consistency with the built-in family: levels of the ``yukawa`` and
  ``woods_saxon`` families, sampled into tables: a table must reproduce them
  within the interpolation error it states.  The bound used is first-order perturbation theory (textbook):
  |E_table - E| <= <u| |S - V| |u> + solver tolerance, with S the spline and V
  the sampled potential, evaluated on the level's own grid;
* eV/hartree, angstrom/bohr and alpha hbar c: CODATA via scipy.constants.
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
from scipy import constants as const
from scipy.optimize import brentq
from scipy.special import jv

import radsolve
from helpers import EV_IN_HARTREE, invoke
from radsolve.errors import InputError
from radsolve.potentials.tabulated import MIN_POINTS, read_table, tabulated_potential

ANGSTROM_IN_BOHR = const.angstrom / const.physical_constants["Bohr radius"][0]


def perturbation_bound(level, spline_pot, true_pot) -> float:
    """<u| |S - V| |u> on the level's finest grid (first-order perturbation bound)."""
    sample = level.samples[-1]
    diff = np.abs(spline_pot(sample.r) - true_pot(sample.r))
    return float(np.sum(sample.weights * sample.u**2 * diff))


def write_table(path, r, v, header="r,V", sep=","):
    lines = [header] if header else []
    lines += [f"{float(a)!r}{sep}{float(b)!r}" for a, b in zip(r, v)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


# ---------------------------------------------------------------- levels


def test_table_of_coulomb_gives_hydrogen_within_interpolation_error():
    # Source: E = -1/(2 n^2) hartree (textbook formula); Coulomb rules outside the table.
    r = np.geomspace(1e-5, 400.0, 4000)
    table = tabulated_potential((r, -1.0 / r), inside="coulomb:1", beyond="coulomb:1")
    coulomb = radsolve.potential("coulomb", Z=1)
    res = radsolve.solve(table, l=[0, 1], count=3, tol=1e-10)
    assert [lev.label for lev in res.levels] == ["1s", "2s", "3s", "2p", "3p", "4p"]
    for lev in res.levels:
        exact = -1.0 / (2.0 * lev.n**2)
        bound = perturbation_bound(lev, table, coulomb) + 10 * 1e-10 * abs(exact)
        assert abs(lev.energy - exact) <= bound, lev.label
        assert bound < 1e-7 * abs(exact)  # and the table is fine enough for that to mean something


def exponential_well_s_levels(V0, a, mu=1.0):
    """Exact s levels of -V0 exp(-r/a): E = -nu^2/(8 mu a^2) for every order nu > 0 with
    J_nu(2a sqrt(2 mu V0)) = 0 (textbook formula), deepest first; the roots in nu are
    bracketed on a fine scan of (0, x0] (J_nu(x0) has no zero for nu > x0) and refined
    with brentq; J from scipy.special.jv (reference library)."""
    x0 = 2.0 * a * math.sqrt(2.0 * mu * V0)
    nu = np.linspace(1e-9, x0, 4001)
    f = jv(nu, x0)
    roots = [brentq(lambda v: jv(v, x0), nu[i], nu[i + 1], xtol=1e-15)
             for i in range(len(nu) - 1) if f[i] * f[i + 1] < 0]
    return [-(v**2) / (8.0 * mu * a**2) for v in sorted(roots, reverse=True)]


def test_table_of_exponential_well_gives_its_exact_levels():
    # Source: J_{2 kappa a}(2a sqrt(2 mu V0)) = 0 (textbook formula), via scipy.special.jv;
    # bound: first-order perturbation theory with the exact V, and the table's own
    # stated interpolation error (largest |S - V|, which bounds <u| |S - V| |u>).
    # V0 = 12.5 hartree, a = 1 bohr are arbitrary test values (three s levels).
    V0, a, tol = 12.5, 1.0, 1e-10
    exact_levels = exponential_well_s_levels(V0, a)
    assert len(exact_levels) == 3
    well = lambda r: -V0 * np.exp(-np.asarray(r, dtype=float) / a)
    r = np.linspace(0.0, 60.0, 3001)  # V(60 bohr) ~ 1e-25 hartree: "beyond=zero" is exact enough
    table = tabulated_potential((r, well(r)), beyond="zero")
    stated, _ = table.family.module.TABLE.interpolation_error()
    res = radsolve.solve(table, l=0, count=5, tol=tol)
    assert [lev.label for lev in res.levels] == ["1s", "2s", "3s"]
    for lev, exact in zip(res.levels, exact_levels):
        slack = 10 * tol * abs(exact)
        assert abs(lev.energy - exact) <= perturbation_bound(lev, table, well) + slack, lev.label
        assert abs(lev.energy - exact) <= stated + slack, lev.label
        assert stated < 1e-6 * abs(exact)  # and the table is fine enough for that to mean something


def test_table_of_yukawa_reproduces_its_levels():
    # Consistency with the built-in family: the yukawa family sampled at the table
    # points; bound: first-order perturbation theory.
    yukawa = radsolve.potential("yukawa", Z=1, screening_length=5)
    r = np.geomspace(1e-4, 200.0, 1500)
    table = tabulated_potential((r, yukawa(r)), inside="coulomb:1", beyond="zero")
    a = radsolve.solve(table, l=[0, 1], count=2, tol=1e-10)
    b = radsolve.solve(yukawa, l=[0, 1], count=2, tol=1e-10)
    assert [lev.label for lev in a.levels] == [lev.label for lev in b.levels] == ["1s", "2s", "2p"]
    for x, y in zip(a.levels, b.levels):
        bound = perturbation_bound(x, table, yukawa) + 10 * 1e-10 * abs(y.energy)
        assert abs(x.energy - y.energy) <= bound, x.label


def test_stated_interpolation_error_matches_the_true_one():
    # The table's own estimate (spline through every other point, h**4 law; common
    # practice) against the true largest |S - V| from the sampled family.
    yukawa = radsolve.potential("yukawa", Z=1, screening_length=5)
    for degree in (3, 5):
        r = np.geomspace(1e-3, 100.0, 800)
        table = tabulated_potential((r, yukawa(r)), spline_degree=degree)
        estimate, where = table.family.module.TABLE.interpolation_error()
        dense = np.geomspace(r[0], r[-1], 50_000)
        true = np.max(np.abs(table(dense) - yukawa(dense)))
        assert true / 3 <= estimate <= 3 * true, degree
        assert r[0] <= where <= r[-1]


def test_quintic_spline_is_more_accurate_on_the_same_table():
    yukawa = radsolve.potential("yukawa", Z=1, screening_length=5)
    r = np.geomspace(1e-3, 100.0, 400)
    dense = np.geomspace(r[0], r[-1], 20_000)
    errors = {k: np.max(np.abs(tabulated_potential((r, yukawa(r)), spline_degree=k)(dense) - yukawa(dense)))
              for k in (3, 5)}
    assert errors[5] < errors[3] / 10


def test_nuclear_table_from_a_file_reproduces_woods_saxon(tmp_path):
    # Consistency with the built-in family: the woods_saxon family (no spin-orbit,
    # neutron) sampled in fm and MeV; bound: first-order perturbation theory.
    ws = radsolve.potential("woods_saxon")
    r = np.linspace(0.0, 30.0, 1201)
    path = write_table(tmp_path / "ws.csv", r, ws(np.maximum(r, 1e-12)), header="r/fm,V/MeV")
    table = tabulated_potential(path, r_unit="fm", v_unit="MeV", units="nuclear", beyond="zero")
    a = radsolve.solve(table, l=[0, 2], count=2, mass="neutron", tol=1e-9)
    b = radsolve.solve(ws, l=[0, 2], count=2, mass="neutron", tol=1e-9)
    assert a.units == "nuclear" and [lev.label for lev in a.levels] == [lev.label for lev in b.levels]
    for x, y in zip(a.levels, b.levels):
        bound = perturbation_bound(x, table, ws) + 10 * 1e-9 * abs(y.energy)
        assert abs(x.energy - y.energy) <= bound, x.label


def test_declared_units_are_converted():
    # Source: eV and angstrom in hartree and bohr from scipy.constants (CODATA).
    r_bohr = np.geomspace(1e-2, 50.0, 300)
    v_hartree = -np.exp(-r_bohr) / r_bohr
    native = tabulated_potential((r_bohr, v_hartree))
    converted = tabulated_potential((r_bohr / ANGSTROM_IN_BOHR, v_hartree / EV_IN_HARTREE),
                                    r_unit="angstrom", v_unit="eV")
    probe = np.geomspace(2e-2, 40.0, 97)
    assert np.allclose(converted(probe), native(probe), rtol=1e-12, atol=0)


# ---------------------------------------------------------------- rules


def test_rules_beyond_and_inside():
    # Source: alpha hbar c from scipy.constants for the nuclear Coulomb rule.
    r = np.linspace(1.0, 10.0, 40)
    v = -1.0 / r
    far, near = np.array([20.0, 1e6]), np.array([0.5, 1e-9])
    assert np.all(tabulated_potential((r, v), beyond="zero")(far) == 0.0)
    assert np.all(tabulated_potential((r, v), beyond="constant")(far) == v[-1])
    assert np.allclose(tabulated_potential((r, v), beyond="coulomb:2")(far), -2.0 / far, rtol=1e-15)
    assert np.all(tabulated_potential((r, v))(near) == v[0])
    inside = tabulated_potential((r, v), inside="coulomb:1")
    assert np.allclose(inside(near), -1.0 / near, rtol=1e-12)  # continuous and exact for -1/r
    k = const.fine_structure * const.hbar * const.c / (const.mega * const.e * const.femto)
    nuclear = tabulated_potential((r, v), units="nuclear", beyond="coulomb:-82")
    assert nuclear(np.array([50.0]))[0] == pytest.approx(82 * k / 50.0, rel=1e-14)
    assert tabulated_potential((r, v), beyond="constant").v_infinity() == pytest.approx(v[-1])
    assert tabulated_potential((r, v), beyond="zero").v_infinity() == 0.0


def test_a_rule_that_jumps_is_a_breakpoint_and_a_smooth_one_is_not():
    r = np.linspace(1.0, 10.0, 40)
    assert tabulated_potential((r, -1.0 / r), beyond="zero").breakpoints() == [1.0, 10.0]
    wide = np.linspace(1.0, 30.0, 300)
    smooth = np.exp(-((wide - 15.0) ** 2))  # zero to 1e-85 at both ends, flat
    assert tabulated_potential((wide, -smooth), beyond="zero").breakpoints() == []


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(beyond="infinite"), "--beyond 'infinite': unknown rule; allowed: constant, zero, coulomb:Z"),
    (dict(beyond="coulomb"), "write coulomb:Z with a number Z"),
    (dict(beyond="coulomb:x"), "write coulomb:Z"),
    (dict(inside="zero"), "--inside 'zero': unknown rule; allowed: constant, coulomb:Z"),
    (dict(r_unit="parsec"), "--r-unit: unknown length unit 'parsec'"),
    (dict(v_unit="kcal"), "--v-unit: unknown energy unit 'kcal'"),
    (dict(spline_degree=4), "--spline 4: allowed degrees: 3, 5"),
    (dict(units="cgs"), "unknown unit system 'cgs'"),
])
def test_bad_options_are_named(kwargs, fragment):
    r = np.linspace(1.0, 10.0, 20)
    with pytest.raises(InputError) as info:
        tabulated_potential((r, -1.0 / r), **kwargs)
    assert fragment in str(info.value)


def test_tabulated_potentials_pickle_and_compare_by_data():
    r = np.linspace(1.0, 10.0, 20)
    a = tabulated_potential((r, -1.0 / r))
    again = pickle.loads(pickle.dumps(a))
    assert again == a and np.array_equal(again(r), a(r))
    assert tabulated_potential((r, -2.0 / r)) != a


# ---------------------------------------------------------------- files


def test_file_format_header_comments_separators(tmp_path):
    body = ["\ufeff# a table written by hand", "radius  potential", ""]
    body += [f"{x:.3f}{sep}{float(-1.0 / x)!r}   # point {i}"
             for i, (x, sep) in enumerate(zip(np.linspace(1, 5, 14), [",", ";", "\t", "  "] * 4))]
    path = tmp_path / "t.txt"
    path.write_text("\r\n".join(body) + "\r\n", encoding="utf-8")
    r, v = read_table(path)
    assert r.size == 14 and np.allclose(v, -1.0 / np.round(r, 3), rtol=1e-3)


@pytest.mark.parametrize("lines, fragment", [
    (["1,2", "2,3", "x,4"], "line 3: cannot read 'x,4' as two numbers"),
    (["1,2", "2,3,4"], "line 2: expected 2 columns (r and V), found 3"),
    (["1,2", "2"], "line 2: expected 2 columns (r and V), found 1"),
    (["1,2", "2,nan"], "line 2: V is nan"),
    (["1,2", "inf,3"], "line 2: r is inf"),
    (["-1,2", "2,3"], "line 1: r = -1 is negative"),
    (["1,2", "3,3", "3,4"], "line 3: r = 3 does not exceed r = 3 on line 2"),
    (["1,2", "3,3", "2,4"], "line 3: r = 2 does not exceed r = 3 on line 2"),
    (["r,V", "1,2", "2,3"], "2 data points; a table needs at least"),
    (["# only a comment"], "0 data points"),
])
def test_malformed_files_name_the_line(tmp_path, lines, fragment):
    path = tmp_path / "bad.csv"
    padding = [f"{10 + i},{-1.0 / (10 + i)}" for i in range(MIN_POINTS)]
    if "data points" in fragment:
        padding = []
    elif "does not exceed" not in fragment:
        lines = lines + padding  # valid points after the bad one: the error must name its line
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_table(path)
    assert fragment in str(info.value)
    assert "bad.csv" in str(info.value)


def test_missing_and_binary_files(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_table(tmp_path / "absent.csv")
    blob = tmp_path / "blob.bin"
    blob.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(InputError, match="cannot read it as text"):
        read_table(blob)


# ---------------------------------------------------------------- command line


def test_cli_table_matches_python(tmp_path):
    r = np.geomspace(1e-5, 400.0, 4000)
    path = write_table(tmp_path / "coulomb.csv", r / ANGSTROM_IN_BOHR, (-1.0 / r) / EV_IN_HARTREE)
    result = invoke("levels", "table", "--file", str(path), "--r-unit", "angstrom",
                    "--v-unit", "eV", "--inside", "coulomb:1", "--beyond", "zero",
                    "-k", "2", "-f", "csv")
    assert result.exit_code == 0, result.output
    energies = [float(line.split(",")[4]) for line in result.stdout.splitlines()[1:]]
    # Source: E = -1/(2 n^2) hartree (textbook formula).  The Coulomb rule's Z is in the
    # solve's units (-Z/r hartree bohr) whatever the file's units; V = 0 beyond 400 bohr
    # shifts 2s by less than exp(-200).  The spline's error there is below 1e-9 hartree.
    assert energies == pytest.approx([-0.5, -0.125], rel=1e-8)


def test_cli_bad_table_exits_2_naming_the_line(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("1,2\n2,oops\n", encoding="utf-8")
    result = invoke("levels", "table", "--file", str(path))
    assert result.exit_code == 2
    assert "line 2" in result.stderr and "Traceback" not in result.stderr + result.output
    result = invoke("levels", "table")
    assert result.exit_code == 2 and "needs --file" in result.stderr


def test_a_table_too_coarse_for_tol_says_so_instead_of_refining_in_vain():
    # Exponential well V = -V0 exp(-r/a): its s levels solve J_{2 kappa a}(2 a sqrt(2 mu V0)) = 0
    # (textbook formula).  A coarse cubic table knows V only to ~1e-6 relative, so a 1e-12
    # request cannot be met: the level is flagged, the message names the cause, and the
    # solver stops after a few grids; the value is still within the table's own error of
    # the exact level.  A fine table meets a tolerance above its interpolation error.
    V0, a = 12.5, 1.0
    x0 = 2 * a * np.sqrt(2 * V0)
    # the largest order nu with J_nu(x0) = 0 gives the ground state; scan for it
    nus = np.linspace(1e-3, x0, 4000)
    vals = jv(nus, x0)
    roots = [brentq(lambda nu: jv(nu, x0), nus[i], nus[i + 1])
             for i in range(len(nus) - 1) if vals[i] * vals[i + 1] < 0]
    exact = -(max(roots) / (2 * a)) ** 2 / 2
    r = np.linspace(0.0, 30.0, 120)
    coarse = radsolve.tabulated_potential((r, -V0 * np.exp(-r / a)), beyond="zero")
    result = radsolve.solve(coarse, l=0, count=1, tol=1e-12)
    lev = result.levels[0]
    assert not lev.converged
    assert "known less well than tol" in result.message
    assert len(lev.samples) <= 4
    bound = coarse.family.module.TABLE.interpolation_error()[0]
    assert abs(lev.energy - exact) <= 10 * bound
    fine_r = np.linspace(0.0, 30.0, 6000)
    fine = radsolve.tabulated_potential((fine_r, -V0 * np.exp(-fine_r / a)), beyond="zero")
    result = radsolve.solve(fine, l=0, count=1, tol=1e-8)
    assert result.success
    assert result.levels[0].energy == pytest.approx(exact, rel=1e-8)
