"""The convergence reporter radsolve.analysis.convergence (radsolve.check from Python).

Outside references: sympy.physics.hydrogen.E_nl (source: sympy), the exact
non-relativistic point-nucleus level -Z^2/(2 n^2) hartree for infinite
nuclear mass, scaled by the reduced mass mu (textbook formula); reduced
masses from the CODATA mass ratios in scipy.constants (source: CODATA via
scipy.constants).
"""

from __future__ import annotations

import math

import pytest
from scipy.constants import physical_constants

from helpers import exact_hydrogenic, invoke
from radsolve.analysis.convergence import (MethodOutcome, _assess, check, exact_coulomb_energy,
                            format_check)


def ratio(name: str) -> float:
    return physical_constants[f"{name}-electron mass ratio"][0]  # CODATA via scipy.constants


def reduced(m1: float, m2: float) -> float:
    return m1 * m2 / (m1 + m2)


MU = {
    1.0: 1.0,
    "electron+proton": reduced(1.0, ratio("proton")),
    "muon+proton": reduced(ratio("muon"), ratio("proton")),
}


@pytest.mark.parametrize("Z", [1, 2, 10, 92])
@pytest.mark.parametrize("n", [1, 2, 7, 10])
def test_exact_formula_matches_sympy(n, Z):
    for mu in MU.values():
        assert exact_coulomb_energy(n, Z, mu) == pytest.approx(exact_hydrogenic(n, Z, mu), rel=1e-15)


@pytest.fixture(scope="module")
def small_report():
    # A reduced set: two charges, a light and a heavy reduced mass, n <= 3.
    return check(tol=1e-10, charges=(1, 10), masses=(1.0, "muon+proton"), nmax=3, equations=("schrodinger",))


def test_reduced_check_passes(small_report):
    assert small_report.passed, small_report.failures
    assert small_report.failures == []
    assert small_report.verdict.startswith("check passed")


def test_report_covers_every_level_and_uses_exact_values(small_report):
    rows = small_report.rows
    # every (n, l) with l < n <= 3 for each (Z, mu): 6 levels x 2 x 2
    assert len(rows) == 24
    assert {(r.n, r.l) for r in rows} == {(n, l) for n in (1, 2, 3) for l in range(n)}
    for row in rows:
        mu = MU[1.0] if row.mass_name == "1.0" else MU[row.mass_name]
        assert row.mass == pytest.approx(mu, rel=1e-12)
        expected = exact_hydrogenic(row.n, row.Z, mu)
        assert row.exact == pytest.approx(expected, rel=1e-14)
        assert set(row.outcomes) == {"fd", "numerov"}
        for method in ("fd", "numerov"):
            energy = row.energy(method)
            # the solver itself, against sympy, to the tolerance asked
            assert abs(energy - expected) <= 1e-10 * abs(expected), (row.label, method)
            assert row.relative_error(method) == pytest.approx(
                (energy - row.exact) / abs(row.exact), rel=1e-12, abs=1e-18)
            assert row.relative_estimate(method) >= 0.0


def test_format_fits_80_columns_and_ends_with_verdict(small_report):
    text = format_check(small_report)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 80
    assert lines[-1] == small_report.verdict
    assert sum(line.startswith("== Z =") for line in lines) == 4  # one block per (Z, mu)
    assert "muon+proton" in text


def test_impossible_tolerance_fails_in_python():
    report = check(tol=1e-18, charges=(1,), masses=(1.0,), nmax=1, methods=("fd",))
    assert not report.passed
    assert report.failures and report.verdict.startswith("check FAILED")


def test_tolerance_at_the_rounding_floor_fails_on_accuracy():
    # 1e-14 relative for |E| = 4232 hartree is at the double-precision floor (common
    # practice), so the solver cannot honestly meet it; the reporter must then say
    # "not converged" or "error > tol" (not merely "missing").
    report = check(tol=1e-14, charges=(92,), masses=(1.0,), nmax=2)
    assert not report.passed
    problems = {p for row in report.rows for o in row.outcomes.values() for p in o.problems}
    assert problems and problems <= {"not converged", "error > tol", "estimate too small"}


def test_impossible_tolerance_fails_on_the_command_line():
    result = invoke("check", "--quick", "--tol", "1e-18")
    assert result.exit_code == 1, (result.stdout, result.stderr)
    assert "Traceback" not in result.stdout + result.stderr
    last = result.stdout.strip().splitlines()[-1]
    assert last.startswith("check FAILED")
    assert "1e-18" in result.stdout  # why the levels are missing is said once


# -------------------------------------------------- the marking rules themselves


def outcome(energy, estimate, exact, converged=True):
    rel = (energy - exact) / abs(exact)
    return MethodOutcome(energy, estimate, rel, estimate / abs(exact), 4.0, converged)


def test_error_above_tol_is_marked():
    o = outcome(-0.5 * (1 - 3e-10), 1e-9, -0.5)
    _assess(o, -0.5, 1e-10)
    assert o.problems == ["error > tol"]


def test_understated_estimate_is_marked():
    # true error 1e-11 relative, estimate 100 times smaller: within tol but dishonest
    o = outcome(-0.5 * (1 - 1e-11), 0.5e-13, -0.5)
    _assess(o, -0.5, 1e-10)
    assert o.problems == ["estimate too small"]


def test_error_at_rounding_floor_needs_no_estimate():
    # 5e-15 relative is below the 1e-14 floor (common practice): not marked
    o = outcome(-0.5 * (1 - 5e-15), 0.0, -0.5)
    _assess(o, -0.5, 1e-10)
    assert o.problems == []


def test_not_converged_and_nan_are_marked():
    o = outcome(-0.5, 1e-12, -0.5, converged=False)
    _assess(o, -0.5, 1e-10)
    assert o.problems == ["not converged"]
    o = outcome(math.nan, 1e-12, -0.5)
    _assess(o, -0.5, 1e-10)
    assert "error > tol" in o.problems


def test_bad_arguments_are_refused():
    from radsolve.errors import InputError

    for kwargs in ({"tol": 0.0}, {"tol": 1.5}, {"nmax": 0}, {"charges": (-1,)},
                   {"masses": ("nosuchparticle",)}, {"methods": ()}):
        with pytest.raises(InputError):
            check(**{"charges": (1,), "masses": (1.0,), "nmax": 1, **kwargs})
