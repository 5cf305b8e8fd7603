"""solve(continue_from=...): a neighbour's box and energies start a solve; the levels stay right."""

import numpy as np
import pytest

import radsolve
from helpers import exact_hydrogenic


@pytest.mark.parametrize("z_from, z_to", [(1.0, 0.4), (0.4, 1.0), (1.0, 1.0001)])
def test_continued_hydrogen_levels_are_the_exact_ones(z_from, z_to):
    # A box fitted to Z = 1 is too small for Z = 0.4 (its states reach 2.5 times further):
    # the wall test must grow it.  Exact levels -Z^2/(2 n^2) (textbook formula, sympy).
    neighbour = radsolve.solve(radsolve.potential("coulomb", Z=z_from), l=[0, 1], count=4, tol=1e-10)
    res = radsolve.solve(radsolve.potential("coulomb", Z=z_to), l=[0, 1], count=4, tol=1e-10,
                         continue_from=neighbour)
    assert res.success, res.message
    assert [lev.label for lev in res.levels] == ["1s", "2s", "3s", "4s", "2p", "3p", "4p", "5p"]
    for lev in res.levels:
        exact = exact_hydrogenic(lev.n, z_to)
        assert abs(lev.energy - exact) <= 10 * lev.error_estimate + 1e-14 * abs(exact), lev.label
        assert abs(lev.energy - exact) <= 1e-10 * abs(exact), lev.label


def test_continued_sweep_rows_agree_with_single_solves():
    # Every row of a (continued) sweep equals the single-point solve within the two estimates.
    lengths = np.linspace(1.0, 40.0, 17)
    swept = radsolve.sweep("yukawa", vary={"screening_length": lengths}, l=[0, 1], count=3, tol=1e-8,
                           workers=1)
    for label in swept.labels():
        track = swept.level(label)
        for i, length in enumerate(lengths):
            alone = radsolve.solve(radsolve.potential("yukawa", screening_length=length), l=track.l, count=3,
                                   tol=1e-8)
            found = {lev.nodes: lev for lev in alone.levels}
            if not track.bound[i]:
                assert track.nodes not in found
                continue
            lev = found[track.nodes]
            assert abs(track.energy[i] - lev.energy) <= track.error_estimate[i] + lev.error_estimate


def test_a_neighbour_that_does_not_fit_is_ignored():
    # Other partial waves, another mass or fewer levels: the solve plans its own box.
    other_l = radsolve.solve("coulomb", l=2, count=2)
    other_mass = radsolve.solve("coulomb", l=0, count=2, mass=2.0)
    for neighbour in (other_l, other_mass, None):
        res = radsolve.solve("coulomb", l=0, count=3, continue_from=neighbour)
        assert res.success
        for lev in res.levels:
            assert abs(lev.energy - exact_hydrogenic(lev.n, 1.0)) <= 1e-10 * abs(lev.energy)


def test_sweep_over_decades_in_few_steps_matches_solving_each_point_alone():
    # Coulomb Z from 1e3 to 1e-3 and back in a few steps: the length scale jumps by up to 300x
    # between neighbours.  Each row must be as good as solving its point alone: converged and
    # within its estimate of E = -Z**2 / (2 n**2) (textbook formula).
    Zs = [1000.0, 300.0, 1.0, 0.3, 0.001, 0.002, 1.0, 1000.0]
    res = radsolve.sweep("coulomb", {"Z": Zs}, l=[0], count=2, tol=1e-10, workers=1, progress=False)
    assert res.status == "success", res.message
    for label, n in (("1s", 1), ("2s", 2)):
        track = res.level(label)
        for i, Z in enumerate(Zs):
            exact = -Z**2 / (2.0 * n**2)
            assert track.bound[i] and track.converged[i], (label, Z)
            assert abs(track.energy[i] - exact) <= 10.0 * track.error_estimate[i], (label, Z)


@pytest.mark.parametrize("wrong", ["hello", 3.0, [1, 2]])
def test_continue_from_something_that_is_not_a_result_is_refused(wrong):
    with pytest.raises(radsolve.InputError, match="continue_from"):
        radsolve.solve("coulomb", l=0, count=2, continue_from=wrong)
