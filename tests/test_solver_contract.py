"""The contract every registered bound-state method keeps (radsolve.core.solvers.base.RadialSolver).

Every method in the registry goes through the same checks, so a new method is
one module plus one registry line and is tested the moment it is registered:
its class attributes, exact spectra of three potentials of different shape
(Coulomb, oscillator, linear: textbook formulas; Airy zeros from scipy.special),
a finite well's level count (Pöschl–Teller, textbook), and the same answer by
name and by class.  An unregistered subclass passed as ``method=`` is honoured.
"""

from __future__ import annotations


import pytest
from scipy.special import ai_zeros

import radsolve
from radsolve.core.solvers import EVERY_METHOD, METHODS, RadialSolver, solver_class
from radsolve.core.solvers.registry import DESCRIPTIONS

REGISTERED = sorted(METHODS)


@pytest.mark.parametrize("name", REGISTERED)
def test_class_attributes(name):
    cls = solver_class(name)
    assert issubclass(cls, RadialSolver) and cls is not RadialSolver
    assert cls.name == name
    assert name in DESCRIPTIONS and DESCRIPTIONS[name]
    orders = cls.error_orders
    assert orders and all(isinstance(p, int) and p > 0 for p in orders) and list(orders) == sorted(orders)
    for size in (100, 10_000, 100_000):
        floor = cls.relative_rounding(size)
        assert 0 < floor < 1e-6
    assert name != EVERY_METHOD


def _within(levels, exact_of, factor=10.0):
    for lev in levels:
        exact = exact_of(lev)
        assert lev.converged, lev
        assert abs(lev.energy - exact) <= max(factor * lev.error_estimate, 1e-13 * abs(exact)), (lev, exact)


@pytest.mark.parametrize("name", REGISTERED)
def test_coulomb_levels(name):
    res = radsolve.solve("coulomb", l=[0, 1, 2], count=3, tol=1e-9, method=name)
    assert res.success, res.message
    assert [lev.label for lev in res.levels] == ["1s", "2s", "3s", "2p", "3p", "4p", "3d", "4d", "5d"]
    _within(res.levels, lambda lev: -0.5 / lev.n**2)  # textbook formula -Z^2/(2 n^2)


@pytest.mark.parametrize("name", REGISTERED)
def test_oscillator_levels(name):
    res = radsolve.solve("harmonic", l=[0, 3], count=4, tol=1e-9, method=name)
    assert res.success, res.message
    _within(res.levels, lambda lev: 2 * lev.nodes + lev.l + 1.5)  # textbook: omega (2k + l + 3/2)


@pytest.mark.parametrize("name", REGISTERED)
def test_linear_levels(name):
    res = radsolve.solve("linear", l=0, count=4, tol=1e-9, method=name)
    assert res.success, res.message
    zeros = ai_zeros(4)[0]  # s levels of F r: E_k = -a_k (F^2 / (2 mu))^(1/3), textbook
    _within(res.levels, lambda lev: -zeros[lev.nodes] * 0.5 ** (1 / 3))


@pytest.mark.parametrize("name", REGISTERED)
def test_finite_well_count(name):
    # Pöschl–Teller -lam(lam+1)/(2 cosh^2 r), lam = 4.5: s levels are the odd 1D levels,
    # E = -(lam - n)^2 / 2 for n = 1, 3 (textbook): exactly two, whatever is asked.
    pot = radsolve.formula_potential("-4.5*5.5/(2*cosh(r)**2)")
    res = radsolve.solve(pot, l=0, count=5, tol=1e-9, method=name)
    assert len(res.levels) == 2
    assert any(note.code == "fewer_bound" for note in res.notes)
    _within(res.levels, lambda lev: -((4.5 - (2 * lev.nodes + 1)) ** 2) / 2)


@pytest.mark.parametrize("name", REGISTERED)
def test_by_name_and_by_class_agree(name):
    by_name = radsolve.solve("coulomb", l=1, count=2, tol=1e-8, method=name)
    by_class = radsolve.solve("coulomb", l=1, count=2, tol=1e-8, method=solver_class(name))
    assert [lev.energy for lev in by_name.levels] == [lev.energy for lev in by_class.levels]


def test_unregistered_subclass_is_honoured():
    base = solver_class(REGISTERED[0])

    class Renamed(base):
        name = "renamed_for_test"

    assert "renamed_for_test" not in METHODS
    res = radsolve.solve("coulomb", l=0, count=2, tol=1e-8, method=Renamed)
    assert res.method == "renamed_for_test" and res.success
    _within(res.levels, lambda lev: -0.5 / lev.n**2)  # textbook formula


def test_unknown_method_is_refused_with_the_choices():
    with pytest.raises(radsolve.RadsolveError) as info:
        radsolve.solve("coulomb", method="spline")
    text = str(info.value)
    assert "spline" in text and all(name in text for name in REGISTERED) and EVERY_METHOD in text
