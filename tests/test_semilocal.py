"""l-dependent (semilocal) potentials: the alkali_model family and V_l in the solver.

Sources of the reference values:

* the model potential and its parameters: M. Marinescu, H. R. Sadeghpour and
  A. Dalgarno, Phys. Rev. A 49, 982 (1994) (parameters from memory, see
  potentials/alkali_model.py);
* measured term values of the alkali atoms (NIST Atomic Spectra Database,
  from memory): ionization energies Li 43487.15, Na 41449.45, K 35009.81,
  Rb 33690.81, Cs 31406.47 cm^-1; the fine-structure-averaged binding of
  Na 3p 24481.8 cm^-1 (3p levels at 16956.17 and 16973.37 cm^-1), Na 3d
  12276.6 cm^-1 (3d at 29172.85), Rb 5p 20953.5 cm^-1 (5p at 12578.95 and
  12816.55), Rb 4d 14335.6 cm^-1 (4d at 19355.2);
* nonpenetrating orbits are nearly hydrogenic, binding ~ R/n^2 with R the
  Rydberg energy: a fact of the trade; hartree in cm^-1 from scipy.constants.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as const

import radsolve
from radsolve.errors import InputError
from radsolve.potentials.builtin import alkali_model
from radsolve.potentials import make_family

HARTREE_IN_CM = const.physical_constants["hartree-inverse meter relationship"][0] / 100.0

IONIZATION_CM = {("Li", "2s"): 43487.15, ("Na", "3s"): 41449.45, ("K", "4s"): 35009.81,
                 ("Rb", "5s"): 33690.81, ("Cs", "6s"): 31406.47}
EXCITED_CM = {("Na", "3p"): 24481.8, ("Na", "3d"): 12276.6, ("Rb", "5p"): 20953.5,
              ("Rb", "4d"): 14335.6}


def binding_cm(level) -> float:
    return -level.energy * HARTREE_IN_CM


@pytest.fixture(scope="module")
def spectra():
    out = {}
    for element in alkali_model.TABLE:
        res = radsolve.solve(radsolve.potential("alkali_model", element=element), l=[0, 1, 2, 3],
                             count=6, tol=1e-9)
        assert res.success, element
        out[element] = {lev.label: lev for lev in res.levels}
    return out


def test_ground_states_give_the_ionization_energies(spectra):
    # Source: NIST ASD ionization energies (from memory).  The model was fitted to the
    # term values; 1e-4 is the fit's quality, not the solver's.
    for (element, label), measured in IONIZATION_CM.items():
        assert binding_cm(spectra[element][label]) == pytest.approx(measured, rel=1e-4), element


def test_each_l_uses_its_own_potential(spectra):
    # Source: NIST ASD term values (from memory), fine-structure averaged (the model has
    # no spin-orbit term); agreement to 0.5 % (the fit's quality for p and d levels).
    for (element, label), measured in EXCITED_CM.items():
        assert binding_cm(spectra[element][label]) == pytest.approx(measured, rel=5e-3), (element, label)
    # The same p level with the central (l >= 3) potential instead of V_1 misses badly:
    # the solver must have used V_1 above.
    central = make_family("na_central", lambda r: alkali_model.V(r, "Na"), {})
    res = radsolve.solve(central.bind(), l=1, count=2, tol=1e-9)
    assert abs(binding_cm(res.levels[1]) / EXCITED_CM[("Na", "3p")] - 1) > 0.05


def test_nonpenetrating_levels_are_nearly_hydrogenic(spectra):
    # Facts of the trade: binding = R/(n - delta)^2 with R = 1/2 hartree; the f series of
    # the alkalis has small quantum defects delta (below 0.05; about 0.03 for Cs, from
    # memory), nearly constant along the series (Rydberg-Ritz), and largest for the
    # heaviest, most polarizable core.
    defects = {}
    for element, levels in spectra.items():
        delta = [n - np.sqrt(0.5 / -levels[f"{n}f"].energy) for n in (4, 5, 6)]
        assert all(0 <= d < 0.05 for d in delta), (element, delta)
        assert max(delta) - min(delta) < 0.01, (element, delta)
        defects[element] = delta[-1]
    assert defects["Cs"] > defects["Rb"] > defects["K"] > defects["Na"]


def test_core_like_levels_lie_below_the_valence_ones(spectra):
    # The potential is -z/r at the nucleus, so it binds core-like states and the node
    # count gives the spectroscopic n: for sodium, 1s and 2s below 3s, 2p below 3p.
    na = spectra["Na"]
    assert na["1s"].energy < na["2s"].energy < na["3s"].energy
    assert na["2p"].energy < na["3p"].energy
    assert "3d" in na and "2d" not in na


def test_potential_shape():
    # Marinescu et al. (1994): Z_l -> z at the nucleus, -> 1 far out; the polarization tail
    # is -alpha_c/(2 r^4) (textbook).
    for element, (z, alpha_c, _) in alkali_model.TABLE.items():
        for l in (0, 1, 2, 3, 7):
            r_small = np.array([1e-9])
            assert (alkali_model.V_l(r_small, l, element) * r_small)[0] == pytest.approx(-z, rel=1e-6)
            r_far = np.array([200.0])
            tail = -1.0 / r_far - alpha_c / (2 * r_far**4)
            assert alkali_model.V_l(r_far, l, element) == pytest.approx(tail, rel=1e-12)
        assert np.array_equal(alkali_model.V_l(np.array([1.3]), 9, element),
                              alkali_model.V(np.array([1.3]), element))


def test_semilocal_family_is_l_dependent_and_refuses_spin_orbit():
    pot = radsolve.potential("alkali_model", element="rb")  # choices ignore case
    assert pot.parameters["element"] == "Rb" and pot.l_dependent and not pot.has_spin_orbit
    with pytest.raises(InputError, match="no spin-orbit term"):
        radsolve.solve(pot, l=1, spin_orbit=True)
    with pytest.raises(InputError, match="must be one of Li, Na, K, Rb, Cs"):
        radsolve.potential("alkali_model", element="Fr")
