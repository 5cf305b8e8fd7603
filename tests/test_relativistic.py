"""Relativistic levels (Dirac, Klein-Gordon) against exact formulas, an independent solver and measurements.

Sources, written beside each check:
- Dirac-Coulomb energies: Sommerfeld's fine-structure formula (textbook formula, e.g. Bethe and
  Salpeter, "Quantum Mechanics of One- and Two-Electron Atoms", 1957, eq. 14.29), evaluated here with
  mpmath at 40 digits.
- Klein-Gordon-Coulomb energies: textbook formula (e.g. Greiner, "Relativistic Quantum Mechanics:
  Wave Equations", 3rd ed. 2000, sec. 1.10), mpmath.
- Finite nucleus: tests/dirac_reference.py, an independent shooting solver of the first-order
  equations (scipy's DOP853), sharing no code with radsolve.
- alpha, m_e c^2, the Bohr radius: scipy.constants (CODATA).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy.constants import femto, physical_constants

import radsolve
from radsolve.errors import InputError

from dirac_reference import level as reference_level
from helpers import invoke

ALPHA = physical_constants["fine-structure constant"][0]
MC2 = 1.0 / ALPHA**2  # electron rest energy, hartree
BOHR = physical_constants["Bohr radius"][0]
HARTREE_HZ = physical_constants["hartree-hertz relationship"][0]
HARTREE_EV = physical_constants["Hartree energy in eV"][0]
mpmath.mp.dps = 40


def sommerfeld(n, kappa, Z, mu=1.0):
    """E - mu c^2 of the Dirac-Coulomb level (textbook formula), hartree, 40-digit arithmetic."""
    za = mpmath.mpf(Z) * mpmath.mpf(ALPHA)
    k = abs(kappa)
    gamma = mpmath.sqrt(k * k - za * za)
    e = 1 / mpmath.sqrt(1 + (za / (n - k + gamma)) ** 2)
    return float((e - 1) * mu / mpmath.mpf(ALPHA) ** 2)


def klein_gordon(n, l, Z, mu=1.0):
    """E - mu c^2 of the Klein-Gordon-Coulomb level (textbook formula), hartree."""
    za = mpmath.mpf(Z) * mpmath.mpf(ALPHA)
    nu = n - l - mpmath.mpf(1) / 2 + mpmath.sqrt((l + mpmath.mpf(1) / 2) ** 2 - za * za)
    e = 1 / mpmath.sqrt(1 + (za / nu) ** 2)
    return float((e - 1) * mu / mpmath.mpf(ALPHA) ** 2)


def dirac_levels(Z, nmax=6, **kwargs):
    """Every Dirac level with n <= nmax of the point charge, one solve per l, by label."""
    out = {}
    for l in range(nmax):
        res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=l, count=nmax - l, equation="dirac",
                             tol=1e-10, **kwargs)
        assert res.success, res.message
        out.update({lev.label: lev for lev in res.levels})
    return out


def _kappa(l, j):
    return -(l + 1) if j > l else l


@pytest.mark.parametrize("Z, method", [(1, "both"), (20, "fd"), (60, "first-order"), (92, "both")])
def test_dirac_coulomb_every_level_up_to_n6(Z, method):
    # Sommerfeld's formula (textbook): relative error <= 1e-10, and within the stated estimate.
    # "both" is the two independent methods: the second-order form (finite differences) and the
    # first-order shooting of G and F.
    levels = dirac_levels(Z, method=method)
    expected = {f"{n}{'spdfgh'[l]}{int(2 * j)}/2" for n in range(1, 7) for l in range(n)
                for j in ((l - 0.5, l + 0.5) if l else (0.5,))}
    assert set(levels) == expected  # 36 levels: none missing, none extra, labels from the node count
    for label, lev in levels.items():
        exact = sommerfeld(lev.n, _kappa(lev.l, lev.j), Z)
        deviation = abs(lev.energy - exact)
        assert deviation <= 1e-10 * abs(exact), (label, lev.energy, exact)
        assert deviation <= 2.0 * lev.error_estimate, (label, deviation, lev.error_estimate)
        assert lev.exact == pytest.approx(exact, rel=1e-13)
        assert lev.degeneracy == int(round(2 * lev.j + 1))


@pytest.mark.parametrize("Z", [1, 20, 60, 92])
def test_point_nucleus_2s_2p_half_degenerate(Z):
    # Dirac-Coulomb levels depend on n and j only (textbook).
    res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=[0, 1], count=2, equation="dirac", tol=1e-10)
    s, p = res.level("2s1/2").energy, res.level("2p1/2").energy
    assert abs(s - p) <= 1e-10 * abs(s)


def _uniform_sphere(Z, rms_fm):
    R = math.sqrt(5.0 / 3.0) * rms_fm * femto / BOHR

    def V(r):
        r = np.asarray(r, dtype=float)
        return np.where(r < R, -Z * (3.0 - (r / R) ** 2) / (2.0 * R), -Z / np.maximum(r, 1e-300))

    return V, -1.5 * Z / R, R


def test_finite_nucleus_breaks_the_degeneracy_upwards_and_matches_an_independent_solver():
    # A finite nucleus weakens the potential inside it, where s1/2 states have density and p1/2 almost
    # none: 1s1/2 and 2s1/2 rise, 2s1/2 ends above 2p1/2 (textbook).  Values: tests/dirac_reference.py.
    Z = 92
    res = radsolve.solve(radsolve.potential("finite_nucleus", Z=Z, radius="5.86fm"), l=[0, 1], count=2,
                         equation="dirac", tol=1e-10)
    assert res.success, res.message
    V, V0, R = _uniform_sphere(Z, 5.86)
    res_shooting = radsolve.solve(radsolve.potential("finite_nucleus", Z=Z, radius="5.86fm"), l=[0, 1],
                                  count=2, equation="dirac", tol=1e-10, method="first-order")
    for label, kappa, nodes, bracket, match in (("1s1/2", -1, 0, (-4861.3, -4850.0), 0.01),
                                                ("2s1/2", -1, 1, (-1257.5, -1250.0), 0.05),
                                                ("2p1/2", 1, 0, (-1257.5, -1255.0), 0.05)):
        reference = reference_level(V, V0, kappa, nodes, bracket, r_match=match, cuts=(R,))
        lev = res.level(label)
        assert abs(lev.energy - reference) <= 1e-10 * abs(reference), (label, lev.energy, reference)
        other = res_shooting.level(label).energy
        assert abs(other - reference) <= 1e-10 * abs(reference), (label, other, reference)
        assert lev.energy > sommerfeld(lev.n, kappa, Z)  # raised by the finite size
    assert res.level("2s1/2").energy > res.level("2p1/2").energy


def test_uranium_1s_finite_size_shift_fermi_shape():
    # Finite-nuclear-size correction to the 1s level of hydrogen-like uranium (Z = 92, Fermi charge
    # distribution, r_rms = 5.86 fm): about 198.5 eV (Johnson and Soff, At. Data Nucl. Data Tables 33,
    # 405 (1985), table of finite-size corrections; value from memory).  Its dependence on the shape
    # at fixed r_rms is a fraction of an eV, so 1% covers model differences and the recollection.
    res = radsolve.solve(radsolve.potential("finite_nucleus", Z=92, radius="5.86fm", model="fermi"), l=0,
                         count=1, equation="dirac", tol=1e-10)
    shift_ev = (res.levels[0].energy - sommerfeld(1, -1, 92)) * HARTREE_EV
    assert shift_ev == pytest.approx(198.5, rel=0.01)


@pytest.mark.parametrize("Z", [1, 40])
def test_klein_gordon_coulomb_every_level_up_to_n6(Z):
    # Klein-Gordon-Coulomb energies (textbook formula): relative error <= 1e-10.
    res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=list(range(6)), count=6, equation="klein-gordon",
                         tol=1e-10)
    assert res.success, res.message
    seen = set()
    for lev in res.levels:
        if lev.n > 6:
            continue
        seen.add(lev.label)
        exact = klein_gordon(lev.n, lev.l, Z)
        assert abs(lev.energy - exact) <= 1e-10 * abs(exact), (lev.label, lev.energy, exact)
        assert abs(lev.energy - exact) <= 2.0 * lev.error_estimate
        assert lev.j is None and lev.degeneracy == 2 * lev.l + 1
    assert seen == {f"{n}{'spdfgh'[l]}" for n in range(1, 7) for l in range(n)}


def test_hydrogen_2p_fine_structure():
    # 2p3/2 - 2p1/2 of hydrogen with the reduced mass (electron + proton).  Against the Dirac formula
    # (textbook) to 1e-8 of the splitting; against the measured interval 10969.0 MHz (the measured
    # 2p3/2 - 2s1/2 interval 9911.2 MHz plus the 2s1/2 - 2p1/2 Lamb shift 1057.8 MHz; values from memory)
    # to 0.3%: the Dirac equation leaves out the electron's anomalous magnetic moment (alpha/2pi ~
    # 0.12%, which enters the splitting twice), the Lamb shifts of the 2p levels and hyperfine structure.
    mp = physical_constants["proton-electron mass ratio"][0]
    mu = mp / (1.0 + mp)
    res = radsolve.solve("coulomb", l=1, count=1, equation="dirac", mass="electron+proton", tol=1e-12)
    split = res.level("2p3/2").energy - res.level("2p1/2").energy
    dirac = sommerfeld(2, -2, 1, mu) - sommerfeld(2, 1, 1, mu)
    assert split == pytest.approx(dirac, rel=1e-8)
    assert split * HARTREE_HZ / 1e6 == pytest.approx(10969.0, rel=3e-3)


@pytest.mark.parametrize("method, names", [("both", {"fd", "first-order"}), ("numerov", set())])
def test_no_spurious_level(method, names):
    # Every level of each (l, j) list is the exact level of its n (Sommerfeld, textbook), in order, with
    # none between: a spurious state would shift every later label.  Every method, Z = 60, l <= 2.
    res = radsolve.solve(radsolve.potential("coulomb", Z=60), l=[0, 1, 2], count=6, equation="dirac",
                         tol=1e-10, method=method)
    assert res.success, res.message
    by_channel = {}
    for lev in res.levels:
        by_channel.setdefault((lev.l, lev.j), []).append(lev)
    assert len(by_channel) == 5
    for (l, j), levels in by_channel.items():
        assert [lev.nodes for lev in levels] == list(range(6))
        for lev in levels:
            exact = sommerfeld(lev.n, _kappa(l, j), 60)
            assert abs(lev.energy - exact) <= 1e-10 * abs(exact)
            assert set(lev.method_energies) == names
            for value in lev.method_energies.values():
                assert abs(value - exact) <= 1e-9 * abs(exact)
    assert all(c.count is None and c.certain for c in res.certificates.values())  # Coulomb: infinitely many


def test_dirac_count_of_a_short_range_well_matches_the_independent_solver():
    # A finite well binds finitely many levels; the certificate's count (no box) must equal the levels
    # found, and the deepest one must agree with the independent shooting solver (tests/dirac_reference.py).
    from radsolve.potentials.formula import formula_potential

    pot = formula_potential("-D*exp(-(r/a)**2)", D=2000.0, a=0.05)
    res = radsolve.solve(pot, l=0, count=10, equation="dirac", tol=1e-10)
    (cert,) = res.certificates.values()
    assert cert.certain and cert.count == len(res.levels) and 0 < cert.count < 10

    def V(r):
        return -2000.0 * np.exp(-(np.asarray(r) / 0.05) ** 2)

    deepest = res.levels[0].energy
    reference = reference_level(V, -2000.0, -1, 0, (deepest * 1.01, deepest * 0.99), r_match=0.05)
    assert abs(deepest - reference) <= 1e-9 * abs(reference)


# ----------------------------------------------------------------------------- bad input

@pytest.mark.parametrize("kwargs, parameter, words", [
    ({"equation": "pauli"}, "equation", "schrodinger, dirac, klein-gordon"),
    ({"equation": "dirac", "spin_orbit": True}, "spin_orbit", "already inside the Dirac equation"),
    ({"equation": "klein-gordon", "spin_orbit": True}, "spin_orbit", "spin 0"),
    ({"equation": "dirac", "scalar": True}, "scalar", "no Lorentz-scalar part"),
    ({"scalar": True}, "scalar", "needs equation"),
    ({"equation": "dirac", "dimension": 2}, "dimension", "three dimensions"),
    ({"equation": "klein-gordon", "method": "first-order"}, "method", "Dirac equation's own"),
])
def test_refused_options(kwargs, parameter, words):
    with pytest.raises(InputError) as err:
        radsolve.solve("coulomb", **kwargs)
    assert err.value.parameter == parameter and words in str(err.value)


@pytest.mark.parametrize("Z, equation, l, limit", [
    (138, "dirac", 0, "kappa = -1 needs Z alpha < 1"),  # Z alpha = 1.007 (textbook limit)
    (70, "klein-gordon", 0, "Z alpha < l + 1/2"),  # Z alpha = 0.511 > 1/2 (textbook limit)
])
def test_point_nucleus_limit_points_to_finite_nucleus(Z, equation, l, limit):
    with pytest.raises(InputError) as err:
        radsolve.solve(radsolve.potential("coulomb", Z=Z), l=l, equation=equation)
    assert limit in str(err.value) and "finite_nucleus" in str(err.value)


def test_klein_gordon_p_levels_exist_beyond_the_s_limit():
    # Z alpha = 0.51: s levels do not exist for a point charge, p levels do (need Z alpha < 3/2).
    res = radsolve.solve(radsolve.potential("coulomb", Z=70), l=1, count=1, equation="klein-gordon")
    assert res.levels[0].energy == pytest.approx(klein_gordon(2, 1, 70), rel=1e-10)


def test_level_diving_into_the_negative_continuum_is_refused():
    # The 1s1/2 level of a finite nucleus reaches -2mc^2 near Z ~ 170 (textbook; e.g. Greiner, Muller
    # and Rafelski, "Quantum Electrodynamics of Strong Fields", 1985; from memory); Z = 180 is beyond.
    with pytest.raises(InputError) as err:
        radsolve.solve(radsolve.potential("finite_nucleus", Z=180, radius="7fm"), l=0, equation="dirac")
    assert "negative-energy continuum" in str(err.value)
    below = radsolve.solve(radsolve.potential("finite_nucleus", Z=160, radius="7fm"), l=0, count=1,
                           equation="dirac")
    assert -2.0 * MC2 < below.levels[0].energy < -MC2  # bound deeper than mc^2, not yet diving


def test_confining_vector_potential_is_refused():
    with pytest.raises(InputError) as err:
        radsolve.solve("harmonic", equation="dirac")
    assert "Klein" in str(err.value)


def test_observables_of_relativistic_levels_are_refused_not_computed_wrongly():
    from radsolve.analysis.observables import check_atomic_3d

    res = radsolve.solve("coulomb", l=0, count=1, equation="dirac")

    with pytest.raises(InputError) as err:
        check_atomic_3d(res, "expectation values")
    assert err.value.parameter == "equation"


# ----------------------------------------------------------------------------- command line

def test_levels_command_dirac():
    out = invoke("levels", "coulomb", "-p", "Z=92", "--lmax", "1", "--count", "2", "--equation", "dirac",
                 "--format", "json")
    assert out.exit_code == 0, out.stderr
    import json

    doc = json.loads(out.stdout)
    assert doc["equation"] == "dirac" and "reduced mass" in doc["convention"]
    labels = {lev["label"]: lev for lev in doc["levels"]}
    assert set(labels) == {"1s1/2", "2s1/2", "2p1/2", "3p1/2", "2p3/2", "3p3/2"}
    assert labels["2p3/2"]["energy"] == pytest.approx(sommerfeld(2, -2, 92), rel=1e-10)


@pytest.mark.parametrize("args, words", [
    (("--equation", "foo"), "--equation must be one of"),
    (("-p", "Z=140", "--equation", "dirac"), "finite_nucleus"),
    (("--equation", "dirac", "--spin-orbit"), "--spin-orbit"),
    (("--equation", "dirac", "--scalar"), "--scalar"),
])
def test_levels_command_refuses(args, words):
    out = invoke("levels", "coulomb", *args)
    assert out.exit_code == 2
    assert words in out.stderr and "Traceback" not in out.stderr


def test_check_has_a_relativistic_section():
    # radsolve.check's Dirac and Klein-Gordon rows: exact values as this file's mpmath formulas
    # (textbook), and every level within tol with an honest estimate, for a muonic reduced mass.
    mp = physical_constants["proton-electron mass ratio"][0]
    mmu = physical_constants["muon-electron mass ratio"][0]
    mu = mmu * mp / (mmu + mp)
    report = radsolve.check(tol=1e-10, charges=(60,), masses=("muon+proton",), nmax=3,
                            equations=("dirac", "klein-gordon"))
    assert report.passed, report.failures
    dirac = [row for row in report.rows if row.equation == "dirac"]
    kg = [row for row in report.rows if row.equation == "klein-gordon"]
    assert len(dirac) == 3 + 2 * 2 + 2 * 1 and len(kg) == 6  # (n, l, j) and (n, l) with n <= 3
    for row in dirac:
        assert row.exact == pytest.approx(sommerfeld(row.n, _kappa(row.l, row.j), 60, mu), rel=1e-12)
    for row in kg:
        assert row.exact == pytest.approx(klein_gordon(row.n, row.l, 60, mu), rel=1e-12)
    assert "dirac" in report.to_table() and report.records()[0]["equation"] == "dirac"


def test_steps_and_kinks_refused_by_the_second_order_form_solved_by_first_order_shooting():
    # A step (flat_core's default depth) or a kink (A = Z_v / R_M) in V: refused by the second-order
    # form with a message; the uniform sphere (V' continuous, V'' jumps) is solved by it (see the
    # finite-nucleus test above).
    with pytest.raises(InputError) as err:
        radsolve.solve(radsolve.potential("flat_core", well_depth=0.3), equation="dirac")
    assert "jumps" in str(err.value) and "continuous" in str(err.value)
    with pytest.raises(InputError) as err:
        radsolve.solve(radsolve.potential("flat_core", valence=1.0, model_radius=2.0, well_depth=0.5),
                       equation="dirac")
    assert "kink" in str(err.value)
    # Klein-Gordon takes the kink (its effective potential has no derivative of V)
    res = radsolve.solve(radsolve.potential("flat_core", valence=1.0, model_radius=2.0, well_depth=0.5),
                         l=0, count=1, equation="klein-gordon")
    assert res.success
    # ... and so does the first-order shooting of G and F, for a kink and a step alike: against the
    # independent solver (tests/dirac_reference.py)
    Zv, R = 1.0, 2.0
    for depth in (Zv / R, 0.3):
        pot = radsolve.potential("flat_core", valence=Zv, model_radius=R, well_depth=depth)
        res = radsolve.solve(pot, l=[0, 1], count=1, equation="dirac", tol=1e-10, method="first-order")
        assert res.success, res.message

        def V(r, depth=depth):
            r = np.asarray(r, dtype=float)
            return np.where(r < R, -depth, -Zv / np.maximum(r, 1e-300))

        for label, kappa, nodes in (("1s1/2", -1, 0), ("2p1/2", 1, 0)):
            lev = res.level(label)
            reference = reference_level(V, -depth, kappa, nodes, (lev.energy * 1.001, lev.energy * 0.999),
                                        r_match=4.0, r0=1e-6, cuts=(R,))
            assert abs(lev.energy - reference) <= 1e-10 * abs(reference), (depth, label)
            assert abs(lev.energy - reference) <= 2.0 * lev.error_estimate + 1e-15 * abs(reference)


def test_sweep_with_the_dirac_equation():
    # Rows (l, j, nodes) at every point, against Sommerfeld's formula (textbook).
    res = radsolve.sweep("coulomb", vary={"Z": [1.0, 30.0, 60.0]}, l=[0, 1], count=1, equation="dirac",
                         workers=1)
    assert res.success, res.message
    assert "j" in res.columns
    rows = res.records()
    assert len(rows) == 3 * 3  # three points x (s1/2, p1/2, p3/2)
    for row in rows:
        kappa = _kappa(row["l"], row["j"])
        exact = sommerfeld(row["n"], kappa, row["Z"])
        assert row["energy"] == pytest.approx(exact, rel=1e-10)
    assert res.to_dict()["equation"] == "dirac"


def _fine_structure_alpha2(n, j, Z):
    """The (Z alpha)^2 term of Sommerfeld's formula expanded (textbook): E_n (Z alpha)^2/n^2 (n/(j+1/2) - 3/4)."""
    e_n = -(Z**2) / (2.0 * n * n)
    return e_n * (Z * ALPHA) ** 2 / n**2 * (n / (j + 0.5) - 0.75)


