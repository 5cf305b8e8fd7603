"""Formula potentials: V(r) written as an expression, parsed safely.

``formula_potential("-Z*exp(-r/D)/r", Z=1, D=10)`` is a :class:`Potential`
like any family's.  The expression is read with :mod:`ast` and checked node
by node against a whitelist; it is then turned into a closure of numpy
ufuncs.  Nothing is ever handed to ``eval`` or ``exec``, so an expression
cannot reach attributes, builtins, imports or any name outside the lists
below.

What an expression may contain
------------------------------
- the radius ``r`` (bohr in atomic units, fm in nuclear units);
- numbers (integers or decimals, e.g. ``2``, ``0.5``, ``1e-3``);
- the operators ``+ - * / **`` and unary ``-`` / ``+``, and parentheses;
- the functions of :data:`FUNCTIONS` with positional arguments
  (``exp(-r/D)``, ``erf(r/s)``, ``max(a, b)``, ...);
- the constants of :data:`CONSTANTS` (``pi``; ``alpha``, the fine-structure
  constant; ``hbarc``, hbar*c in the unit system's energy times length:
  about 137.036 hartree bohr or 197.327 MeV fm; all from scipy.constants);
- parameters: every other name, whose value is given when the potential is
  made (``Z=1``); a value may carry a unit (``D="5angstrom"``), which is
  converted to the unit system's length, energy or inverse length.

V must come out real and finite at every r > 0 the solver asks for; values
are checked like those of any family.
"""

from __future__ import annotations

import ast
import math
from typing import Any, Callable

import numpy as np

from radsolve.errors import InputError

#: Longest expression accepted, characters (a guard against absurd input).
MAX_LENGTH = 2000
#: Deepest nesting of operations accepted.
MAX_DEPTH = 60

# Functions: name -> (number of arguments, how to get the numpy/scipy callable).
_NUMPY_FUNCTIONS = {
    "exp": 1, "expm1": 1, "log": 1, "log10": 1, "log1p": 1, "sqrt": 1, "cbrt": 1,
    "sin": 1, "cos": 1, "tan": 1, "arcsin": 1, "arccos": 1, "arctan": 1,
    "sinh": 1, "cosh": 1, "tanh": 1, "arcsinh": 1, "arccosh": 1, "arctanh": 1,
    "abs": 1, "sign": 1, "arctan2": 2, "hypot": 2,
}
_ALIASES = {"asin": "arcsin", "acos": "arccos", "atan": "arctan", "asinh": "arcsinh",
            "acosh": "arccosh", "atanh": "arctanh", "atan2": "arctan2"}
_SCIPY_FUNCTIONS = {"erf": 1, "erfc": 1, "gamma": 1, "j0": 1, "j1": 1, "y0": 1, "y1": 1,
                    "i0": 1, "k0": 1, "k1": 1, "expi": 1}
_EXTRA_FUNCTIONS = {"min": 2, "max": 2, "step": 1}

#: Every function an expression may call, with its number of arguments.
FUNCTIONS = dict(sorted({**_NUMPY_FUNCTIONS, **{a: _NUMPY_FUNCTIONS[t] for a, t in _ALIASES.items()},
                         **_SCIPY_FUNCTIONS, **_EXTRA_FUNCTIONS}.items()))

#: Named constants (values from scipy.constants; hbarc depends on the unit system).
CONSTANTS = ("pi", "alpha", "hbarc")

#: The name of the radius in an expression.
RADIUS = "r"

_OPERATORS = {ast.Add: np.add, ast.Sub: np.subtract, ast.Mult: np.multiply,
              ast.Div: np.divide, ast.Pow: np.power}
_OPERATOR_TEXT = {ast.FloorDiv: "//", ast.Mod: "%", ast.MatMult: "@", ast.LShift: "<<",
                  ast.RShift: ">>", ast.BitOr: "|", ast.BitXor: "^", ast.BitAnd: "&",
                  ast.Invert: "~", ast.Not: "not"}

_ALLOWED_TEXT = ("allowed: the radius r, numbers, + - * / ** and parentheses, named parameters, "
                 "the constants " + ", ".join(CONSTANTS) + " and the functions "
                 + ", ".join(FUNCTIONS) + " with positional arguments")


