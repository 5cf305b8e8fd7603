"""E1 lines of Klein-Gordon (spin-0) levels, against closed forms and the non-relativistic limit.

Sources:
- Klein-Gordon Coulomb levels (textbook, e.g. Greiner, "Relativistic Quantum Mechanics: Wave
  Equations", 2000, ch. 1): E = mc^2 [1 + (Z alpha)^2 / (n - l - 1/2 + s)^2]^(-1/2),
  s = sqrt((l + 1/2)^2 - (Z alpha)^2); a nodeless level (n = l + 1) has u = r^lam exp(-kappa r) with
  lam = 1/2 + s and kappa = sqrt(m^2 c^4 - E^2) / c (atomic units, m = 1, c = 1/alpha).
- Its charge density (E - V)/mc^2 |u|^2 normalizes the state (textbook, same reference).
- The length-form dipole of two charge-normalized states carries the weight
  (E_u + E_l - 2V)/(2 mc^2): from [p^2, r] = -2i p and p^2 u = ((E - V)^2 - m^2 c^4) u / c^2
  (textbook construction; it reduces to the Schrodinger dipole as (E - V)/mc^2 -> 1).
- The reference integrals below are mpmath quadratures of those closed forms: they share no code
  with radsolve's solvers.
"""

import mpmath
import pytest
from scipy.constants import fine_structure as ALPHA

import radsolve
from radsolve.analysis.relativistic import radial_e1


def _nodeless(Z: float, l: int):
    """(E, lam, kappa) of the Klein-Gordon Coulomb level n = l + 1, m = 1, atomic units (mpmath)."""
    c = 1 / mpmath.mpf(ALPHA)
    za = Z * mpmath.mpf(ALPHA)
    s = mpmath.sqrt((l + mpmath.mpf(1) / 2) ** 2 - za**2)
    energy = c**2 / mpmath.sqrt(1 + za**2 / (s + mpmath.mpf(1) / 2) ** 2)
    return energy, mpmath.mpf(1) / 2 + s, mpmath.sqrt(c**4 - energy**2) / c


def _reference_dipole(Z: float) -> float:
    """R(2p -> 1s) of charge-normalized nodeless states with the mixed weight, by mpmath quadrature."""
    mpmath.mp.dps = 30
    c2 = 1 / mpmath.mpf(ALPHA) ** 2
    states = []
    for l in (0, 1):
        energy, lam, kappa = _nodeless(Z, l)
        norm = mpmath.quad(lambda r: (energy + Z / r) / c2 * r ** (2 * lam) * mpmath.exp(-2 * kappa * r),
                           [0, 1, mpmath.inf])
        states.append((energy, lam, kappa, 1 / mpmath.sqrt(norm)))
    (e1, l1, k1, n1), (e2, l2, k2, n2) = states
    integrand = lambda r: (n1 * r**l1 * mpmath.exp(-k1 * r)) * (n2 * r**l2 * mpmath.exp(-k2 * r)) * r \
        * (e1 + e2 + 2 * Z / r) / (2 * c2)
    return float(mpmath.quad(integrand, [0, 1, mpmath.inf]))


@pytest.mark.parametrize("Z", [1.0, 40.0])
def test_klein_gordon_2p_1s_dipole_against_the_closed_forms(Z):
    result = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=[0, 1], count=1, equation="klein-gordon",
                            tol=1e-10)
    assert result.success, result.message
    radial = radial_e1(result, result.level("2p"), result.level("1s"))
    reference = _reference_dipole(Z)
    assert abs(radial.value - reference) <= 1e-7 * abs(reference), (radial, reference)
    assert abs(radial.value - reference) <= radial.error, (radial, reference)


def test_klein_gordon_hydrogen_lines_tend_to_the_schrodinger_ones():
    # The spin-0 E1 rates equal the non-relativistic ones up to order (Z alpha)^2 (textbook); the
    # Schrodinger 2p lifetime is 1.596 ns (from memory).
    pot = radsolve.potential("coulomb", Z=1)
    kg = radsolve.transitions(pot, 3, equation="klein-gordon", mass="electron+proton")
    plain = radsolve.transitions(pot, 3, mass="electron+proton")
    # line strengths S = l_max R^2 differ at order (Z alpha)^2 (3s -> 2p, whose integrand cancels
    # between the nodes, by 8 (Z alpha)^2); A = (4/3) alpha^3 omega^3 S / g also
    # carries omega^3, whose relative shift is larger where the two levels are close (Balmer lines)
    plain_lines = {(x.upper, x.lower): x for x in plain.lines}
    compared = 0
    for line in kg.lines:
        other = plain_lines.get((line.upper, line.lower))
        if other is not None:
            compared += 1
            assert abs(line.line_strength / other.line_strength - 1) < 10 * ALPHA**2, line
            assert abs(line.einstein_A / other.einstein_A - 1) < 20 * ALPHA**2, line
    assert compared == len(plain_lines)
    life = {s.label: s.lifetime_s for s in kg.states}
    assert life["2p"] == pytest.approx(1.596e-9, rel=2e-3)
    doc = kg.to_dict()
    assert "charge density" in doc["conventions"]["radial_integral"]
    assert "Klein-Gordon" in doc["note"]


def test_klein_gordon_tables_refuse_an_l_dependent_potential():
    from radsolve.errors import InputError

    with pytest.raises(InputError, match="l-dependent"):
        radsolve.transitions(radsolve.potential("alkali_model"), 3, equation="klein-gordon")