def test_breit_pauli_terms_against_the_textbook_and_the_dirac_levels():
    # Mass-velocity + Darwin + spin-orbit of Schrodinger states (State.breit_pauli) equal the (Z alpha)^2
    # term of the fine-structure formula (textbook), within their estimates; and Dirac - Schrodinger - BP
    # is of the next order: relative to BP it grows like (Z alpha)^2 (factor 4 from Z = 5 to Z = 10).
    ratios = {}
    for Z in (5.0, 10.0):
        pot = radsolve.potential("coulomb", Z=Z)
        plain = radsolve.solve(pot, l=[0, 1], count=2, tol=1e-12)
        dirac = radsolve.solve(pot, l=[0, 1], count=2, tol=1e-12, equation="dirac")
        for lev in plain.levels:
            state = radsolve.State.from_result(plain, lev.label)
            for j in ((0.5,) if lev.l == 0 else (lev.l - 0.5, lev.l + 0.5)):
                bp = state.breit_pauli(j)
                textbook = _fine_structure_alpha2(lev.n, j, Z)
                assert abs(bp.value - textbook) <= 3.0 * bp.error + 1e-12 * abs(textbook), (Z, lev.label, j)
                shift = dirac.level(f"{lev.label}{int(2 * j)}/2").energy - lev.energy
                ratios[(Z, lev.label, j)] = (shift - bp.value) / bp.value
    for key in [k for k in ratios if k[0] == 5.0]:
        growth = ratios[(10.0, key[1], key[2])] / ratios[key]
        assert growth == pytest.approx(4.0, rel=0.05), (key, growth)