def _function(name: str) -> Callable:
    name = _ALIASES.get(name, name)
    if name in _NUMPY_FUNCTIONS:
        return getattr(np, name)
    if name in _SCIPY_FUNCTIONS:
        import scipy.special as special

        return getattr(special, name)
    if name == "min":
        return np.minimum
    if name == "max":
        return np.maximum
    if name == "step":
        return lambda x: np.heaviside(x, 0.5)
    raise KeyError(name)  # pragma: no cover - names are checked before


def constant_values(units: str = "atomic") -> dict[str, float]:
    """The values of :data:`CONSTANTS` in unit system ``units`` (CODATA via scipy.constants)."""
    from scipy import constants as const

    from radsolve.units import unit_system

    return {"pi": math.pi, "alpha": const.fine_structure, "hbarc": unit_system(units).hbar_c()}


class FormulaError(InputError):
    """An expression that is not a valid formula potential (``parameter="expr"``)."""

    def __init__(self, message: str = "", *, parameter: str | None = "expr", family: str | None = None):
        super().__init__(message, parameter=parameter, family=family)


def _short(expr: str, limit: int = 70) -> str:
    """The expression quoted for a message, cut to ``limit`` characters."""
    return repr(expr if len(expr) <= limit else expr[: limit - 3] + "...")


def _refuse(expr: str, what: str) -> FormulaError:
    return FormulaError(f"formula {_short(expr)}: {what} is not allowed in a formula; {_ALLOWED_TEXT}")


def _node_text(node: ast.AST) -> str:
    try:
        text = ast.unparse(node)
    except Exception:  # noqa: BLE001 - only for the message
        return type(node).__name__
    return text if len(text) <= 60 else text[:57] + "..."


def _check(expr: str, node: ast.AST, depth: int, names: list[str]) -> None:
    """Walk the tree; raise FormulaError at the first node outside the whitelist."""
    if depth > MAX_DEPTH:
        raise FormulaError(f"formula {_short(expr)}: nested more than {MAX_DEPTH} levels deep; "
                           "write a simpler expression")
    if isinstance(node, ast.Expression):
        _check(expr, node.body, depth + 1, names)
    elif isinstance(node, ast.BinOp):
        if type(node.op) not in _OPERATORS:
            raise _refuse(expr, f"the operator {_OPERATOR_TEXT.get(type(node.op), type(node.op).__name__)!r}")
        _check(expr, node.left, depth + 1, names)
        _check(expr, node.right, depth + 1, names)
    elif isinstance(node, ast.UnaryOp):
        if not isinstance(node.op, (ast.USub, ast.UAdd)):
            raise _refuse(expr, f"the operator {_OPERATOR_TEXT.get(type(node.op), type(node.op).__name__)!r}")
        _check(expr, node.operand, depth + 1, names)
    elif isinstance(node, ast.Constant):
        value = node.value
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise _refuse(expr, f"the constant {value!r} (only real numbers)")
        try:
            finite = math.isfinite(float(value))
        except OverflowError:
            finite = False
        if not finite:
            raise FormulaError(f"formula {_short(expr)}: the number {_node_text(node)} is not finite")
    elif isinstance(node, ast.Name):
        if node.id.startswith("_"):
            raise _refuse(expr, f"the name {node.id!r} (names starting with '_')")
        if node.id in FUNCTIONS:
            raise FormulaError(f"formula {_short(expr)}: {node.id!r} is a function; call it, e.g. "
                               f"{node.id}(r)")
        names.append(node.id)
    elif isinstance(node, ast.Call):
        func = node.func
        if not isinstance(func, ast.Name):
            raise _refuse(expr, f"calling {_node_text(func)!r} (only the listed functions, by name)")
        if func.id not in FUNCTIONS:
            raise _refuse(expr, f"the function {func.id!r}")
        if node.keywords:
            raise _refuse(expr, f"keyword arguments in {_node_text(node)!r}")
        if any(isinstance(a, ast.Starred) for a in node.args):
            raise _refuse(expr, f"starred arguments in {_node_text(node)!r}")
        wanted = FUNCTIONS[func.id]
        if len(node.args) != wanted:
            raise FormulaError(f"formula {_short(expr)}: {func.id} takes {wanted} argument"
                               f"{'s' if wanted != 1 else ''}, got {len(node.args)} in "
                               f"{_node_text(node)!r}")
        for arg in node.args:
            _check(expr, arg, depth + 1, names)
    else:
        kinds = {
            ast.Attribute: "attribute access", ast.Subscript: "indexing", ast.Lambda: "lambda",
            ast.ListComp: "a comprehension", ast.SetComp: "a comprehension",
            ast.DictComp: "a comprehension", ast.GeneratorExp: "a generator",
            ast.Compare: "a comparison", ast.BoolOp: "and/or", ast.IfExp: "if/else",
            ast.NamedExpr: "':='", ast.JoinedStr: "an f-string", ast.List: "a list",
            ast.Tuple: "a tuple", ast.Dict: "a dict", ast.Set: "a set", ast.Await: "await",
            ast.Yield: "yield", ast.YieldFrom: "yield", ast.Starred: "'*'", ast.Slice: "a slice",
        }
        what = kinds.get(type(node), type(node).__name__)
        raise _refuse(expr, f"{what} ({_node_text(node)!r})")


