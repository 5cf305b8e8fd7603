"""Formula potentials (radsolve.potentials.formula): safe parsing, vectorized evaluation, solving.

Sources of the reference values:

* exact hydrogen-like levels -Z^2/(2 n^2) hartree: sympy.physics.hydrogen.E_nl
  (reference library);
* Yukawa levels of -Z exp(-r/D)/r: an independent solve_ivp shooting (scipy);
* the Yukawa potential evaluated with numpy directly; the built-in ``yukawa``
  family only as a consistency check (same V, written independently, same solver);
* the bohr, the angstrom, hbar c and alpha: CODATA via scipy.constants;
* erf: scipy.special (reference library).
"""

from __future__ import annotations

import ast
import builtins
import math
import pickle

import numpy as np
import pytest
from scipy import constants as const
from scipy.special import erf

import radsolve
from helpers import exact_hydrogenic, invoke
from independent_shooting import shooting_energy
from radsolve.errors import InputError, PluginError
from radsolve.potentials.formula import CONSTANTS, FUNCTIONS, Formula, FormulaError, formula_potential

BOHR_IN_ANGSTROM = const.physical_constants["Bohr radius"][0] / const.angstrom


# ---------------------------------------------------------------- evaluation


def test_values_match_numpy_bit_for_bit():
    # Source: the expression evaluated with numpy directly.
    r = np.geomspace(1e-6, 1e3, 777)
    pot = formula_potential("-Z*exp(-r/D)/r", Z=1.5, D=7.0)
    assert np.array_equal(pot(r), -1.5 * np.exp(-r / 7.0) / r)


def test_functions_and_constants():
    # Sources: scipy.special.erf; pi from math; alpha and hbar c from scipy.constants (CODATA).
    r = np.linspace(0.1, 5.0, 50)
    pot = formula_potential("-Z*erf(r/s)/r + 0*pi", Z=2.0, s=0.5)
    assert np.allclose(pot(r), -2.0 * erf(r / 0.5) / r, rtol=1e-15, atol=0)
    nuclear = Formula("hbarc + 0*r", units="nuclear")
    hbarc = const.hbar * const.c / (const.mega * const.e * const.femto)
    assert nuclear(np.array([1.0]))[0] == pytest.approx(hbarc, rel=1e-15)
    atomic = Formula("hbarc*alpha + 0*r")
    assert atomic(np.array([1.0]))[0] == pytest.approx(1.0, rel=1e-15)  # hbar c alpha = 1 hartree bohr
    assert set(CONSTANTS) == {"pi", "alpha", "hbarc"}


def test_a_constant_formula_gives_one_value_per_radius():
    pot = formula_potential("-0.25")
    r = np.linspace(1.0, 2.0, 9)
    assert pot(r).shape == r.shape and np.all(pot(r) == -0.25)


def test_parameters_are_the_free_names_in_order():
    f = Formula("-A*exp(-r/B) + A*C/r + pi")
    assert f.parameters == ("A", "B", "C")


def test_parameter_values_may_carry_units():
    # Source: bohr and angstrom from scipy.constants (CODATA).
    pot = formula_potential("-Z*exp(-r/D)/r", Z=1, D="5angstrom")
    assert pot.parameters["D"] == pytest.approx(5.0 / BOHR_IN_ANGSTROM, rel=1e-14)
    nuclear = formula_potential("-V0*exp(-r/b)", units="nuclear", V0="50MeV", b="1fm")
    assert nuclear.parameters == {"V0": pytest.approx(50.0, rel=1e-14), "b": pytest.approx(1.0, rel=1e-14)}


def test_formula_potentials_pickle():
    pot = formula_potential("-Z*exp(-r/D)/r", Z=1, D=10)
    again = pickle.loads(pickle.dumps(pot))
    assert again == pot
    assert np.array_equal(again(np.array([0.5, 3.0])), pot(np.array([0.5, 3.0])))


# ---------------------------------------------------------------- physics


