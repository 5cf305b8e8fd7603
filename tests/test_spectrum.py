"""Behaviour of the front door solve(): labels, counts, states, refusals.

Sources:
- Coulomb energies -mu Z**2/(2 n**2), oscillator energies (textbook formulas).
- Oscillator plus inverse-square term V = w**2 r**2/2 + g/r**2: with
  L(L+1) = l(l+1) + 2 mu g the levels are E = (2 n_r + L + 3/2) w/sqrt(mu)
  (textbook formula, the radial equation keeps its form with l -> L).
- Sturm oscillation theorem: the k-th level of a radial problem has k
  interior nodes (textbook).
- Critical screening of the Yukawa 1s level, D_c = 0.8399 bohr (Rogers,
  Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); also Edwards et al.,
  arXiv:1706.09979 (2017) — from memory), used only to choose screening
  lengths safely on either side.
- 2D hydrogen E = -Z**2 / (2 (n - 1/2)**2) (textbook formula).
- Gaussian well levels: an independent solve_ivp shooting (scipy, DOP853 outward
  from small r with u ~ r**(l+1), node count and brentq on u(r_max) = 0).
"""

import textwrap

import numpy as np
import pytest

import radsolve
from independent_shooting import shooting_energy
from radsolve.errors import InputError, UnboundedBelowError


def _sign_changes(u, r, level):
    # ignore the rounding-level tails beyond the classically relevant region
    big = np.abs(u) > 1e-8 * np.max(np.abs(u))
    s = np.sign(u[big])
    return int(np.count_nonzero(s[1:] != s[:-1]))


@pytest.mark.parametrize("method", ["fd", "numerov"])
def test_states_are_normalized_positive_at_origin_with_k_nodes(method):
    result = radsolve.solve("coulomb", l=[0, 1, 2], count=4, method=method)
    for lev in result.levels:
        s = lev.samples[-1]
        assert np.sum(s.weights * s.u**2) == pytest.approx(1.0, abs=1e-12)
        first = np.nonzero(np.abs(s.u) > 1e-6 * np.max(np.abs(s.u)))[0][0]
        assert s.u[first] > 0
        assert _sign_changes(s.u, s.r, lev) == lev.nodes  # Sturm oscillation theorem
        assert lev.n == lev.nodes + lev.l + 1


def test_hydrogen_1s_wavefunction_against_closed_form():
    # u_1s = 2 r exp(-r) for Z = 1 (textbook formula)
    # The stored u is the finest grid's own (second-order in the step for fd):
    # its error must be small and fall by ~4 per halving.
    lev = radsolve.solve("coulomb", l=0, count=1).levels[0]
    errors = []
    for s in lev.samples[-2:]:
        mask = (s.r > 1e-3) & (s.r < 20)
        errors.append(np.max(np.abs(s.u[mask] - 2 * s.r[mask] * np.exp(-s.r[mask]))))
    assert errors[-1] < 1e-5
    assert 3.0 < errors[0] / errors[1] < 5.0


def test_refinement_samples_are_nested_grids():
    lev = radsolve.solve("coulomb", l=1, count=2).levels[0]
    assert len(lev.samples) >= 3
    for coarse, fine in zip(lev.samples, lev.samples[1:]):
        assert fine.step == pytest.approx(coarse.step / 2)
        assert np.allclose(fine.r[::2], coarse.r, rtol=1e-13, atol=0)


def test_labels_beyond_f():
    result = radsolve.solve("coulomb", l=[4, 5, 6, 7], count=1)
    assert [lev.label for lev in result.levels] == ["5g", "6h", "7i", "8k"]


def test_fewer_bound_than_asked_returns_the_bound_ones_and_says_so():
    # Z = 1, D = 2 bohr: only the 1s level is bound for l = 0 (critical D of
    # 2s is ~3.2 bohr; Rogers et al. 1970, from memory), none for l = 1
    # (2p needs D > ~4.5 bohr, from memory).
    result = radsolve.solve(radsolve.potential("yukawa", Z=1, screening_length=2.0), l=[0, 1], count=4)
    assert [lev.label for lev in result.levels] == ["1s"]
    assert result.bound_counts == {0: 1, 1: 0}
    assert "no bound level for l=1" in result.message
    assert "fewer bound levels than the 4 asked" in result.message
    assert result.success


def test_no_bound_state_is_an_empty_result_with_a_message():
    pot = radsolve.potential("yukawa", Z=1, screening_length=0.5)  # below D_c = 0.84 bohr
    result = radsolve.solve(pot, l=0, count=3)
    assert result.levels == []
    assert result.message.startswith("no bound state")


GAUSS_WELL_PLUGIN = textwrap.dedent('''
    import numpy as np
    NAME = "gauss_well"
    PARAMETERS = {"depth": 2.0, "width": 1.5}   # defaults, atomic units
    def V(r, depth, width):
        return -depth * np.exp(-(r / width) ** 2)
''')