def test_klein_gordon_finite_nucleus_against_an_independent_solver():
    # At Z = 92 a point charge has no Klein-Gordon s level (Z alpha > 1/2); a finite nucleus has.  Both
    # methods against tests/dirac_reference.klein_gordon_level (DOP853 shooting, independent).
    from dirac_reference import klein_gordon_level

    Z = 92
    res = radsolve.solve(radsolve.potential("finite_nucleus", Z=Z, radius="5.86fm"), l=[0, 1], count=2,
                         equation="klein-gordon", tol=1e-10, method="both")
    assert res.success, res.message
    V, V0, R = _uniform_sphere(Z, 5.86)
    for label, l, nodes, match in (("1s", 0, 0, 0.01), ("2s", 0, 1, 0.05), ("2p", 1, 0, 0.05)):
        lev = res.level(label)
        reference = klein_gordon_level(V, V0, l, nodes, (lev.energy * 1.001, lev.energy * 0.999),
                                       r_match=match, cuts=(R,))
        assert abs(lev.energy - reference) <= 1e-10 * abs(reference), (label, lev.energy, reference)


@pytest.mark.parametrize("Z", [1, 92])
def test_dirac_moments_and_components_of_the_point_charge_ground_state(Z):
    # 1s1/2 of a point charge: G, F ~ r^gamma exp(-Z r) (atomic units), so <r^k> =
    # Gamma(2 gamma + k + 1) / (Gamma(2 gamma + 1) (2 Z)^k) and F/G -> (gamma + kappa)/(Z alpha) at the
    # origin (textbook, e.g. Bethe and Salpeter 1957, sec. 14).
    from scipy.special import gamma as Gamma

    from radsolve.analysis.relativistic import dirac_components, moment

    res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=0, count=1, equation="dirac", tol=1e-10)
    g = math.sqrt(1.0 - (Z * ALPHA) ** 2)
    for k in (-1, 1, 2, 3):
        est = moment(res, "1s1/2", k)
        exact = Gamma(2 * g + k + 1) / (Gamma(2 * g + 1) * (2.0 * Z) ** k)
        assert abs(est.value - exact) <= 1e-9 * abs(exact), (k, est.value, exact)
        assert abs(est.value - exact) <= est.error, (k, est.value - exact, est.error)
    r, G, F = dirac_components(res, "1s1/2")
    near = np.nonzero((r > 1e-4 / Z) & (r < 2e-4 / Z) & (G != 0))[0]
    # F is the small difference G' - G/r there (relative size (Z alpha)^2 / 4 for Z = 1): from the finest
    # grid alone, without extrapolation, it keeps about two digits for Z = 1, more for Z = 92
    assert np.allclose(F[near] / G[near], (g - 1.0) / (Z * ALPHA), rtol=2e-2 if Z == 1 else 1e-3)
    with pytest.raises(InputError):
        moment(radsolve.solve("coulomb", l=0, count=1), "1s", 1)  # a Schrodinger result