def test_formula_consistency_with_yukawa_family():
    # Consistency check, not an accuracy reference: the formula and the yukawa family
    # describe the same V and go through the same solver, so they must agree to
    # rounding.  The formula has no hooks (V(inf), small-r law are probed); yukawa has
    # them, so this checks that the probing finds the same problem.  When it does, the
    # two solves run on the same grids and differ only by the rounding of V (~1e-16
    # relative); 1e-12 relative leaves room for that while still catching a different
    # box, grid or origin law, whose effect would be of the order of the tol asked.
    # tol=1e-10: the weakly bound 3s and 3p (|E| ~ 2e-3) have a measured rounding
    # noise above 1e-11 on the grids that would resolve them further.
    formula = formula_potential("-Z*exp(-r/D)/r", Z=1, D=10)
    yukawa = radsolve.potential("yukawa", Z=1, screening_length=10)
    a = radsolve.solve(formula, l=[0, 1], count=3, tol=1e-10)
    b = radsolve.solve(yukawa, l=[0, 1], count=3, tol=1e-10)
    assert [lev.label for lev in a.levels] == [lev.label for lev in b.levels]
    assert [lev.label for lev in a.levels] == ["1s", "2s", "3s", "2p", "3p"]
    assert a.success and b.success
    for x, y in zip(a.levels, b.levels):
        assert abs(x.energy - y.energy) <= 1e-12 * max(abs(y.energy), 1e-3)


def yukawa_shooting_energy(Z, D, l, nodes, E_lo, E_hi, r_max, r0=1e-8):
    """Independent solve_ivp shooting (scipy; tests/independent_shooting.py) for
    -Z exp(-r/D)/r, mu = 1, with u started at r0 from the Coulomb series
    u = r^(l+1) (1 - Z r/(l+1)) (textbook).  No radsolve code is used."""
    def start(r):
        return (r ** (l + 1) * (1 - Z * r / (l + 1)), (l + 1) * r**l - Z * (l + 2) * r ** (l + 1) / (l + 1))

    return shooting_energy(lambda r: -Z * math.exp(-r / D) / r, l, nodes, E_lo, E_hi, r_max, r0=r0, start=start)


@pytest.mark.parametrize("l, label", [(0, "1s"), (1, "2p")])
def test_formula_yukawa_against_independent_shooting(l, label):
    # Source: independent solve_ivp shooting (scipy), yukawa_shooting_energy above.
    # r_max = 80 bohr: the 1s (kappa ~ 0.9) and 2p (kappa ~ 0.4) tails are below
    # e^-60 there.  1e-8 relative is the shooting's own accuracy with rtol = 1e-12
    # (it reproduces hydrogen to ~1e-13), with margin.
    Z, D = 1.0, 10.0
    pot = formula_potential("-Z*exp(-r/D)/r", Z=Z, D=D)
    lev = radsolve.solve(pot, l=l, count=1, tol=1e-11).level(label)
    reference = yukawa_shooting_energy(Z, D, l, 0, -0.9, -1e-3, 80.0)
    assert lev.energy == pytest.approx(reference, rel=1e-8)


def test_formula_coulomb_gives_exact_hydrogen():
    # Source: sympy.physics.hydrogen.E_nl (reference library), -Z^2/(2 n^2) hartree.
    pot = formula_potential("-Z/r", Z=2)
    res = radsolve.solve(pot, l=[0, 1], count=3, tol=1e-11)
    assert len(res.levels) == 6
    for lev in res.levels:
        exact = exact_hydrogenic(lev.n, 2)
        assert lev.energy == pytest.approx(exact, rel=1e-10)


# ---------------------------------------------------------------- hostile input


HOSTILE = [
    "__import__('os').system('touch {sentinel}')",
    "open('{sentinel}', 'w')",
    "exec(\"open('{sentinel}','w')\")",
    "eval(\"open('{sentinel}','w')\")",
    "().__class__.__bases__[0].__subclasses__()",
    "r.__class__",
    "exp.__globals__",
    "__builtins__",
    "_secret",
    "lambda: open('{sentinel}', 'w')",
    "[open('{sentinel}', 'w') for x in (1,)]",
    "{{x: 1 for x in (1,)}}",
    "(x for x in (1,))",
    "getattr(r, 'real')",
    "globals()",
    "np.exp(r)",
    "r if r else 1",
    "r > 1",
    "r and 1",
    "not r",
    "r[0]",
    "r[0:1]",
    "(r := 1)",
    "'text'",
    "b'bytes'",
    "f'{{r}}'",
    "1j*r",
    "True*r",
    "None",
    "...",
    "[r]",
    "(r, r)",
    "{{r}}",
    "r // 2",
    "r % 2",
    "r @ r",
    "r << 1",
    "~r",
    "exp(r, out=r)",
    "exp(*[r])",
    "exp(**{{'x': r}})",
    "exp(r, r)",
    "exp",
    "import os",
    "r; open('{sentinel}', 'w')",
    "r\nopen('{sentinel}', 'w')",
    "1" + "0" * 400,
    "exp(" * 100 + "r" + ")" * 100,
    "-" * 5000 + "r",
    "r" + "+r" * 1500,
    "",
    "   ",
]


