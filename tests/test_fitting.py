"""Fits to target levels (radsolve.analysis.fitting): round trips, uncertainties, spurious states, targets files.

The round-trip tests are SELF-CONSISTENCY tests (no outside value is
involved): levels computed by radsolve for known parameters, given
uncertainties, are fitted back, and the fit must return those parameters
within its reported standard errors.  The statistical expectations used
(a parameter estimate lies within a few standard errors of the truth; the
covariance of a weighted linear least-squares fit is (J^T J)^-1) are common
practice (e.g. Press et al., Numerical Recipes, 3rd ed. (2007), ch. 15).

Outside references:

* Unit factors: CODATA via scipy.constants (electron volt-hartree and
  inverse meter-hartree relationships).
* Yukawa 2s critical screening: D_c = 3.2236 bohr for Z = 1 (Rogers,
  Graboske, Harwood, Phys. Rev. A 1, 1577 (1970), from memory), used to pick a
  potential that binds 2s below a 2p target.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.constants import physical_constants

from radsolve.errors import InputError
from radsolve.analysis.fitting import fit, parse_free, read_targets
from radsolve.potentials import potential
from radsolve.core.spectrum import solve

TRUE = {"Z": 2.0, "screening_length": 3.0}  # a Debye-screened He+-like ion (demo values)
SIGMA = 1e-4  # hartree


@pytest.fixture(scope="module")
def true_levels():
    res = solve(potential("yukawa", **TRUE), l=[0, 1], count=2, tol=1e-11)
    return {lev.label: lev.energy for lev in res.levels}  # 1s, 2s, 2p (3s, 3p unbound)


def test_round_trip_self_consistency(true_levels):
    # Self-consistency: noise-free targets from radsolve are fitted back to the truth.
    targets = [(label, e, SIGMA) for label, e in true_levels.items()]
    res = fit("yukawa", targets, free=["Z", "screening_length"], fixed={"Z": 1.5, "screening_length": 5.0},
              tol=1e-10)
    assert res.success
    for key, value in TRUE.items():
        assert abs(res.values[key] - value) < 1e-3 * res.standard_errors[key]
    assert res.chi2 < 1e-6
    assert res.dof == len(targets) - 2
    assert not res.spurious


def test_round_trip_with_noise_self_consistency(true_levels):
    # Self-consistency with Gaussian noise of the stated size added to the targets:
    # the truth must lie within 3 standard errors (fixed seed, so the test is deterministic).
    rng = np.random.default_rng(20240611)
    sigma = np.array([2e-3, 5e-4, 5e-4])
    labels = list(true_levels)
    targets = [(lab, true_levels[lab] + s * rng.standard_normal(), s) for lab, s in zip(labels, sigma)]
    res = fit("yukawa", targets, free=["Z", "screening_length"], fixed={"Z": 1.5, "screening_length": 5.0})
    for key, value in TRUE.items():
        assert abs(res.values[key] - value) < 3.0 * res.standard_errors[key]
    # The standard errors follow the target uncertainties linearly (common practice):
    # halving every uncertainty halves them.
    half = fit("yukawa", [(lab, e, s / 2) for lab, e, s in targets], free=["Z", "screening_length"],
               fixed={"Z": 1.5, "screening_length": 5.0})
    for key in TRUE:
        assert half.standard_errors[key] == pytest.approx(res.standard_errors[key] / 2, rel=1e-3)
        assert half.values[key] == pytest.approx(res.values[key], rel=1e-7)
    # chi2 is the sum of the squared residuals; the scaled errors follow from it.
    assert res.chi2 == pytest.approx(sum(r.residual**2 for r in res.residuals), rel=1e-9)
    scale = np.sqrt(res.chi2 / res.dof)
    for key in TRUE:
        assert res.scaled_standard_errors[key] == pytest.approx(res.standard_errors[key] * scale, rel=1e-12)


def test_correlation_matrix_is_a_correlation_matrix(true_levels):
    targets = [(label, e, SIGMA) for label, e in true_levels.items()]
    res = fit("yukawa", targets, free=["Z", "screening_length"], fixed={"Z": 1.8, "screening_length": 4.0})
    c = res.correlation
    assert np.allclose(c, c.T)
    assert np.allclose(np.diag(c), 1.0)
    assert np.all(np.abs(c) <= 1.0 + 1e-12)
    # Raising Z deepens every level, as does lengthening D: the two trade off in the binding.
    # Derivation: by Hellmann-Feynman (textbook), dE/dZ = -<exp(-r/D)/r> < 0 and
    # dE/dD = -Z <exp(-r/D)>/D**2 < 0 for every level, so the off-diagonal element of
    # M = J^T W J is sum_i w_i (dE_i/dZ)(dE_i/dD) > 0; the covariance is M^-1 (linearized
    # least squares, textbook), and the off-diagonal of a 2x2 inverse is -M_01/det M < 0.
    assert c[0, 1] < 0


def test_spurious_state_below_the_highest_target_is_reported(true_levels):
    # Only 1s and 2p are targets; at D = 3 bohr, Z = 2 (D Z = 6 > 3.2236, Rogers et al. 1970)
    # the fitted potential also binds 2s, below 2p: a possible spurious state.
    targets = [("1s", true_levels["1s"], SIGMA), ("2p", true_levels["2p"], SIGMA)]
    res = fit("yukawa", targets, free=["screening_length"], fixed={"Z": 2.0, "screening_length": 4.0})
    assert [lab for lab, _ in res.spurious] == ["2s"]
    assert res.spurious[0][1] == pytest.approx(true_levels["2s"], rel=1e-8)
    assert any("spurious" in w and "2s" in w for w in res.warnings)


def test_parameter_at_a_bound_is_flagged(true_levels):
    targets = [(label, e, SIGMA) for label, e in true_levels.items()]
    res = fit("yukawa", targets, free=["screening_length"], bounds={"screening_length": (3.5, 10.0)},
              fixed={"Z": 2.0, "screening_length": 5.0})
    assert res.values["screening_length"] == pytest.approx(3.5, rel=1e-6)
    assert any("at a bound" in w for w in res.warnings)


def test_targets_file_units_and_comments(tmp_path):
    # CODATA via scipy.constants.
    ev = physical_constants["electron volt-hartree relationship"][0]
    per_cm = physical_constants["inverse meter-hartree relationship"][0] * 100.0
    path = tmp_path / "t.csv"
    path.write_text("# demo values\nLabel,Energy,Uncertainty,Unit,note\n"
                    "1s,-13.6,0.1,eV,a\n2p,-27000,5,cm-1,b\n3d,-0.05,0.001,hartree,c\n")
    targets = read_targets(path)
    assert [t.label for t in targets] == ["1s", "2p", "3d"]
    assert targets[0].energy == pytest.approx(-13.6 * ev, rel=1e-14)
    assert targets[1].uncertainty == pytest.approx(5 * per_cm, rel=1e-14)
    assert (targets[2].n, targets[2].l, targets[2].nodes) == (3, 2, 0)


@pytest.mark.parametrize("text, message", [
    ("label,energy,unit\n1s,-0.5,hartree\n", r"missing column\(s\) uncertainty"),
    ("label,energy,uncertainty,unit\n1s,-0.5,0.01,furlong\n", r"line 2: .*unknown energy unit"),
    ("label,energy,uncertainty,unit\n1s,-0.5,0.01,hartree\n2s,abc,0.01,hartree\n",
     r"line 3: energy 'abc' is not a number"),
    ("label,energy,uncertainty,unit\n1s,-0.5,0,hartree\n", r"line 2: uncertainty must be > 0"),
    ("label,energy,uncertainty,unit\n1s,-0.5,,hartree\n", r"line 2: the uncertainty cell is empty"),
    ("label,energy,uncertainty,unit\n2d,-0.5,0.1,hartree\n", r"line 2: label '2d'.*n must exceed l"),
    ("label,energy,uncertainty,unit\n1s,-0.5,0.1,hartree\n1s,-0.4,0.1,hartree\n", "given twice"),
    ("label,energy,uncertainty,unit\n", "no rows"),
    ("", "empty"),
])
def test_bad_targets_files_name_the_line(tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(InputError, match=message):
        read_targets(path)


def test_missing_targets_file(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        read_targets(tmp_path / "nope.csv")


@pytest.mark.parametrize("kwargs, message", [
    (dict(free=["depth"]), "no such parameter"),
    (dict(free=[]), "at least one parameter"),
    (dict(free=["Z", "Z"]), "named twice"),
    (dict(free=["Z"], bounds={"screening_length": (1, 2)}), "not a free parameter"),
    (dict(free=["Z"], bounds={"Z": (3, 2)}), "must be below"),
    (dict(free=["Z"], bounds={"Z": (3, 4)}), "outside its bounds"),
    (dict(free=["Z", "screening_length"], targets=[("1s", -0.3, 0.01)]), "cannot determine 2 free"),
    (dict(free=["Z"], targets=[("1s", 0.3, 0.01)]), "not below the continuum threshold"),
])
def test_bad_fit_input(kwargs, message):
    kwargs.setdefault("targets", [("1s", -0.3, 0.01), ("2p", -0.01, 0.01)])
    with pytest.raises(InputError, match=message):
        fit("yukawa", tol=1e-8, **kwargs)


def test_parse_free():
    assert parse_free("Z") == ("Z", None)
    assert parse_free("screening_length:1angstrom:") == ("screening_length", ("1angstrom", None))
    with pytest.raises(InputError, match="KEY:LO:HI"):
        parse_free("Z:1")


SPIN_ORBIT_OSCILLATOR = '''
import numpy as np
NAME = "fit_oscillator_with_constant_ls"
PARAMETERS = {"omega": 1.0, "ls": 0.1}
def V(r, omega, ls):
    return 0.5 * omega**2 * r**2
def spin_orbit(r, omega, ls):
    return np.full_like(r, ls)
def small_r(omega, ls):
    return (0.0, 0.0)
'''


def test_fit_spin_orbit_levels_to_exact_oscillator_values(tmp_path):
    # Textbook: E = omega (2 nodes + l + 3/2) + c <l.s>, <l.s> = l/2 (j = l + 1/2),
    # -(l + 1)/2 (j = l - 1/2); targets from that formula for omega = 0.8, c = 0.03.
    (tmp_path / "fit_oscillator_with_constant_ls.py").write_text(SPIN_ORBIT_OSCILLATOR)
    omega, c = 0.8, 0.03

    def exact(nodes, l, j):
        return omega * (2 * nodes + l + 1.5) + c * (l / 2 if j > l else -(l + 1) / 2)

    targets = [("1s1/2", exact(0, 0, 0.5), 1e-4), ("2p1/2", exact(0, 1, 0.5), 1e-4),
               ("2p3/2", exact(0, 1, 1.5), 1e-4), ("3d5/2", exact(0, 2, 2.5), 1e-4)]
    res = fit("fit_oscillator_with_constant_ls", targets, free=["omega", "ls"], plugins=[str(tmp_path)])
    assert res.values["omega"] == pytest.approx(omega, abs=1e-3 * res.standard_errors["omega"])
    assert res.values["ls"] == pytest.approx(c, abs=1e-3 * res.standard_errors["ls"])
    # Confining: every level exists; 2s1/2 lies at 3.5 omega = 2.8, below 3d5/2 (2.86): spurious.
    assert [lab for lab, _ in res.spurious] == ["2s1/2", "3d3/2"]
    with pytest.raises(InputError, match="give j for every target"):
        fit("fit_oscillator_with_constant_ls", targets[:2] + [("2p", 2.0, 1e-3)], free=["omega"],
            plugins=[str(tmp_path)])


# ---------------------------------------------------------------- the Jacobian
# With one free parameter and one target, the standard error is
# uncertainty / |dE/dp| (covariance (J^T J)^-1), so it shows the Jacobian the fit used.
# The Hellmann-Feynman Jacobian is that of the finest grid's energies: good to that grid's
# discretization error (~1e-6 relative), far more than a standard error needs.

def test_jacobian_of_coulomb_levels_against_the_exact_derivative():
    # E = -Z**2 / (2 n**2), dE/dZ = -Z / n**2 (textbook formula); Hellmann-Feynman path.
    z, unc = 1.7, 1e-4
    for label, n in (("1s", 1), ("3d", 3)):
        res = fit("coulomb", [(label, -z**2 / (2 * n**2), unc)], free=["Z"], fixed={"Z": 1.5}, tol=1e-10)
        assert res.success, res.message
        assert res.values["Z"] == pytest.approx(z, rel=1e-9)
        assert res.standard_errors["Z"] == pytest.approx(unc / (z / n**2), rel=1e-5)


def test_jacobian_of_oscillator_levels_against_the_exact_derivative():
    # E = omega (2 n_r + l + 3/2), dE/domega = 2 n_r + l + 3/2 (textbook formula); 3p: n_r = 1, l = 1.
    omega, unc = 0.8, 1e-5
    res = fit("harmonic", [("3p", omega * (2 * 1 + 1 + 1.5), unc)], free=["omega"], fixed={"omega": 1.0},
              tol=1e-10)
    assert res.success, res.message
    assert res.values["omega"] == pytest.approx(omega, rel=1e-9)
    assert res.standard_errors["omega"] == pytest.approx(unc / 4.5, rel=1e-5)


def _empty_core_1s(valence: float, core_radius: float) -> float:
    # Independent reference: u = sinh(kappa r) inside (V = 0), the Whittaker function
    # W_{Z/kappa, 1/2}(2 kappa r) outside (V = -Z/r), log-derivatives matched at r_c (textbook
    # construction; mpmath whitw), solved for kappa with mpmath findroot.
    import mpmath as mp

    mp.mp.dps = 30

    def mismatch(kappa):
        outside = lambda r: mp.whitw(valence / kappa, mp.mpf(1) / 2, 2 * kappa * r)
        return kappa / mp.tanh(kappa * core_radius) - mp.diff(outside, core_radius) / outside(core_radius)

    kappa = mp.findroot(mismatch, 0.63)
    return float(-kappa**2 / 2)


def test_jacobian_falls_back_to_differences_where_the_parameter_moves_a_breakpoint():
    # dV/d(core_radius) of the empty core is a delta at r_c, which no grid carries: the fit
    # must difference energies instead.  Reference derivative: central differences of the
    # independent mpmath energies above.
    rc, unc, h = 1.7, 1e-6, 1e-4
    energy = _empty_core_1s(1.0, rc)
    slope = (_empty_core_1s(1.0, rc + h) - _empty_core_1s(1.0, rc - h)) / (2 * h)
    res = fit("empty_core", [("1s", energy, unc)], free=["core_radius"], fixed={"core_radius": 1.5}, tol=1e-10)
    assert res.success, res.message
    assert res.values["core_radius"] == pytest.approx(rc, rel=1e-6)
    assert res.standard_errors["core_radius"] == pytest.approx(unc / abs(slope), rel=1e-4)