def test_relativistic_e1_rates_of_hydrogen_like_2p_levels():
    # 2p1/2 -> 1s1/2 and 2p3/2 -> 1s1/2: equal to the non-relativistic rate (4/3)(omega/c)^3 (1/3) R^2 with
    # R = 2^7 sqrt(6) / (3^5 Z) (textbook hydrogen values) up to corrections of order (Z alpha)^2 (textbook),
    # which double-Z scaling confirms.  Angular factors against sympy's 3j symbols.
    from sympy import Rational
    from sympy.physics.wigner import wigner_3j

    from radsolve.analysis.relativistic import _three_j_half, e1_rate

    half = Rational(1, 2)
    for j1, j2 in ((0.5, 0.5), (0.5, 1.5), (1.5, 2.5), (2.5, 1.5)):
        exact = float(wigner_3j(Rational(int(2 * j1), 2), Rational(int(2 * j2), 2), 1, -half, half, 0))
        assert _three_j_half(j1, j2) == pytest.approx(exact, abs=1e-14)
    au_time = physical_constants["atomic unit of time"][0]
    coefficient = {}
    for Z in (1.0, 10.0, 20.0):
        res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=[0, 1], count=1, equation="dirac")
        radial, omega = 128.0 * math.sqrt(6.0) / (243.0 * Z), 3.0 * Z**2 / 8.0
        plain = 4.0 * omega**3 * ALPHA**3 / 3.0 / 3.0 * radial**2 / au_time
        for upper in ("2p1/2", "2p3/2"):
            rate = e1_rate(res, upper, "1s1/2")
            change = rate.value / plain - 1.0
            assert abs(change) <= 3.0 * (Z * ALPHA) ** 2 + rate.error / plain
            coefficient[(Z, upper)] = change / (Z * ALPHA) ** 2
    # the correction of 2p3/2 is c (Z alpha)^2 with the same c at every Z (within 1%); that of 2p1/2 is
    # an order of magnitude smaller (|c| < 0.02) and its higher orders show already at Z = 20
    for Z in (1.0, 20.0):
        assert coefficient[(Z, "2p3/2")] == pytest.approx(coefficient[(10.0, "2p3/2")], rel=0.01)
    assert all(abs(coefficient[(Z, "2p1/2")]) < 0.02 for Z in (1.0, 10.0, 20.0))
    with pytest.raises(InputError):
        e1_rate(res, "2s1/2", "1s1/2")  # not E1


