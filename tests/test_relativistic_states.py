"""Relativistic states: E1 tables of Dirac levels, <r^k> of Dirac and Klein-Gordon levels, `wave` and
`transitions` with --equation, the scalar-potential hook.

Sources, written beside each check:
- nodeless Dirac-Coulomb levels (n_r = 0, kappa < 0): G = N r^gamma exp(-lambda r), F = c G with
  gamma = sqrt(kappa^2 - (Z alpha)^2), lambda = Z / |kappa|, c = (gamma + kappa) / (Z alpha) (atomic
  units, mass 1; textbook, e.g. Bethe and Salpeter, "Quantum Mechanics of One- and Two-Electron Atoms",
  1957, sec. 14), so <r^k>, P(r < R) and the 2p3/2 -> 1s1/2 radial integral are Gamma functions
  (scipy.special).
- nodeless Klein-Gordon-Coulomb levels: u = r^(s+1) exp(-lambda r), s = -1/2 + sqrt((l+1/2)^2 - (Z alpha)^2),
  E = mc^2 / sqrt(1 + (Z alpha)^2 / (s+1)^2), lambda = sqrt(m^2c^4 - E^2) / (hbar c), charge density
  (E - V) / mc^2 (textbook, e.g. Greiner, "Relativistic Quantum Mechanics: Wave Equations", 2000, ch. 1).
- hydrogen 2p lifetime 1.596 ns (from memory; the non-relativistic E1 value with the reduced mass).
- relativistic corrections to hydrogen-like E1 rates are of order (Z alpha)^2 (textbook).
- alpha from scipy.constants (CODATA).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.constants import physical_constants
from scipy.special import gammainc, gammaln

import radsolve
from radsolve.analysis.relativistic import radial_e1, relativistic_state
from radsolve.errors import InputError, PluginError

from helpers import invoke

ALPHA = physical_constants["fine-structure constant"][0]


def nodeless_dirac(kappa, Z):
    """(gamma, lambda, F/G, ln N) of the nodeless Dirac-Coulomb level of kappa < 0 (module docstring)."""
    gamma = math.sqrt(kappa * kappa - (Z * ALPHA) ** 2)
    lam = Z / abs(kappa)
    ratio = (gamma + kappa) / (Z * ALPHA)
    log_norm = -0.5 * (math.log(1.0 + ratio**2) + gammaln(2 * gamma + 1) - (2 * gamma + 1) * math.log(2 * lam))
    return gamma, lam, ratio, log_norm


def exact_radial_2p3_1s(Z):
    ga, la, ca, na = nodeless_dirac(-2, Z)
    gb, lb, cb, nb = nodeless_dirac(-1, Z)
    return math.exp(na + nb + gammaln(ga + gb + 2) - (ga + gb + 2) * math.log(la + lb)) * (1.0 + ca * cb)


# ------------------------------------------------------------------ E1 tables of Dirac levels

@pytest.mark.parametrize("Z, tol, method", [(1, 1e-10, "fd"), (30, 1e-8, "first-order"), (92, 1e-10, "fd"),
                                            (92, 1e-6, "fd")])
def test_dirac_radial_integral_against_the_exact_nodeless_levels(Z, tol, method):
    res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=[0, 1], count=1, equation="dirac", tol=tol,
                         method=method)
    est = radial_e1(res, res.level("2p3/2"), res.level("1s1/2"))
    exact = exact_radial_2p3_1s(Z)
    assert abs(est.value - exact) <= est.error, (est.value, exact, est.error)
    assert abs(est.value - exact) <= 3e-5 * exact  # and useful: far below any physical need
    assert est.error <= 1e-3 * exact


def test_hydrogen_2p_lifetimes_dirac_against_schrodinger_and_the_textbook_value():
    # mass electron + proton: the 2p lifetime 1.596 ns (from memory) is the non-relativistic E1 value;
    # the Dirac 2p1/2 and 2p3/2 lifetimes equal it up to order (Z alpha)^2 (textbook)
    nr = radsolve.transitions("coulomb", 2, mass="electron+proton")
    rel = radsolve.transitions("coulomb", 2, mass="electron+proton", equation="dirac")
    assert rel.success, rel.message
    tau_nr = nr.state("2p").lifetime_s
    assert tau_nr == pytest.approx(1.596e-9, rel=1e-3)
    for label in ("2p1/2", "2p3/2"):
        tau = rel.state(label).lifetime_s
        assert tau == pytest.approx(1.596e-9, rel=1e-3)
        assert abs(tau / tau_nr - 1.0) <= 3.0 * ALPHA**2, (label, tau / tau_nr - 1.0)
        assert rel.state(label).j == float(label[-3]) / 2
    # 2s1/2 and 2p1/2 are degenerate (Dirac-Coulomb): no line, and 2s1/2 has no E1 decay
    assert "2s1/2" in rel.state("2p1/2").degenerate_with
    assert rel.state("2s1/2").metastable
    assert {x.lower for x in rel.lines if x.upper == "2p3/2"} == {"1s1/2", "2s1/2"}


@pytest.mark.parametrize("Z", [10.0, 40.0])
def test_dirac_lifetimes_at_higher_z_differ_from_schrodinger_by_order_z_alpha_squared(Z):
    # Z^-4 scaling of the non-relativistic lifetime (textbook) plus a change of order (Z alpha)^2
    nr = radsolve.transitions(radsolve.potential("coulomb", Z=Z), 3)
    rel = radsolve.transitions(radsolve.potential("coulomb", Z=Z), 3, equation="dirac")
    for nl, labels in (("2p", ("2p1/2", "2p3/2")), ("3s", ("3s1/2",)), ("3d", ("3d3/2", "3d5/2"))):
        for label in labels:
            change = rel.state(label).lifetime_s / nr.state(nl).lifetime_s - 1.0
            assert 1e-3 * (Z * ALPHA) ** 2 < abs(change) <= 3.0 * (Z * ALPHA) ** 2, (label, change)
    # branching of 3p3/2: the strongest two lines are to 1s1/2 and 2s1/2, and the shares sum to 1
    three_p = rel.state("3p3/2")
    assert list(three_p.branching)[:2] == ["1s1/2", "2s1/2"]
    assert sum(three_p.branching.values()) == pytest.approx(1.0, rel=1e-12)


def test_dirac_transitions_json_csv_and_command_line(tmp_path):
    out = tmp_path / "lines.json"
    run = invoke("transitions", "coulomb", "--nmax", 2, "--equation", "dirac", "--format", "json", "--out", out)
    assert run.exit_code == 0, run.stderr
    doc = json.loads(out.read_text())
    assert doc["equation"] == "dirac"
    assert "long-wavelength" in doc["conventions"]["gauge"] and "Babushkin" in doc["conventions"]["gauge"]
    assert {s["label"]: s["j"] for s in doc["states"]} == {"1s1/2": 0.5, "2s1/2": 0.5, "2p1/2": 0.5, "2p3/2": 1.5}
    assert "Dirac" in doc["note"]
    table = invoke("transitions", "coulomb", "--nmax", 2, "--equation", "dirac")
    assert table.exit_code == 0 and "2p3/2" in table.stdout and "length form" in table.stdout
    csv_run = invoke("transitions", "coulomb", "--nmax", 2, "--equation", "dirac", "--format", "csv")
    assert csv_run.stdout.startswith("# Note: model calculation (Dirac")
    spin_zero = invoke("transitions", "coulomb", "--nmax", 2, "--equation", "klein-gordon")
    assert spin_zero.exit_code == 0 and "Klein-Gordon" in spin_zero.stdout  # see tests/test_klein_gordon_e1.py
    refused = invoke("transitions", "alkali_model", "--nmax", 3, "--equation", "klein-gordon")
    assert refused.exit_code == 2 and "l-dependent" in refused.stderr and "Traceback" not in refused.stderr


# ------------------------------------------------------------------ observables of relativistic states

@pytest.mark.parametrize("Z", [1, 60, 92])
def test_dirac_2p3_moments_and_probability_against_the_closed_form(Z):
    gamma, lam, _, _ = nodeless_dirac(-2, Z)
    radii = [1.0 / Z, 4.0 / Z]
    st = relativistic_state(radsolve.potential("coulomb", Z=Z), 2, 1, "3/2", moments=(-1, 1, 3), inside=radii)
    values = dict(st.quantities)
    for k in (-1, 1, 3):
        exact = math.exp(gammaln(2 * gamma + 1 + k) - gammaln(2 * gamma + 1) - k * math.log(2 * lam))
        est = values[f"<r^{k}>"]
        assert abs(est.value - exact) <= max(est.error, 1e-12 * exact), (k, est.value, exact, est.error)
        assert abs(est.value - exact) <= 1e-8 * exact
    for radius, (name, est) in zip(radii, st.quantities[-2:]):
        exact = gammainc(2 * gamma + 1, 2 * lam * radius)
        assert name.startswith("P(r <")
        assert abs(est.value - exact) <= max(est.error, 1e-12), (radius, est.value, exact, est.error)
        assert abs(est.value - exact) <= 1e-9


@pytest.mark.parametrize("Z, l", [(1, 0), (30, 1), (60, 0), (80, 2)])
def test_klein_gordon_moments_with_the_charge_density_against_the_closed_form(Z, l):
    s = -0.5 + math.sqrt((l + 0.5) ** 2 - (Z * ALPHA) ** 2)
    c = 1.0 / ALPHA
    energy = c * c / math.sqrt(1.0 + (Z * ALPHA) ** 2 / (s + 1) ** 2)
    lam = math.sqrt(c**4 - energy**2) / c

    def integral(p):  # integral of r^p exp(-2 lam r) dr
        return math.exp(gammaln(p + 1) - (p + 1) * math.log(2 * lam))

    def exact(k):  # charge density (E + Z/r)/mc^2 times u^2
        return ((energy * integral(2 * s + 2 + k) + Z * integral(2 * s + 1 + k))
                / (energy * integral(2 * s + 2) + Z * integral(2 * s + 1)))

    st = relativistic_state(radsolve.potential("coulomb", Z=Z), l + 1, l, equation="klein-gordon",
                            moments=(1, 2) if Z == 60 else (-1, 1, 2))
    for name, est in st.quantities[1:]:
        k = float(name[3:-1])
        assert abs(est.value - exact(k)) <= max(est.error, 1e-12 * exact(k)), (name, est.value, exact(k))
        assert abs(est.value - exact(k)) <= 1e-8 * exact(k)
    # the plain normalization integral of u^2 is not 1: the charge density weighs it (by <(E - V)/mc^2>)
    wave = st.wavefunction()
    assert wave.metadata()["normalization"].startswith("integral of rho u^2")


def test_relativistic_state_refuses_bad_input_with_the_parameter_named():
    cases = [(dict(n=2, l=1), "j"), (dict(n=2, l=1, j="5/2"), "j"), (dict(n=2, l=1, j=1.0), "j"),
             (dict(n=1, l=1, j="1/2"), "n"), (dict(n=2, l=1, j="1/2", equation="klein-gordon"), "j"),
             (dict(n=1, l=0, equation="schrodinger"), "equation"), (dict(n=1, l=0, moments=(math.nan,)), "moments"),
             (dict(n=1, l=0, inside=(-1.0,)), "radius"), (dict(n=1, l=0, scalar=True), "scalar")]
    for kwargs, parameter in cases:
        kwargs = dict(kwargs)
        n, l, j = kwargs.pop("n"), kwargs.pop("l"), kwargs.pop("j", None)
        with pytest.raises(InputError) as info:
            relativistic_state("coulomb", n, l, j, **{"equation": "dirac", **kwargs})
        assert info.value.parameter == parameter, (kwargs, info.value.parameter, str(info.value))


def test_wave_command_dirac_and_klein_gordon(tmp_path):
    png, npz = tmp_path / "g.png", tmp_path / "g.npz"
    run = invoke("wave", "coulomb", "-n", 2, "-l", 1, "--j", "1/2", "-p", "Z=50", "--equation", "dirac",
                 "--moment", 3, "--plot", png, "--out", npz)
    assert run.exit_code == 0, run.stderr
    assert "2p1/2" in run.stdout and "<r^3>" in run.stdout and "G^2 + F^2" in run.stdout
    assert png.stat().st_size > 10_000
    data = np.load(npz)
    r, g, f = data["r"], data["G"], data["F"]
    dr = np.gradient(r)
    assert np.sum((g * g + f * f) * dr) == pytest.approx(1.0, rel=1e-3)  # coarse quadrature of the export
    # the 2p1/2 level of a point charge: G has no node, F one (textbook, n_r = 1, kappa = 1)
    big = np.abs(g) > 1e-3 * np.max(np.abs(g))
    assert np.all(g[big] > 0)
    assert np.sum(np.diff(np.sign(f[np.abs(f) > 1e-3 * np.max(np.abs(f))])) != 0) == 1
    csv = invoke("wave", "coulomb", "-n", 1, "-l", 0, "--equation", "klein-gordon", "--at", 0.5, "-f", "csv")
    assert csv.exit_code == 0, csv.stderr
    header, row = csv.stdout.strip().splitlines()
    assert header == "r/bohr,u/bohr^-1/2,rho"
    assert float(row.split(",")[0]) == 0.5
    for args, option in ((("-n", 2, "-l", 1, "--equation", "dirac"), "--j"),
                         (("-n", 2, "-l", 1, "--j", "1/2"), "--j"),
                         (("-n", 1, "-l", 0, "--equation", "dirac", "--hellmann-feynman", "Z"), "--hellmann-feynman")):
        bad = invoke("wave", "coulomb", *args)
        assert bad.exit_code == 2 and option in bad.stderr and "Traceback" not in bad.stderr, bad.stderr


# ------------------------------------------------------------------ the scalar-potential hook

SCALAR_FAMILY = '''
import numpy as np

NAME = "{name}"
PARAMETERS = {{"depth": 0.3}}


def V(r, depth):
    return -depth * np.exp(-r)


def scalar_potential({signature}):
    return -0.5 * depth * np.exp(-r)
'''


def test_the_scalar_hook_is_checked_and_its_absence_refused(tmp_path):
    from radsolve.potentials.protocol import HOOKS

    assert "scalar_potential" in HOOKS
    bad = tmp_path / "bad"
    bad.mkdir()
    (bad / "bad_scalar.py").write_text(SCALAR_FAMILY.format(name="bad_scalar", signature="r, width"))
    with pytest.raises(PluginError, match="scalar_potential"):
        radsolve.potential("bad_scalar", plugins=[bad])
    good = tmp_path / "good"
    good.mkdir()
    (good / "good_scalar.py").write_text(SCALAR_FAMILY.format(name="good_scalar", signature="r, depth"))
    pot = radsolve.potential("good_scalar", plugins=[good])
    assert pot.has_scalar
    assert np.allclose(pot.scalar(np.array([1.0, 2.0])), -0.15 * np.exp(-np.array([1.0, 2.0])))
    # a family without the hook: the API names the parameter, the command line the option, exit 2
    with pytest.raises(InputError) as info:
        radsolve.solve("yukawa", equation="dirac", scalar=True)
    assert info.value.parameter == "scalar" and "scalar_potential" in str(info.value)
    run = invoke("levels", "yukawa", "--equation", "dirac", "--scalar")
    assert run.exit_code == 2 and "--scalar" in run.stderr and "scalar_potential" in run.stderr
    assert "Traceback" not in run.stdout + run.stderr


# ------------------------------------------------------------------ relativistic thresholds: the slope

@pytest.mark.parametrize("equation, label, kappa", [("dirac", "2p3/2", -2), ("klein-gordon", "2p", None)])
def test_relativistic_threshold_slope_against_an_independent_solver(equation, label, kappa):
    # A Gaussian well of 0.02 bohr whose critical depth is about 0.7 mc^2: W = E - mc^2 of the 2p level
    # just beyond it, from tests/dirac_reference.py (DOP853 shooting, no code shared with radsolve), at
    # two depths; for l = 1 the next term after the linear one goes as d^1.5 (textbook: the zero-energy
    # state's norm converges slowly), so slope = 2 W(d)/d - W(4d)/(4d) up to O(d).
    from dirac_reference import klein_gordon_level, level

    pot = radsolve.formula_potential("-depth*exp(-(r/width)**2)", depth=1e4, width=0.02)
    th = radsolve.threshold(pot, "depth", level=label, equation=equation)
    assert th.success and th.slope is not None and th.slope_error is not None
    plain = radsolve.threshold(pot, "depth", level="2p")
    assert abs(th.slope / plain.slope - 1.0) > 0.1  # relativity matters here: the check can tell
    slopes = []
    for share in (1e-4, 4e-4):
        depth = th.value * (1.0 + share)

        def V(r, depth=depth):
            return -depth * np.exp(-(r / 0.02) ** 2)

        guess = th.slope * (depth - th.value)
        bracket = (1.3 * guess, 0.7 * guess)
        W = (level(V, -depth, kappa, 0, bracket, r_match=0.02) if kappa is not None
             else klein_gordon_level(V, -depth, 1, 0, bracket, r_match=0.02))
        slopes.append(W / (depth - th.value))
    reference = 2.0 * slopes[0] - slopes[1]
    assert th.slope == pytest.approx(reference, rel=1e-3), (th.slope, reference, slopes)
    # an s level leaves the threshold quadratically: no slope, as for the Schrodinger equation
    s_level = radsolve.threshold(pot, "depth", level="1s1/2" if kappa else "1s", equation=equation)
    assert s_level.slope is None


# ------------------------------------------------------------------ rounding noise of the first-order method

@pytest.mark.parametrize("Z, l", [(1, 0), (92, 1)])
def test_first_order_rounding_rule_covers_the_measured_noise(Z, l, monkeypatch):
    # Perturb V by up to 4 ulps at random (common practice for measuring rounding noise): every grid
    # energy's spread over the draws, relative to |E| + <|V - E|>, must lie below the method's rule.
    import radsolve.core.relativistic.firstorder as firstorder

    original = firstorder.potential_on_grid
    eps = np.finfo(float).eps

    def solved(seed):
        rng = np.random.default_rng(seed)

        def perturbed(f, r, anchors):
            v = original(f, r, anchors)
            return v if seed == 0 else v * (1.0 + 4.0 * eps * rng.uniform(-1.0, 1.0, v.shape))

        monkeypatch.setattr(firstorder, "potential_on_grid", perturbed)
        return radsolve.solve(radsolve.potential("coulomb", Z=Z), l=l, count=2, equation="dirac",
                              method="first-order", tol=1e-11)

    runs = [solved(seed) for seed in range(5)]
    checked = 0
    for i, lev in enumerate(runs[0].levels):
        for g, sample in enumerate(lev.samples):
            energies = [run.levels[i].samples[g].energy for run in runs]
            v = -Z / sample.r + l * (l + 1) / (2.0 * sample.r**2)
            scale = abs(sample.energy) + float(np.sum(sample.weights * sample.u**2 * np.abs(v - sample.energy)))
            spread = 0.5 * (max(energies) - min(energies))
            assert spread <= firstorder.shooting_rounding(sample.r.size) * scale, (lev.label, sample.r.size, spread)
            checked += 1
    assert checked >= 8


# ------------------------------------------------------------------ confining Lorentz-scalar potentials

LINEAR_SCALAR = '''
import numpy as np

NAME = "linear_scalar_test"
UNITS = "nuclear"
PARAMETERS = {"tension": 900.0, "charge": 0.0}


def V(r, tension, charge):
    return -charge / r


def scalar_potential(r, tension, charge):
    return tension * r


def breakpoints(tension, charge):
    return []
'''

HBARC = physical_constants["reduced Planck constant times c in MeV fm"][0]


def _dirac_scalar_reference(kappa, nodes, bracket, mass, tension, charge=0.0):
    """W = E - mc^2 (MeV) of G' = -kappa G/r + (E - V + m + S) F/hc, F' = kappa F/r - (E - V - m - S) G/hc,
    S = tension r, V = -charge/r: DOP853 outward from the regular start and inward from where the level has
    decayed, Brent's method on G_out F_in - F_out G_in (independent of radsolve)."""
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    def rhs(E):
        def f(r, y):
            v, s = -charge / r, tension * r
            return [-kappa * y[0] / r + (E - v + mass + s) * y[1] / HBARC,
                    kappa * y[1] / r - (E - v - mass - s) * y[0] / HBARC]
        return f

    r0 = 1e-6
    gamma = math.sqrt(kappa * kappa - (charge / HBARC) ** 2)
    # leading terms at the origin: (G, F) ~ r^gamma (charge/hc, gamma + kappa) for a Coulomb term, else the
    # regular free-particle start
    if charge:
        start = [charge / HBARC * r0**gamma, (gamma + kappa) * r0**gamma]
    elif kappa < 0:
        start = [r0**gamma, 0.0]
    else:
        start = [0.0, r0**gamma]
    r_far = 4.0 * math.sqrt(HBARC / tension) + 2.0
    r_match = 0.5 * math.sqrt(HBARC / tension)

    def parts(W):
        E = W + mass
        with np.errstate(all="ignore"):  # the first step's size estimate meets a zero component
            out = solve_ivp(rhs(E), (r0, r_match), start, method="DOP853", rtol=1e-12, atol=1e-300)
            inn = solve_ivp(rhs(E), (r_far, r_match), [1.0, -1.0], method="DOP853", rtol=1e-12, atol=1e-300)
        g = np.concatenate([out.y[0], inn.y[0][::-1]])
        return out.y[:, -1], inn.y[:, -1], g

    def mismatch(W):
        yo, yi, _ = parts(W)
        return (yo[0] * yi[1] - yo[1] * yi[0]) / (math.hypot(*yo) * math.hypot(*yi))

    W = brentq(mismatch, *bracket, xtol=1e-12, rtol=1e-13)
    g = parts(W)[2]
    g = g[np.abs(g) > 1e-9 * np.max(np.abs(g))]
    assert int(np.sum(np.signbit(g[1:]) != np.signbit(g[:-1]))) == nodes
    return W