def _compile(node: ast.AST, constants: dict[str, float]) -> Callable[[np.ndarray, dict], Any]:
    """A closure f(r, params) for a checked tree; numpy ufuncs only."""
    if isinstance(node, ast.Expression):
        return _compile(node.body, constants)
    if isinstance(node, ast.BinOp):
        op = _OPERATORS[type(node.op)]
        left, right = _compile(node.left, constants), _compile(node.right, constants)
        return lambda r, p: op(left(r, p), right(r, p))
    if isinstance(node, ast.UnaryOp):
        operand = _compile(node.operand, constants)
        if isinstance(node.op, ast.USub):
            return lambda r, p: np.negative(operand(r, p))
        return operand
    if isinstance(node, ast.Constant):
        value = np.float64(node.value)  # floats: 9**9**9 overflows to inf instead of hanging
        return lambda r, p: value
    if isinstance(node, ast.Name):
        name = node.id
        if name == RADIUS:
            return lambda r, p: r
        if name in constants:
            value = np.float64(constants[name])
            return lambda r, p: value
        return lambda r, p: p[name]
    if isinstance(node, ast.Call):
        func = _function(node.func.id)
        args = [_compile(a, constants) for a in node.args]
        if len(args) == 1:
            (a,) = args
            return lambda r, p: func(a(r, p))
        a, b = args
        return lambda r, p: func(a(r, p), b(r, p))
    raise AssertionError(f"unchecked node {type(node).__name__}")  # pragma: no cover


class Formula:
    """A checked, compiled expression V(r; parameters).

    Parameters
    ----------
    expr : str
        The expression (see the module docstring for what it may contain).
    units : {"atomic", "nuclear"}
        The unit system r and V are in; it sets the value of ``hbarc``.

    Attributes
    ----------
    expr : str
        The expression as given.
    parameters : tuple of str
        The free names other than r and the constants, in order of first
        appearance.

    Raises
    ------
    FormulaError
        For a syntax error or anything outside the whitelist, naming it and
        listing what is allowed.
    """

    def __init__(self, expr: str, units: str = "atomic"):
        if not isinstance(expr, str):
            raise FormulaError(f"formula must be text, got {type(expr).__name__}")
        if units not in ("atomic", "nuclear"):
            raise InputError(f"units {units!r}: allowed: atomic, nuclear", parameter="units")
        text = expr.strip()
        if not text:
            raise FormulaError("the formula is empty; give V(r) as an expression, e.g. '-Z*exp(-r/D)/r'")
        if len(text) > MAX_LENGTH:
            raise FormulaError(f"the formula is {len(text)} characters long; at most {MAX_LENGTH} are accepted")
        if "\n" in text or "\r" in text:
            raise FormulaError(f"formula {_short(expr)}: one line only")
        try:
            tree = ast.parse(text, mode="eval")
        except SyntaxError as exc:
            where = f" at character {exc.offset}" if exc.offset else ""
            raise FormulaError(f"formula {_short(expr)}: not a valid expression{where} ({exc.msg}); "
                               f"{_ALLOWED_TEXT}") from None
        except (RecursionError, MemoryError, ValueError):
            raise FormulaError(f"formula {_short(expr)}: cannot be read (too deeply nested or "
                               "contains a null character)") from None
        names: list[str] = []
        _check(expr, tree, 0, names)
        self.expr = text
        self.units = units
        self.parameters = tuple(dict.fromkeys(
            n for n in names if n != RADIUS and n not in CONSTANTS))
        self._evaluate = _compile(tree, constant_values(units))

    def __call__(self, r: np.ndarray, **params: float) -> np.ndarray:
        """V at radii ``r`` (array) for the parameter values given as keywords."""
        missing = [p for p in self.parameters if p not in params]
        if missing:
            raise InputError(f"formula {self.expr!r}: no value for parameter(s) {', '.join(missing)}")
        r = np.asarray(r, dtype=float)
        with np.errstate(all="ignore"):  # non-finite values are reported by the registry's check
            values = self._evaluate(r, params)
        return np.broadcast_to(np.asarray(values, dtype=float), r.shape).copy()

    def __repr__(self) -> str:
        return f"Formula({self.expr!r}, units={self.units!r})"