MEAN_FIELD = '''
import numpy as np

NAME = "gauss_mean_field"
PARAMETERS = {"V0": 2000.0, "S0": 2000.0, "a": 0.05, "slope": 0.0}


def V(r, V0, S0, a, slope):
    return -V0 * np.exp(-(r / a) ** 2)


def scalar_potential(r, V0, S0, a, slope):
    return -S0 * np.exp(-(r / a) ** 2) + slope * r
'''


@pytest.fixture()
def mean_field(tmp_path):
    (tmp_path / "gauss_mean_field.py").write_text(MEAN_FIELD, encoding="utf-8")
    return radsolve.potential("gauss_mean_field", plugins=[tmp_path])


def test_scalar_potential_spin_symmetry_and_klein_gordon_identity(mean_field):
    # V = S (the vector and the Lorentz scalar equal): spin symmetry, p1/2 and p3/2 degenerate (textbook;
    # Ginocchio, Phys. Rep. 414, 165 (2005)), by both independent methods.
    for method in ("fd", "first-order"):
        res = radsolve.solve(mean_field, l=1, count=1, equation="dirac", scalar=True, method=method)
        assert res.success, res.message
        p1, p3 = res.level("2p1/2"), res.level("2p3/2")
        assert abs(p1.energy - p3.energy) <= 1e-12 * abs(p1.energy) + p1.error_estimate
    # Klein-Gordon with a scalar alone: (W + M)^2 = (pc)^2 + (M + S)^2 is exactly the Schrodinger
    # problem of S + S^2/(2M) at energy W + W^2/(2M) (textbook identity); that problem solved as a formula.
    from radsolve.potentials.formula import formula_potential

    res = radsolve.solve(mean_field.with_parameters(V0=0.0), l=[0, 1], count=2, equation="klein-gordon",
                         scalar=True)
    plain = radsolve.solve(formula_potential("-S0*exp(-(r/a)**2) + (S0*exp(-(r/a)**2))**2/(2*M)", S0=2000.0,
                                             a=0.05, M=MC2), l=[0, 1], count=2)
    assert len(res.levels) == len(plain.levels) > 0
    for lev, ref in zip(res.levels, plain.levels):
        assert lev.label == ref.label
        assert lev.energy + lev.energy**2 / (2.0 * MC2) == pytest.approx(ref.energy, rel=1e-10)
    # the same identity with a confining scalar (slope > 0): every level bound
    res = radsolve.solve(mean_field.with_parameters(V0=0.0, slope=100.0), l=[0, 1], count=2,
                         equation="klein-gordon", scalar=True)
    plain = radsolve.solve(formula_potential("(-S0*exp(-(r/a)**2) + k*r) + (-S0*exp(-(r/a)**2) + k*r)**2/(2*M)",
                                             S0=2000.0, a=0.05, k=100.0, M=MC2), l=[0, 1], count=2)
    assert res.success and plain.success and len(res.levels) == 4
    for lev, ref in zip(res.levels, plain.levels):
        assert lev.label == ref.label
        assert lev.energy + lev.energy**2 / (2.0 * MC2) == pytest.approx(ref.energy, rel=1e-9)
    with pytest.raises(InputError) as err:  # a scalar falling without bound: the mass term turns negative
        radsolve.solve(mean_field.with_parameters(slope=-100.0), equation="dirac", scalar=True)
    assert err.value.parameter == "scalar" and "falls without bound" in str(err.value)