def _klein_gordon_scalar_reference(l, count, mass, tension, points=4000):
    """The lowest ``count`` W = E - mc^2 of -u'' + [l(l+1)/r^2 + ((m + S)^2 - E^2)/hc^2] u = 0, S = tension r:
    E^2 as eigenvalues of the three-point matrix on a uniform grid (scipy's eigh_tridiagonal), on two grids,
    Richardson for h^2 (independent of radsolve)."""
    from scipy.linalg import eigh_tridiagonal

    r_max = 5.0 * math.sqrt(HBARC / tension) + 1.0
    out = []
    for n in (points, 2 * points):
        h = r_max / n
        r = h * np.arange(1, n)
        diag = 2.0 / h**2 + l * (l + 1) / r**2 + ((mass + tension * r) / HBARC) ** 2
        off = -np.ones(n - 2) / h**2
        out.append(eigh_tridiagonal(diag, off, select="i", select_range=(0, count - 1), eigvals_only=True))
    e2 = out[1] + (out[1] - out[0]) / 3.0
    return HBARC * np.sqrt(e2) - mass


@pytest.mark.parametrize("method", ["fd", "first-order"])
def test_dirac_levels_of_a_confining_linear_scalar_against_an_independent_solver(method, tmp_path):
    # light-quark-like: m = 300 MeV, S = 900 MeV/fm r (a scenario of our own); every level is bound and
    # labelled by the nodes of G.  Reference: first-order equations shot with DOP853 (above).
    (tmp_path / "linear_scalar_test.py").write_text(LINEAR_SCALAR)
    for charge in (0.0, 0.4 * HBARC):
        pot = radsolve.potential("linear_scalar_test", plugins=[tmp_path], charge=charge)
        res = radsolve.solve(pot, l=[0, 1], count=3, equation="dirac", scalar=True, mass="300MeV", method=method)
        assert res.success, res.message
        assert [lev.label for lev in res.levels] == ["1s1/2", "2s1/2", "3s1/2", "1p1/2", "2p1/2", "3p1/2",
                                                     "1p3/2", "2p3/2", "3p3/2"]
        for lev in res.levels:
            kappa = -(lev.l + 1) if lev.j == lev.l + 0.5 else lev.l
            nodes = lev.n - 1
            reference = _dirac_scalar_reference(kappa, nodes, (0.995 * lev.energy, 1.005 * lev.energy), 300.0,
                                                900.0, charge)
            assert abs(lev.energy - reference) <= max(1e-8 * abs(reference), 3 * lev.error_estimate), \
                (lev.label, lev.energy, reference, lev.error_estimate)
    # a scalar that falls without bound is refused, naming the input
    falling = LINEAR_SCALAR.replace("linear_scalar_test", "falling_scalar").replace("return tension * r",
                                                                                     "return -tension * r")
    (tmp_path / "falling_scalar.py").write_text(falling)
    with pytest.raises(InputError) as info:
        radsolve.solve(radsolve.potential("falling_scalar", plugins=[tmp_path]), equation="dirac", scalar=True,
                       mass="300MeV")
    assert info.value.parameter == "scalar" and "falls without bound" in str(info.value)


