"""Binding thresholds (radsolve.analysis.thresholds) against published and exact critical values.

Outside references used here, each named again beside its test:

* Yukawa -exp(-r/D)/r, 1s: critical 1/D_c = 1.19061 bohr**-1 (Rogers,
  Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards et al.,
  arXiv:1706.09979 (2017) — from memory).
* Yukawa 2p: D_c = 4.5410 bohr (from memory: F. J. Rogers, H. C. Graboske,
  D. J. Harwood, Phys. Rev. A 1, 1577 (1970)); cross-checked here against
  bisection on radsolve.solve's own bound count, which is accurate for l >= 1
  because those states stay localized at threshold.
* Exponential well -V0 exp(-r/a), l = 0: the zero-energy solution is
  J0(2 a sqrt(2 mu V0) exp(-r/(2a))), so the k-th s level appears where
  2 a sqrt(2 mu V0) is the k-th zero of J0 (textbook formula; e.g. S. Flügge,
  Practical Quantum Mechanics (1971), the exponential-well problem, from
  memory); zeros from scipy.special.jn_zeros.
* Square well of depth V0 and radius R: a zero-energy state of angular
  momentum l exists when j_{l-1}(K R) = 0, K = sqrt(2 mu V0) (textbook
  formula; j_{-1}(x) = cos(x)/x); spherical Bessel functions from
  scipy.special.  For l >= 1, dE/dV0 at threshold is minus the probability
  inside the well (Hellmann-Feynman theorem, textbook), computed here from the
  exact zero-energy state with scipy.integrate.quad.
* Scaling (textbook): for V = -Z exp(-r/D)/r and reduced mass mu, r -> r/(mu Z)
  maps the problem onto mu = Z = 1, so D_c(mu, Z) = D_c(1, 1) / (mu Z).
* Nuclear units: the same square-well condition with K = sqrt(2 mu c**2 V0)/(hbar c),
  hbar c and the neutron mass from scipy.constants (CODATA).
* d dimensions (textbook): with L = l + (d-3)/2 the zero-energy state of a square
  well appears where J_{L-1/2}(K R) = 0; for d = 2, l = 1 that is J_0(K R) = 0.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import jn_zeros, spherical_jn

from plugin_sources import square_well_source
from radsolve.errors import InputError
from radsolve.core.spectrum import solve
from radsolve.potentials import potential
from radsolve.analysis.sweeps import sweep
from radsolve.analysis.thresholds import NoThresholdError, critical_values, parse_label, sweep_crossings, threshold

EXP_WELL = '''
import numpy as np
NAME = "exp_well_fixture"
PARAMETERS = {"depth": 1.0, "decay": 1.0}
def V(r, depth, decay):
    return -depth * np.exp(-r / decay)
def v_infinity(depth, decay):
    return 0.0
def small_r(depth, decay):
    return (-depth, 0.0)
'''

SQUARE_WELL = square_well_source("square_well_fixture", 1.0, 1.0)

POWER_TAIL = '''
import numpy as np
NAME = "power_tail_fixture"
PARAMETERS = {"strength": 1.0}
def V(r, strength):
    return -strength / (1.0 + r**2) ** 2
def v_infinity(strength):
    return 0.0
def small_r(strength):
    return (-strength, 0.0)
'''


@pytest.fixture(scope="module")
def plugin_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("threshold_plugins")
    (folder / "exp_well_fixture.py").write_text(EXP_WELL)
    (folder / "square_well_fixture.py").write_text(SQUARE_WELL)
    (folder / "power_tail_fixture.py").write_text(POWER_TAIL)
    return str(folder)


def test_yukawa_1s_critical_screening_matches_published_value():
    # 1/D_c = 1.19061 bohr**-1 for Z = 1, mu = 1 (Rogers, Graboske & Harwood, Phys. Rev. A 1,
    # 1577 (1970); also Edwards et al., arXiv:1706.09979 (2017) — from memory).
    res = threshold("yukawa", "screening_length", level="1s", bracket=(0.5, 1.5), tol=1e-10)
    assert res.converged
    assert abs(1.0 / res.value / 1.19061 - 1.0) <= 1e-5
    # The value is known far better than the table's six digits.
    assert res.error_estimate < 1e-9 * res.value
    assert res.bound_side == "above"  # bound for D > D_c
    assert res.slope is None and res.l == 0


def test_yukawa_2p_agrees_with_table_and_with_bisection_on_solve():
    # Rogers, Graboske, Harwood, Phys. Rev. A 1, 1577 (1970) (from memory): D_c(2p) = 4.5410 bohr.
    res = threshold("yukawa", "screening_length", level="2p", bracket=(3.0, 6.0))
    assert abs(res.value - 4.5410) < 2e-3
    # Independent cross-check: bisection on "is 2p bound?" with radsolve.solve ...
    def bound(d):
        return bool(solve(potential("yukawa", screening_length=d), l=1, count=1, tol=1e-7).levels)

    lo, hi = 3.0, 6.0
    while hi - lo > 0.03:
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if bound(mid) else (mid, hi)
    assert lo <= res.value <= hi
    # ... and closer in: unbound 0.1 % below the critical value, bound 0.1 % above.
    assert not bound(res.value * (1.0 - 1e-3))
    assert bound(res.value * (1.0 + 1e-3))


def test_exponential_well_s_thresholds_are_zeros_of_J0(plugin_dir):
    # Textbook: 2 a sqrt(2 mu V0) = j_{0,k} at the threshold of the k-th s level.
    zeros = jn_zeros(0, 3)
    results = critical_values("exp_well_fixture", "depth", levels=["1s", "2s", "3s"], bracket=(0.1, 20.0),
                         plugins=[plugin_dir], tol=1e-10)
    for k, res in enumerate(results):
        exact = zeros[k] ** 2 / 8.0  # mu = 1, a = 1
        assert res.converged
        assert abs(res.value - exact) <= max(5.0 * res.error_estimate, 1e-12 * exact)
        assert abs(res.value / exact - 1.0) < 1e-9


def _square_well_zero_energy_probability_inside(l: int, x: float) -> float:
    """Exact P(r < R) of the zero-energy l >= 1 state of a square well with K R = x (R = 1)."""
    inside = quad(lambda r: (r * spherical_jn(l, x * r)) ** 2, 0.0, 1.0, epsabs=1e-14, epsrel=1e-13)[0]
    # Outside u = C r**-l, continuous at R = 1: C = j_l(x); norm C**2 / (2l - 1).
    outside = spherical_jn(l, x) ** 2 / (2 * l - 1)
    return inside / (inside + outside)


@pytest.mark.parametrize("label, l", [("1s", 0), ("2p", 1), ("3d", 2), ("2s", 0)])
def test_square_well_thresholds_match_spherical_bessel_zeros(plugin_dir, label, l):
    # Textbook: zero-energy state when j_{l-1}(K R) = 0 (cos(KR) = 0 for l = 0).
    if l == 0:
        x = math.pi / 2 if label == "1s" else 1.5 * math.pi
    else:
        x = brentq(lambda t: spherical_jn(l - 1, t), 2.5 if l == 1 else 3.5, 4.0 if l == 1 else 5.0)
    exact = x**2 / 2.0
    res = threshold("square_well_fixture", "depth", level=label, bracket=(0.5 * exact, 1.5 * exact),
                    plugins=[plugin_dir])
    assert res.converged
    assert abs(res.value - exact) <= max(5.0 * res.error_estimate, 1e-11 * exact)
    if l >= 1:
        # Hellmann-Feynman: dE/dV0 = <dV/dV0> = -P(inside), with the exact zero-energy state.
        expected = -_square_well_zero_energy_probability_inside(l, x)
        assert abs(res.slope - expected) <= max(3.0 * res.slope_error, 1e-9)
        assert res.slope == pytest.approx(expected, rel=1e-6)


def test_threshold_scales_as_one_over_mass_times_charge():
    # Textbook scaling: D_c(mu, Z) = D_c(1, 1) / (mu Z).
    ref = threshold("yukawa", "screening_length", level="1s", bracket=(0.5, 1.5))
    heavy = threshold("yukawa", "screening_length", level="1s", mass=2.0, fixed={"Z": 3.0},
                      bracket=(0.05, 0.3))
    assert heavy.value * 6.0 == pytest.approx(ref.value, rel=1e-9)


def test_error_estimate_covers_a_tighter_computation(plugin_dir):
    # A power-law tail r**-4 converges slowly in the box; the reported estimate must
    # cover the change to a ten-thousand times tighter computation (common practice).
    loose = threshold("power_tail_fixture", "strength", level="1s", bracket=(0.5, 5.0),
                      plugins=[plugin_dir], tol=1e-6)
    tight = threshold("power_tail_fixture", "strength", level="1s", bracket=(0.5, 5.0),
                      plugins=[plugin_dir], tol=1e-10)
    assert tight.converged
    assert abs(loose.value - tight.value) <= loose.error_estimate + tight.error_estimate
    assert loose.box_error > 0.0


def test_automatic_bracket_finds_the_same_value():
    auto = threshold("yukawa", "screening_length", level="2s", fixed={"screening_length": 10.0})
    given = threshold("yukawa", "screening_length", level="2s", bracket=(2.0, 5.0))
    assert auto.value == pytest.approx(given.value, rel=1e-9)


def test_coulomb_tail_has_no_threshold():
    with pytest.raises(NoThresholdError, match="infinitely many"):
        threshold("coulomb", "Z", level="1s")
    with pytest.raises(NoThresholdError, match="infinitely many"):
        threshold("empty_core", "core_radius", level="1s", bracket=(0.5, 3.0))


def test_confining_potential_has_no_threshold():
    with pytest.raises(NoThresholdError, match="confining"):
        threshold("harmonic", "omega", level="1s")


def test_bracket_that_does_not_bracket_says_so():
    with pytest.raises(InputError, match=r"does not bracket.*bound at both ends.*1 and 1 bound levels"):
        threshold("yukawa", "screening_length", level="1s", bracket=(1.0, 2.0))
    with pytest.raises(InputError, match="empty"):
        threshold("yukawa", "screening_length", level="1s", bracket=(1.0, 1.0))


@pytest.mark.parametrize("kwargs, message", [
    (dict(parameter="depth"), "has no parameter 'depth'"),
    (dict(parameter="screening_length", level="2d"), "n must exceed l"),
    (dict(parameter="screening_length", level="1j"), "not an orbital letter"),
    (dict(parameter="screening_length", level="s1"), "not a level label"),
    (dict(parameter="screening_length", tol=0.5), "tol must be between"),
    (dict(parameter="screening_length", bracket=(-1.0, 2.0)), "must be > 0"),
])
def test_bad_input_is_named(kwargs, message):
    with pytest.raises(InputError, match=message):
        threshold("yukawa", **kwargs)


def test_labels_parse_to_n_and_l():
    assert parse_label("1s") == (1, 0)
    assert parse_label("4f") == (4, 3)
    assert parse_label("8k") == (8, 7)  # j is skipped: s p d f g h i k
    assert parse_label("25[l=23]") == (25, 23)


def test_critical_values_up_to_nmax_are_ordered_and_distinct():
    results = critical_values("yukawa", "screening_length", nmax=2, bracket=(0.5, 6.0))
    assert [r.label for r in results] == ["1s", "2s", "2p"]
    # Published order (Rogers et al. 1970, from memory): D_c(1s) < D_c(2s) < D_c(2p).
    values = [r.value for r in results]
    assert values == sorted(values)


NUCLEAR_SQUARE_WELL = square_well_source("nuclear_square_well_fixture", 10.0, 3.0, units="nuclear")


def test_nuclear_units_square_well(tmp_path):
    # Textbook condition K R = pi/2 with K = sqrt(2 mu c^2 V0)/(hbar c); CODATA via scipy.constants.
    from scipy import constants as const

    (tmp_path / "nuclear_square_well_fixture.py").write_text(NUCLEAR_SQUARE_WELL)
    res = threshold("nuclear_square_well_fixture", "depth", level="1s", mass="neutron",
                    plugins=[str(tmp_path)])
    hbar_c = const.hbar * const.c / (const.mega * const.e * const.femto)  # MeV fm
    mu = const.physical_constants["neutron mass energy equivalent in MeV"][0]
    exact = (math.pi / 2) ** 2 * hbar_c**2 / (2.0 * mu * 3.0**2)
    assert res.units == "nuclear" and res.energy_unit == "MeV"
    assert abs(res.value - exact) <= max(5 * res.error_estimate, 1e-10 * exact)
    # Nuclear labels count n = nodes + 1: the second p level is 2p, with one node.
    two_p = threshold("nuclear_square_well_fixture", "depth", level="2p", mass="neutron",
                      plugins=[str(tmp_path)], bracket=(50.0, 400.0))
    assert two_p.nodes == 1
    x = brentq(lambda t: spherical_jn(0, t), 5.0, 7.0)  # second zero of j_0: 2 pi
    assert two_p.value == pytest.approx(x**2 * hbar_c**2 / (2.0 * mu * 9.0), rel=1e-9)


def test_two_dimensions(plugin_dir):
    # Textbook: in d = 2 the l = 1 zero-energy state of a square well appears at J_0(K R) = 0.
    res = threshold("square_well_fixture", "depth", level="2p", plugins=[plugin_dir], dimension=2,
                    bracket=(1.0, 5.0))
    assert res.value == pytest.approx(jn_zeros(0, 1)[0] ** 2 / 2.0, rel=1e-9)
    assert res.approach.startswith("linear up to a logarithm")
    with pytest.raises(NoThresholdError, match="any net"):
        threshold("square_well_fixture", "depth", level="1s", plugins=[plugin_dir], dimension=2)


def test_spin_orbit_labels_need_a_spin_orbit_term():
    with pytest.raises(InputError, match="no spin-orbit term"):
        threshold("yukawa", "screening_length", level="2p3/2")
    with pytest.raises(InputError, match="j = 5/2 is not allowed for l = 1"):
        threshold("yukawa", "screening_length", level="2p5/2")


def test_sweep_crossings_refine_the_sweep_brackets():
    # 1/D_c(1s) = 1.19061 (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards
    # et al., arXiv:1706.09979 (2017) — from memory); D_c(2p) = 4.5410 (Rogers et al. 1970, from memory).
    res = sweep("yukawa", vary={"screening_length": [0.6, 1.0, 3.0, 5.0]}, l=[0, 1], count=1, tol=1e-7,
                workers=1)
    found = sweep_crossings(res)
    assert set(found) == {"1s", "2p"}
    assert abs(1.0 / found["1s"].value / 1.19061 - 1.0) < 1e-5
    assert abs(found["2p"].value - 4.5410) < 2e-3
    coulomb = sweep("coulomb", vary={"Z": [0.5, 1.0]}, count=1, tol=1e-7, workers=1)
    assert sweep_crossings(coulomb) == {}


# ----------------------------------------------------- cases that failed in the first release


def _zero_energy_growth(depth: float, l: int, dimension: int, width: float = 1.5) -> float:
    """The coefficient of the solution that dominates far out, for u0 of -depth exp(-(r/width)**2).

    Independent of radsolve: scipy's solve_ivp (DOP853) on u'' = [L(L+1)/r**2 + 2 V] u from
    u ~ r**(L+1) at r = 1e-6 to r = 12 width, where V is below 1e-60 of its depth; there u0 is
    A r**(L+1) + B r**-L (A = (r u' + L u) / ((2L+1) r**(L+1))), or for L = -1/2,
    sqrt(r) (A ln r + B) (A = r (u / sqrt r)').  The threshold of the level with k nodes is
    the zero of A where the node count changes from k to k + 1 (textbook oscillation theory).
    """
    from scipy.integrate import solve_ivp

    L = l + (dimension - 3) / 2.0

    def rhs(r, y):
        v = -depth * math.exp(-((r / width) ** 2))
        return [y[1], (L * (L + 1) / r**2 + 2.0 * v) * y[0]]

    r0, r1 = 1e-6, 12.0 * width
    sol = solve_ivp(rhs, (r0, r1), [r0 ** (L + 1), (L + 1) * r0**L], method="DOP853",
                    rtol=1e-12, atol=1e-300)
    u, du = sol.y[0, -1], sol.y[1, -1]
    if abs(L + 0.5) < 1e-12:
        return r1 * (du / math.sqrt(r1) - 0.5 * u / r1**1.5)
    return (r1 * du + L * u) / ((2 * L + 1) * r1 ** (L + 1))


def _critical_depth(l: int, dimension: int, lo: float, hi: float) -> float:
    return brentq(lambda d: _zero_energy_growth(d, l, dimension), lo, hi, xtol=1e-14, rtol=1e-13)


def test_readme_plug_in_3d_threshold_against_an_independent_integration():
    # The README's gauss_well plug-in for 3d raised an internal error in the first release.
    from pathlib import Path

    fixtures = Path(__file__).parent / "plugins_fixture"
    res = threshold("gauss_well", "depth", level="3d", plugins=[str(fixtures)], tol=1e-9)
    exact = _critical_depth(2, 3, 1.0, 12.0)
    assert res.converged
    assert abs(res.value - exact) <= max(10 * res.error_estimate, 1e-9 * exact), (res.value, exact)


@pytest.mark.parametrize("label, k, bracket", [("2s", 1, (2.0, 4.0)), ("3s", 2, (6.0, 10.0))])
def test_two_dimensional_s_thresholds_beyond_the_first(tmp_path, label, k, bracket):
    # In 2D the first s level is bound by any attraction; the next ones have thresholds
    # (refused as "any attraction binds" in the first release).
    (tmp_path / "w2d.py").write_text(
        "import numpy as np\nNAME = 'w2d'\nPARAMETERS = {'depth': 5.0}\n"
        "def V(r, depth):\n    return -depth * np.exp(-(r / 1.5) ** 2)\n")
    res = threshold("w2d", "depth", level=label, plugins=[str(tmp_path)], dimension=2,
                    bracket=bracket, tol=1e-9)
    exact = _critical_depth(0, 2, *bracket)
    assert res.converged
    assert abs(res.value - exact) <= max(10 * res.error_estimate, 1e-9 * exact), (res.value, exact)
    with pytest.raises(NoThresholdError, match="lowest s level"):
        threshold("w2d", "depth", level="1s", plugins=[str(tmp_path)], dimension=2)


def test_square_well_slope_without_a_bracket(plugin_dir):
    # Searched from the default depth, the bracket reached depth 0 (no length scale
    # at all) and the slope came out as -1e-38; it is -P(r < R) of the zero-energy
    # state (Hellmann-Feynman; closed form above), -1/3 for the 2p level.
    res = threshold("square_well_fixture", "depth", level="2p", plugins=[plugin_dir])
    x = math.pi  # j_0(K R) = 0
    assert res.value == pytest.approx(x**2 / 2, rel=1e-9)
    assert res.slope == pytest.approx(-_square_well_zero_energy_probability_inside(1, x), rel=1e-6)
    assert res.slope == pytest.approx(-1.0 / 3.0, rel=1e-6)