def test_fit_to_dirac_levels_recovers_the_charge():
    # Targets from Sommerfeld's formula (textbook) for Z = 50: the fit of coulomb's Z with the Dirac
    # equation returns 50; Schrodinger levels could not (their 2p is not split).
    targets = [("1s1/2", sommerfeld(1, -1, 50), 1e-6), ("2p3/2", sommerfeld(2, -2, 50), 1e-6),
               ("2p1/2", sommerfeld(2, 1, 50), 1e-6)]
    res = radsolve.fit(radsolve.potential("coulomb", Z=45.0), targets, free=["Z"], equation="dirac", tol=1e-10)
    assert res.success, res.message
    assert res.values["Z"] == pytest.approx(50.0, rel=1e-9)
    with pytest.raises(InputError) as err:
        radsolve.fit("coulomb", [("1s", -0.5, 1e-6)], free=["Z"], equation="dirac")
    assert err.value.parameter == "targets"


def test_relativistic_thresholds_of_the_screened_coulomb_potential():
    # Yukawa -Z exp(-r/D)/r: the Schrodinger 1s unbinds at D Z = 0.8399 (Rogers, Graboske & Harwood,
    # Phys. Rev. A 1, 1577 (1970); from memory, 4 digits).  Relativity binds more strongly, so the
    # Dirac and Klein-Gordon critical lengths are shorter, by a relative amount that grows like
    # (Z alpha)^2 (checked: the coefficient is the same at Z = 10 and 20 within 3%).
    coefficient = {}
    for Z in (1.0, 10.0, 20.0):
        pot = radsolve.potential("yukawa", Z=Z)
        plain = radsolve.threshold(pot, "screening_length", level="1s")
        dirac = radsolve.threshold(pot, "screening_length", level="1s1/2", equation="dirac")
        kg = radsolve.threshold(pot, "screening_length", level="1s", equation="klein-gordon")
        assert dirac.success and kg.success and dirac.to_dict()["equation"] == "dirac"
        assert dirac.value < plain.value and kg.value < plain.value
        for name, res in (("dirac", dirac), ("kg", kg)):
            coefficient[(name, Z)] = (res.value - plain.value) / plain.value / (Z * ALPHA) ** 2
        if Z == 1.0:
            assert dirac.value * Z == pytest.approx(0.8399, abs=2e-4)
    for name in ("dirac", "kg"):
        assert coefficient[(name, 20.0)] == pytest.approx(coefficient[(name, 10.0)], rel=0.03)
    # Just beyond the Dirac critical length the level exists (a solve's own count says so), just before not
    Z = 15.0
    d_c = radsolve.threshold(radsolve.potential("yukawa", Z=Z), "screening_length", level="1s1/2",
                             equation="dirac").value
    above = radsolve.solve(radsolve.potential("yukawa", Z=Z, screening_length=d_c * 1.001), l=0, count=1,
                           equation="dirac")
    below = radsolve.solve(radsolve.potential("yukawa", Z=Z, screening_length=d_c * 0.999), l=0, count=1,
                           equation="dirac")
    assert len(above.levels) == 1 and not below.levels
    assert list(below.certificates.values())[0].count == 0
    with pytest.raises(InputError):
        radsolve.threshold("yukawa", "screening_length", level="1s", equation="dirac")  # Dirac needs j