def test_minimal_plugin_without_metadata_both_methods_agree(tmp_path):
    # Internal consistency of the two methods (fd vs numerov); the outside reference
    # for this plug-in is test_gauss_well_plugin_against_independent_shooting.
    (tmp_path / "gauss_well.py").write_text(GAUSS_WELL_PLUGIN)
    pot = radsolve.potential("gauss_well", plugins=[str(tmp_path)])
    result = radsolve.solve(pot, l=[0, 1, 2], count=6, method="both")
    assert result.success and result.levels
    assert all(lev.energy < 0 for lev in result.levels)
    for lev in result.levels:
        fd, nu = lev.method_energies["fd"], lev.method_energies["numerov"]
        assert abs(fd - nu) <= lev.error_estimate
        assert lev.relative_error_estimate <= 1e-10


def test_gauss_well_plugin_against_independent_shooting(tmp_path):
    # Source: independent solve_ivp shooting (scipy), shooting_energy above.  The default
    # well (depth 2, width 1.5) binds a single s level and no p level, so a deeper well
    # (depth 4) is solved too for the lowest p level (label 2p in atomic units).  Beyond
    # r_max = 40 bohr both the well (e^-711) and these levels (e^-2 kappa r_max < e^-50)
    # are negligible, far below the 1e-8 relative asked.
    (tmp_path / "gauss_well.py").write_text(GAUSS_WELL_PLUGIN)
    cases = [(2.0, 0, "1s"), (4.0, 0, "1s"), (4.0, 1, "2p")]
    for depth, l, label in cases:
        pot = radsolve.potential("gauss_well", plugins=[str(tmp_path)], depth=depth)
        lev = radsolve.solve(pot, l=l, count=1, method="both").level(label)
        reference = shooting_energy(lambda r: -depth * np.exp(-(r / 1.5) ** 2), l, 0,
                                    -depth, -1e-3, 40.0)
        assert lev.nodes == 0 and lev.converged
        assert lev.energy == pytest.approx(reference, rel=1e-8), (depth, label)


def test_inverse_square_term_changes_the_origin_exponent(tmp_path):
    (tmp_path / "oscillator_with_core.py").write_text(textwrap.dedent('''
        NAME = "oscillator_with_core"
        PARAMETERS = {"omega": 1.0, "g": 0.3}
        def V(r, omega, g):
            return 0.5 * omega**2 * r**2 + g / r**2
    '''))
    omega, g = 1.0, 0.3
    pot = radsolve.potential("oscillator_with_core", plugins=[str(tmp_path)], omega=omega, g=g)
    for method in ("fd", "numerov"):
        result = radsolve.solve(pot, l=[0, 1], count=3, method=method)
        for lev in result.levels:
            L = -0.5 + np.sqrt((lev.l + 0.5) ** 2 + 2 * g)  # L(L+1) = l(l+1) + 2 mu g
            exact = (2 * lev.nodes + L + 1.5) * omega  # textbook formula
            assert lev.energy == pytest.approx(exact, rel=1e-9), (method, lev.label)


def test_subcritical_attractive_inverse_square_is_solved(tmp_path):
    # V = w^2 r^2/2 - g/r^2 with 2 mu g < 1/4 for l = 0: still bounded below;
    # same closed form with L(L+1) = l(l+1) - 2 mu g (textbook formula).
    (tmp_path / "oscillator_with_pit.py").write_text(textwrap.dedent('''
        NAME = "oscillator_with_pit"
        PARAMETERS = {"g": 0.1}
        def V(r, g):
            return 0.5 * r**2 - g / r**2
    '''))
    g = 0.1
    pot = radsolve.potential("oscillator_with_pit", plugins=[str(tmp_path)], g=g)
    result = radsolve.solve(pot, l=0, count=2, tol=1e-8)
    for lev in result.levels:
        L = -0.5 + np.sqrt(0.25 - 2 * g)
        assert lev.energy == pytest.approx(2 * lev.nodes + L + 1.5, rel=1e-7)


def test_fall_to_centre_is_refused(tmp_path):
    (tmp_path / "pit.py").write_text(textwrap.dedent('''
        NAME = "pit"
        PARAMETERS = {"g": 1.0}
        def V(r, g):
            return -g / r**2
    '''))
    pot = radsolve.potential("pit", plugins=[str(tmp_path)])
    with pytest.raises(UnboundedBelowError, match="fall to the centre"):
        radsolve.solve(pot, l=0)
    # 2 mu g = 2 < (l + 1/2)**2 = 2.25 for l = 1: allowed (and nothing is bound)
    assert radsolve.solve(pot, l=1).levels == []


def test_more_singular_than_inverse_square_is_refused(tmp_path):
    (tmp_path / "deep.py").write_text(textwrap.dedent('''
        NAME = "deep"
        PARAMETERS = {"g": 1.0}
        def V(r, g):
            return -g / r**3
    '''))
    pot = radsolve.potential("deep", plugins=[str(tmp_path)])
    with pytest.raises(UnboundedBelowError, match="unbounded below"):
        radsolve.solve(pot, l=3)