def _parameter_value(text: Any, name: str, units: str) -> float:
    """A parameter value: a number, or a number with a length / energy / inverse-length unit."""
    from radsolve.units import parse_quantity_in

    label = f"parameter {name!r} of the formula"
    if not isinstance(text, str):
        if isinstance(text, bool):
            raise InputError(f"{label} must be a number, got {text!r}", parameter=name, family="formula")
        return parse_quantity_in(text, "dimensionless", units, name=label, parameter=name)
    first_error = None
    for kind in ("dimensionless", "length", "energy", "inverse_length"):
        try:
            return parse_quantity_in(text, kind, units, name=label)
        except InputError as exc:
            first_error = first_error or exc
    raise InputError(f"{label}: cannot read {text!r}; give a number, optionally with a length, "
                     "energy or inverse-length unit (e.g. 10, 5angstrom, 3eV, 2/nm)",
                     parameter=name, family="formula") from None


def formula_family(expr: str, units: str = "atomic", **values: Any):
    """The family of the formula ``expr`` with parameter values ``values`` as defaults.

    Every free name of the expression other than r and the constants needs a
    value.  See :func:`formula_potential`.
    """
    from radsolve.potentials import Parameter, make_family

    formula = Formula(expr, units)
    missing = [p for p in formula.parameters if p not in values]
    if missing:
        raise InputError(
            f"formula {_short(expr)} uses parameter(s) {', '.join(missing)} without a value; give them, "
            "e.g. " + " ".join(f"-p {m}=..." for m in missing)
            + f" on the command line, {', '.join(m + '=...' for m in missing)} in Python"
            + f" (r is the radius; the constants are {', '.join(CONSTANTS)})",
            parameter=missing[0], family="formula",
        )
    unused = [k for k in values if k not in formula.parameters]
    if unused:
        listing = ", ".join(formula.parameters) if formula.parameters else "none"
        raise InputError(f"parameter(s) {', '.join(unused)} do not appear in formula {_short(expr)}; "
                         f"its parameters: {listing}", parameter=unused[0], family="formula")
    reserved = [p for p in formula.parameters if p in ("n", "l", "mass", "plugins")]
    if reserved:
        raise FormulaError(f"formula {_short(expr)}: {', '.join(reserved)} cannot be a parameter name "
                           "(reserved: n, l, mass, plugins); rename it")
    defaults = {k: Parameter(_parameter_value(values[k], k, units)) for k in formula.parameters}
    length = "fm" if units == "nuclear" else "bohr"
    energy = "MeV" if units == "nuclear" else "hartree"
    return make_family(
        "formula",
        formula,
        defaults,
        units=units,
        description=f"V(r) = {formula.expr}",
        formula=f"V(r) = {formula.expr}   (r in {length}, V in {energy})",
        doc="A potential given as a formula; it has no exact levels.",
        source=f"formula {formula.expr!r} ({units} units)",
        rebuild=(formula_potential, (formula.expr,), {"units": units, **{
            k: float(defaults[k].default) for k in formula.parameters}}),
    )


def formula_potential(expr: str, units: str = "atomic", **values: Any):
    """A potential given by a formula in r and named parameters.

    Parameters
    ----------
    expr : str
        V(r) as an expression, e.g. ``"-Z*exp(-r/D)/r"``; see the module
        docstring for what it may contain.  It is parsed and checked, never
        evaluated as Python.
    units : {"atomic", "nuclear"}
        r in bohr and V in hartree, or r in fm and V in MeV.
    **values
        A value for every parameter of the expression: a number in the unit
        system's units, or a string with a unit (``D="5angstrom"``).

    Returns
    -------
    Potential
        Of the family named ``formula``; solve it like any other.

    Raises
    ------
    InputError
        For an expression outside the whitelist (naming what was refused and
        listing what is allowed), missing or unused parameter values.

    Examples
    --------
    >>> pot = formula_potential("-Z*exp(-r/D)/r", Z=1, D=10)
    >>> float(pot(2.0)) == -math.exp(-0.2) / 2.0
    True
    """
    return formula_family(expr, units, **values).bind()