def test_klein_gordon_levels_of_a_confining_linear_scalar_against_an_independent_solver(tmp_path):
    (tmp_path / "linear_scalar_test.py").write_text(LINEAR_SCALAR)
    pot = radsolve.potential("linear_scalar_test", plugins=[tmp_path])
    res = radsolve.solve(pot, l=[0, 1, 4], count=4, equation="klein-gordon", scalar=True, mass="300MeV")
    assert res.success, res.message
    for l in (0, 1, 4):
        ours = [lev.energy for lev in res.levels if lev.l == l]
        assert [lev.n for lev in res.levels if lev.l == l] == [1, 2, 3, 4]
        reference = _klein_gordon_scalar_reference(l, 4, 300.0, 900.0)
        assert np.allclose(ours, reference, rtol=1e-7, atol=0), (l, ours, reference)


def test_dirac_moment_with_a_confining_scalar_against_hellmann_feynman(tmp_path):
    # V = -q/r beside S = tension r: dW/dq = -<1/r> with the density G^2 + F^2 (Hellmann-Feynman, textbook);
    # dW/dq from the independent DOP853 reference at q +- dq (central difference, error ~ dq^2)
    (tmp_path / "linear_scalar_test.py").write_text(LINEAR_SCALAR)
    charge, dq = 0.4 * HBARC, 0.002 * HBARC
    pot = radsolve.potential("linear_scalar_test", plugins=[tmp_path], charge=charge)
    for n, l, j, kappa in ((1, 0, None, -1), (1, 1, "1/2", 1), (2, 1, "3/2", -2)):
        st = relativistic_state(pot, n, l, j, scalar=True, mass="300MeV", moments=(-1,))
        W = st.quantities[0][1].value
        ends = [_dirac_scalar_reference(kappa, n - 1, (0.98 * W, 1.02 * W), 300.0, 900.0, q)
                for q in (charge + dq, charge - dq)]
        inverse_r = -(ends[0] - ends[1]) / (2.0 * dq)
        est = dict(st.quantities)["<r^-1>"]
        assert est.value == pytest.approx(inverse_r, rel=2e-5), (st.label, est.value, inverse_r)
        assert est.error <= 1e-8 * est.value and st.quantities[0][1].converged