def test_potential_tending_to_a_constant(tmp_path):
    # V = c - Z/r: every level is the Coulomb one shifted by c (textbook)
    (tmp_path / "lifted.py").write_text(textwrap.dedent('''
        NAME = "lifted"
        PARAMETERS = {"c": 0.25}
        def V(r, c):
            return c - 1.0 / r
    '''))
    pot = radsolve.potential("lifted", plugins=[str(tmp_path)])
    result = radsolve.solve(pot, l=0, count=3)
    assert result.v_infinity == pytest.approx(0.25)
    for lev in result.levels:
        assert lev.energy == pytest.approx(0.25 - 0.5 / lev.n**2, rel=1e-10)


def test_two_dimensional_hydrogen():
    result = radsolve.solve("coulomb", l=[0, 1, 2], count=3, dimension=2, method="both")
    assert result.dimension == 2
    for lev in result.levels:
        exact = -1.0 / (2 * (lev.n - 0.5) ** 2)  # textbook formula
        assert abs(lev.energy - exact) / abs(exact) <= 1e-10, lev.label
        assert lev.exact is None  # the 3D exact hook does not apply in 2D
        assert lev.degeneracy == (1 if lev.l == 0 else 2)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(l=-1), "l must be >= 0"),
        (dict(count=0), "count must be"),
        (dict(tol=0.0), "tol must be between"),
        (dict(tol=float("nan")), "tol must be between"),
        (dict(method="shooting"), "unknown method"),
        (dict(dimension=1), "dimension must be"),
        (dict(mass=-1.0), "mass"),
        (dict(mass="electron+unobtainium"), "unobtainium"),
        (dict(spin_orbit=True), "no spin-orbit term"),
        (dict(units="imperial"), "unknown unit system"),
        (dict(units="nuclear"), "atomic units"),
    ],
)
def test_bad_arguments_raise_input_errors_naming_the_input(kwargs, match):
    with pytest.raises(InputError, match=match):
        radsolve.solve("coulomb", **kwargs)


@pytest.mark.parametrize("l, excess", [(1, 1e-7), (1, 1e-5), (1, 1e-4), (2, 1e-7), (2, 1e-4)])
def test_square_well_just_past_binding_is_never_certified_empty(l, excess):
    # An l >= 1 square well binds its first level when k0 a passes the first zero of
    # j_(l-1) (pi for l = 1, 4.4934 for l = 2; textbook formula).  Just past it the
    # zero-energy solution's growing part beyond the well is tiny and the grids once
    # flipped its sign on two grids alike: "no bound state", certain.  The count must
    # be 1, or say it is uncertain; where it is certain and the level converges, the
    # energy matches the spherical-Bessel matching condition (textbook formula).
    import math
    from scipy import optimize, special
    from radsolve.potentials import make_family

    root = optimize.brentq(lambda x: special.spherical_jn(l - 1, x), 3.0, 5.0) if l > 1 else math.pi
    V0 = (root * (1 + excess)) ** 2 / 2  # radius 1, mass 1
    family = make_family("edge_well", lambda r: np.where(np.asarray(r) < 1.0, -V0, 0.0), {},
                         breakpoints=lambda: [1.0])
    res = radsolve.solve(family.bind(), l=l, count=1, tol=1e-10)
    cert = res.certificates[l]
    assert cert.count == 1 or not cert.certain, cert
    for lev in res.levels:
        if lev.converged or lev.status.value == "rounding floor":
            kappa_match = lambda E: (math.sqrt(2 * (E + V0)) * special.spherical_jn(l, math.sqrt(2 * (E + V0)), True)
                                     * special.spherical_kn(l, math.sqrt(-2 * E))
                                     - math.sqrt(-2 * E) * special.spherical_kn(l, math.sqrt(-2 * E), True)
                                     * special.spherical_jn(l, math.sqrt(2 * (E + V0))))
            exact = optimize.brentq(kappa_match, -0.5 * V0, -1e-14, xtol=1e-300, rtol=1e-15)
            assert abs(lev.energy - exact) <= max(10 * lev.error_estimate, 1e-9 * abs(exact)), (lev, exact)


@pytest.mark.parametrize("orders", [(2, 4, 6), (4, 6, 8)])
def test_next_grid_predictions_are_exact_for_the_error_series_they_assume(orders):
    # Values c0 + c1 h**p1 + c2 h**p2 on steps 4, 2, 1 determine the value at h = 1/2 exactly
    # (interpolation by the same three functions; textbook), and on steps 2, 1 the two-term law.
    from radsolve.core.spectrum import _predictions

    def value(h, terms):
        return -0.5 + sum(c * h**p for c, p in zip((0.3, -0.7)[:terms], orders))

    def history(steps, terms):
        return [[(value(h, terms), None, None, 1.0)] for h in steps]

    predicted, peaks = _predictions(history([4.0, 2.0, 1.0], 2), 0.0, orders)
    assert predicted[0] == pytest.approx(value(0.5, 2), rel=1e-14) and peaks == [1.0]
    predicted, _ = _predictions(history([2.0, 1.0], 1), 0.0, orders)
    assert predicted[0] == pytest.approx(value(0.5, 1), rel=1e-14)
    # one grid: its own value; none: no prediction
    assert _predictions(history([1.0], 1), 0.0, orders)[0] == [value(1.0, 1)]
    assert _predictions([], 0.0, orders) == (None, None)