@pytest.mark.parametrize("equation, method, label, exact", [
    ("klein-gordon", "both", "2s", lambda: klein_gordon(2, 0, 50)),
    ("dirac", "first-order", "2s1/2", lambda: sommerfeld(2, -1, 50)),
])
def test_levels_command_methods(equation, method, label, exact):
    import json

    out = invoke("levels", "coulomb", "-p", "Z=50", "--lmax", "0", "--count", "2", "--equation", equation,
                 "--method", method, "--format", "json")
    assert out.exit_code == 0, out.stderr
    doc = json.loads(out.stdout)
    lev = {x["label"]: x for x in doc["levels"]}[label]
    assert lev["energy"] == pytest.approx(exact(), rel=1e-10)
    assert doc["equation"] == equation


def test_dirac_e1_lines_lifetimes_and_branching():
    # Hydrogen-like Z = 10, n <= 3: 3p3/2 decays to 1s1/2 and 2s1/2 (and, with a negligible rate, to 3s1/2
    # below it by the fine structure).  The branching of 3p to 1s is about 0.88 in hydrogen (A(3p->1s) =
    # 1.6725e8, A(3p->2s) = 2.245e7 s^-1 for Z = 1, Wiese and Fuhr tables; from memory), a ratio that
    # is the same at every Z without relativity, so it holds at Z = 10 up to order (Z alpha)^2.
    from radsolve.analysis.relativistic import e1_lines

    res = radsolve.solve(radsolve.potential("coulomb", Z=10), l=[0, 1], count=3, equation="dirac")
    lines = e1_lines(res)
    three_p = {x["lower"]: x for x in lines if x["upper"] == "3p3/2"}
    assert set(three_p) >= {"1s1/2", "2s1/2"}
    expected = 1.6725e8 / (1.6725e8 + 2.245e7)
    assert three_p["1s1/2"]["branching"] == pytest.approx(expected, rel=2e-3)
    assert sum(x["branching"] for x in three_p.values()) == pytest.approx(1.0, rel=1e-12)
    two_p = [x for x in lines if x["upper"] == "2p1/2"]
    assert [x["lower"] for x in two_p] == ["1s1/2"]  # 2s1/2 is degenerate with it: no line