@pytest.mark.parametrize("template", HOSTILE)
def test_hostile_expressions_are_refused_without_side_effects(template, tmp_path, monkeypatch):
    sentinel = tmp_path / "pwned"
    expr = template.format(sentinel=sentinel)

    def forbidden(*args, **kwargs):  # the parser must never get here
        raise AssertionError("eval/exec was called")

    real_compile = builtins.compile

    def parse_only(source, filename, mode, flags=0, *args, **kwargs):
        # ast.parse compiles to a syntax tree only; compiling to code is refused.
        if not flags & ast.PyCF_ONLY_AST:
            raise AssertionError("compile to code was called")
        return real_compile(source, filename, mode, flags, *args, **kwargs)

    monkeypatch.setattr(builtins, "eval", forbidden)
    monkeypatch.setattr(builtins, "exec", forbidden)
    monkeypatch.setattr(builtins, "compile", parse_only)
    with pytest.raises(FormulaError) as info:
        Formula(expr)
    monkeypatch.undo()
    message = str(info.value)
    assert message.startswith("formula ") or message.startswith("the formula")
    assert not sentinel.exists()
    assert "Traceback" not in message


def test_refusal_says_what_is_allowed():
    with pytest.raises(FormulaError, match=r"the function 'open' is not allowed.*allowed: the radius r"):
        Formula("open('x')")
    with pytest.raises(FormulaError, match="attribute access"):
        Formula("r.real")
    with pytest.raises(FormulaError, match="exp takes 1 argument, got 2"):
        Formula("exp(r, r)")
    with pytest.raises(FormulaError, match="keyword arguments"):
        Formula("exp(x=r)")


def test_every_whitelisted_function_is_usable():
    # Each name in the whitelist must evaluate (on radii where all are defined).
    r = np.linspace(0.2, 0.9, 8)
    for name, arity in FUNCTIONS.items():
        args = ", ".join(["r"] * arity)
        values = Formula(f"{name}({args})")(r)
        assert values.shape == r.shape, name


def test_missing_and_unused_parameters_are_named():
    with pytest.raises(InputError, match="uses parameter.* D without a value"):
        formula_potential("-Z*exp(-r/D)/r", Z=1)
    with pytest.raises(InputError, match="Q do not appear"):
        formula_potential("-Z/r", Z=1, Q=2)
    with pytest.raises(InputError, match="reserved"):
        formula_potential("-l/r", l=1)
    with pytest.raises(InputError, match="parameter 'D' of the formula: cannot read"):
        formula_potential("-exp(-r/D)/r", D="5 parsecs")


def test_non_finite_values_are_reported_not_returned():
    pot = formula_potential("sqrt(-r)")
    with pytest.raises(PluginError, match="formula.*nan at r = 1"):
        pot(np.array([1.0, 2.0]))
    huge = formula_potential("9**9**9*r")  # overflows to inf rather than hanging
    with pytest.raises(PluginError, match="inf"):
        huge(np.array([1.0]))


# ---------------------------------------------------------------- command line


def test_cli_formula_levels_match_python():
    result = invoke("levels", "formula", "--expr", "-Z*exp(-r/D)/r", "-p", "Z=1",
                    "-p", "D=10", "-l", "0", "-k", "2", "-f", "json")
    assert result.exit_code == 0, result.output
    import json

    doc = json.loads(result.stdout)
    direct = radsolve.solve(formula_potential("-Z*exp(-r/D)/r", Z=1, D=10), l=0, count=2)
    assert [lev["energy"] for lev in doc["levels"]] == pytest.approx(
        [lev.energy for lev in direct.levels], rel=1e-12)
    assert doc["potential"] == "formula"


@pytest.mark.parametrize("args, fragment", [
    (["--expr", "__import__('os').getcwd()"], "not allowed in a formula"),
    (["--expr", "-Z/r"], "Z without a value"),
    ([], "needs --expr"),
    (["--expr", "exp(r"], "not a valid expression"),
])
def test_cli_bad_formulas_exit_2_with_one_line(args, fragment):
    result = invoke("levels", "formula", *args)
    assert result.exit_code == 2
    assert fragment in result.stderr
    assert "Traceback" not in result.output + result.stderr