@pytest.mark.parametrize("Z", [1, 50, 92])
def test_dirac_inverse_r_of_levels_with_nodes_is_minus_de_dz(Z):
    # Hellmann-Feynman for V = -Z/r: <1/r> (density G^2 + F^2) = -dE/dZ, with E from Sommerfeld's formula
    # (textbook; Bethe and Salpeter 1957, eq. 14.29) differentiated by mpmath
    import mpmath

    mpmath.mp.dps = 30
    alpha = mpmath.mpf(ALPHA)

    def energy(z, n, kappa):
        za = z * alpha
        gamma = mpmath.sqrt(kappa**2 - za**2)
        return (1 / alpha**2) * (1 / mpmath.sqrt(1 + (za / (n - abs(kappa) + gamma)) ** 2) - 1)

    for n, l, j, kappa in ((2, 0, None, -1), (2, 1, "1/2", 1), (3, 2, "3/2", 2), (4, 1, "3/2", -2)):
        st = relativistic_state(radsolve.potential("coulomb", Z=Z), n, l, j, moments=(-1,))
        est = st.quantities[1][1]
        exact = -float(mpmath.diff(lambda z: energy(z, n, kappa), Z))
        # the project's honesty rule (common practice): no estimate below a tenth of the true error;
        # at these integrals' rounding floor (1e-12 .. 1e-10 relative) the grids' radii alone move
        # them by about their estimate
        assert abs(est.value - exact) <= 10.0 * est.error, (st.label, est.value, exact, est.error)
        assert abs(est.value - exact) <= 1e-8 * exact


def test_a_divergent_moment_is_reported_infinite_not_as_a_number():
    # Dirac 1s1/2 of a point charge: G^2 + F^2 ~ r^(2 gamma), so <r^-3> diverges when 2 gamma - 3 < -1
    # (gamma = sqrt(1 - (Z alpha)^2) = 0.67 for Z = 92; textbook), while <r^-2> (2 gamma - 2 > -1) is finite
    st = relativistic_state(radsolve.potential("coulomb", Z=92), 1, 0, moments=(-3, -2))
    values = dict(st.quantities)
    assert math.isinf(values["<r^-3>"].value) and not values["<r^-3>"].converged
    assert [note.code for note in st.notes][:1] == ["divergent"] and not st.success
    gamma = math.sqrt(1.0 - (92 * ALPHA) ** 2)
    exact = math.exp(gammaln(2 * gamma - 1) - gammaln(2 * gamma + 1) + 2 * math.log(2 * 92))
    assert abs(values["<r^-2>"].value - exact) <= max(values["<r^-2>"].error, 1e-9 * exact)