RMF_LIKE = '''
import numpy as np

NAME = "rmf_like"
UNITS = "nuclear"
PARAMETERS = {"V0": 350.0, "S0": 400.0, "R": 6.0, "a": 0.65}


def V(r, V0, S0, R, a):
    return V0 / (1.0 + np.exp((r - R) / a))


def scalar_potential(r, V0, S0, R, a):
    return -S0 / (1.0 + np.exp((r - R) / a))
'''


def test_nuclear_units_mean_field_spin_orbit_sign(tmp_path):
    # A repulsive vector and a stronger attractive scalar Woods-Saxon field (relativistic mean-field
    # shape; parameters of our own): the spin-orbit splitting comes out of the Dirac equation with the
    # nuclear sign, j = l + 1/2 below j = l - 1/2 (textbook: Serot and Walecka, Adv. Nucl. Phys. 16, 1
    # (1986); from memory), opposite to a vector well alone (atoms: 2p3/2 above 2p1/2).  Labels in the
    # shell-model convention; the two independent methods agree.
    (tmp_path / "rmf_like.py").write_text(RMF_LIKE, encoding="utf-8")
    pot = radsolve.potential("rmf_like", plugins=[tmp_path])
    res = radsolve.solve(pot, l=[0, 1, 2], count=1, mass="938.272MeV", equation="dirac", scalar=True,
                         method="both")
    assert res.success, res.message
    assert {lev.label for lev in res.levels} == {"1s1/2", "1p1/2", "1p3/2", "1d3/2", "1d5/2"}
    assert res.level("1p3/2").energy < res.level("1p1/2").energy
    assert res.level("1d5/2").energy < res.level("1d3/2").energy
    for lev in res.levels:
        fd, shooting = lev.method_energies["fd"], lev.method_energies["first-order"]
        assert abs(fd - shooting) <= 1e-9 * abs(lev.energy)
    vector_only = radsolve.solve(pot.with_parameters(V0=-50.0, S0=0.0), l=1, count=1, mass="938.272MeV",
                                 equation="dirac", method="both")
    assert vector_only.level("1p3/2").energy > vector_only.level("1p1/2").energy
