"""The potential-family protocol: what a family is, how it is checked, what a bound potential is.

A *family* is a Python module (or any object) with ``NAME``, ``PARAMETERS`` and
``V(r, **params)`` and optional hooks (see "Adding a potential" in
DEVELOPERS.md).  :func:`make_family` builds one in a program.  A
:class:`Potential` is a family bound to validated parameter values; it is what
the solvers evaluate, and :class:`ChannelPotential` is its restriction to one
(l, j) channel.  Finding families is :mod:`radsolve.potentials.discovery`.
"""

from __future__ import annotations

import difflib
import inspect
import math
import re
from dataclasses import dataclass, field, replace
from typing import Any, Callable, Iterable, Mapping

import numpy as np

from radsolve.errors import InputError, PluginError, RadsolveError

from radsolve.potentials.parameters import (FAMILY_UNIT_SYSTEMS, RESERVED_PARAMETER_NAMES, Parameter, _PARAM_RE,
                                           _fmt, as_parameter)

#: before the parameters (see DEVELOPERS.md).
HOOKS = {"v_infinity": 0, "small_r": 0, "exact_energy": 3, "breakpoints": 0, "validate": 0,
         "V_l": 2, "spin_orbit": 1, "potential_error": 1, "scalar_potential": 1}

_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")

# --------------------------------------------------------------------------- #
# Families
# --------------------------------------------------------------------------- #

@dataclass(frozen=True, eq=False)
class PotentialFamily:
    """A potential family as found by :func:`discover`.

    Attributes
    ----------
    name : str
        The name users type.
    module : object
        The module (or object) that defines the family.
    V : callable
        ``V(r, **params)``: r in bohr (numpy array) to hartree.
    parameters : dict of str to Parameter
        In the order the family lists them.
    description, formula, doc : str
        One line; the formula as plain text; the module docstring.
    source : str
        Where it came from: a file path, or ``entry point NAME = VALUE``.
    origin : str
        ``"built-in"``, ``"entry point"``, ``"RADSOLVE_PLUGINS"`` or ``"plugin folder"``.
    v_infinity, small_r, exact_energy, breakpoints, validate : callable or None
        The optional hooks (see DEVELOPERS.md).
    potential_error : callable or None
        ``potential_error(r, **params)``: a pointwise estimate of how far V is
        from the potential it stands for (e.g. a table's interpolation error).
    V_l, spin_orbit : callable or None
        ``V_l(r, l, **params)``: the potential felt with orbital angular
        momentum l (semilocal families); ``spin_orbit(r, **params)``: the
        radial factor V_so(r) of the spin-orbit term V_so(r) <l.s>.
    scalar_potential : callable or None
        ``scalar_potential(r, **params)``: a Lorentz-scalar potential S(r) for
        the relativistic equations (``solve(..., scalar=True)``).

    The family's unit system is the module's ``UNITS`` (``"atomic"`` when
    absent, or ``"nuclear"``: V takes r in fm and returns MeV, and length /
    energy parameters are fm / MeV); see :attr:`units`.
    """

    name: str
    module: Any
    V: Callable[..., Any]
    parameters: dict[str, Parameter]
    description: str = ""
    formula: str = ""
    doc: str = ""
    source: str = ""
    origin: str = ""
    v_infinity: Callable[..., Any] | None = None
    small_r: Callable[..., Any] | None = None
    exact_energy: Callable[..., Any] | None = None
    breakpoints: Callable[..., Any] | None = None
    validate: Callable[..., Any] | None = None
    V_l: Callable[..., Any] | None = None
    spin_orbit: Callable[..., Any] | None = None
    potential_error: Callable[..., Any] | None = None
    scalar_potential: Callable[..., Any] | None = None
    file: str | None = field(default=None, repr=False)

    @property
    def units(self) -> str:
        """The family's unit system: ``"atomic"`` (default) or ``"nuclear"`` (its ``UNITS``)."""
        return getattr(self.module, "UNITS", "atomic")

    @property
    def defaults(self) -> dict[str, Any]:
        """Default parameter values, parsed to the family's units."""
        return {k: p.parse(p.default, k, self.name) for k, p in self.parameters.items()}

    def bind(self, **params: Any) -> "Potential":
        """A :class:`Potential` of this family; missing parameters take defaults.

        Raises
        ------
        InputError
            For an unknown parameter (listing the family's parameters and
            suggesting a near name) or an invalid value.
        """
        for key in params:
            if key not in self.parameters:
                known = list(self.parameters)
                near = difflib.get_close_matches(key, known, n=1)
                hint = f" (did you mean {near[0]!r}?)" if near else ""
                listing = ", ".join(known) if known else "none"
                raise InputError(
                    f"potential {self.name!r} has no parameter {key!r}{hint}; "
                    f"its parameters: {listing}", parameter=key, family=self.name
                )
        values = {}
        for key, spec in self.parameters.items():
            raw = params[key] if key in params else spec.default
            values[key] = spec.parse(raw, key, self.name)
        if self.validate is not None:
            # Checks that involve several parameters at once; it raises
            # InputError itself.  Anything else it raises is a plug-in bug.
            try:
                self.validate(**values)
            except RadsolveError:
                raise
            except Exception as exc:  # noqa: BLE001
                raise PluginError(f"potential {self.name!r} ({self.source}): validate raised "
                                  f"{_describe_exception(exc)}") from None
        return Potential(self, values)

    def __repr__(self) -> str:
        return f"PotentialFamily({self.name!r}, source={self.source!r})"


@dataclass(frozen=True)
class BrokenFamily:
    """A family that could not be loaded, kept so that the others stay usable.

    ``name`` is the file's NAME when it can be read without running the file
    (a plain ``NAME = "..."`` assignment), else the file's stem; ``cause`` is
    the complete message (file, exception or broken rule).  :meth:`bind`
    raises it as a :class:`PluginError`.
    """

    name: str
    source: str
    origin: str
    cause: str
    file: str | None = None
    broken = True
    parameters = {}  # type: ignore[assignment]  # nothing to list
    description = ""

    def bind(self, **params: Any) -> "Potential":
        raise PluginError(self.cause)

    @property
    def units(self) -> str:
        return "atomic"


def _signature_accepts(func: Callable, positional: int, names: Iterable[str]) -> str | None:
    """None if ``func`` can be called with ``positional`` args and ``names`` as keywords.

    Otherwise the reason, as text.
    """
    try:
        sig = inspect.signature(func)
    except (TypeError, ValueError):
        return None  # builtins without a signature: cannot check, trust them
    try:
        sig.bind(*([0.0] * positional), **{k: 0.0 for k in names})
    except TypeError as exc:
        return f"{func.__name__}{sig} cannot be called that way ({exc})"
    return None


def _family_from_object(obj: Any, source: str, origin: str, file: str | None = None) -> PotentialFamily:
    """Validate a plug-in module/object and build its :class:`PotentialFamily`."""
    missing = [attr for attr in ("NAME", "PARAMETERS", "V") if not hasattr(obj, attr)]
    if missing:
        raise PluginError(
            f"plug-in {source} does not define {', '.join(missing)}; a potential family "
            "needs NAME (str), PARAMETERS (dict of defaults) and V(r, **parameters)"
        )
    name = obj.NAME
    if not isinstance(name, str) or not _NAME_RE.match(name):
        raise PluginError(
            f"plug-in {source}: NAME must be a string of letters, digits, '_' or '-' "
            f"starting with a letter, got {name!r}"
        )
    raw_params = obj.PARAMETERS
    if not isinstance(raw_params, Mapping):
        raise PluginError(f"plug-in {source}: PARAMETERS must be a dict, got {type(raw_params).__name__}")
    units = getattr(obj, "UNITS", "atomic")
    if units not in FAMILY_UNIT_SYSTEMS:
        raise PluginError(f"plug-in {source}: UNITS must be one of {', '.join(map(repr, FAMILY_UNIT_SYSTEMS))}, "
                          f"got {units!r}")
    parameters: dict[str, Parameter] = {}
    for key, spec in raw_params.items():
        if not isinstance(key, str) or not _PARAM_RE.match(key):
            raise PluginError(f"plug-in {source}: parameter name {key!r} is not a Python identifier")
        if key in RESERVED_PARAMETER_NAMES:
            raise PluginError(
                f"plug-in {source}: parameter name {key!r} is reserved "
                f"(reserved: {', '.join(sorted(RESERVED_PARAMETER_NAMES))})"
            )
        try:
            parameters[key] = as_parameter(spec, key, f"plug-in {source}")
            if parameters[key].units != units:
                parameters[key] = replace(parameters[key], units=units)
        except PluginError as exc:
            raise PluginError(f"plug-in {source}: PARAMETERS[{key!r}]: {exc}") from None
    V = obj.V
    if not callable(V):
        raise PluginError(f"plug-in {source}: V must be a function V(r, {', '.join(parameters)})")
    problem = _signature_accepts(V, 1, parameters)
    if problem:
        raise PluginError(
            f"plug-in {source}: V must accept r and the PARAMETERS names "
            f"({', '.join(parameters) or 'none'}) as keywords: {problem}"
        )
    hooks: dict[str, Callable | None] = {}
    for hook, positional in HOOKS.items():
        func = getattr(obj, hook, None)
        if func is None:
            hooks[hook] = None
            continue
        if not callable(func):
            raise PluginError(f"plug-in {source}: {hook} must be a function")
        problem = _signature_accepts(func, positional, parameters)
        if problem:
            raise PluginError(f"plug-in {source}: hook {hook}: {problem}")
        hooks[hook] = func

    doc = inspect.cleandoc(getattr(obj, "__doc__", None) or "") if isinstance(
        getattr(obj, "__doc__", None), str) else ""
    description = getattr(obj, "DESCRIPTION", None)
    if not isinstance(description, str) or not description.strip():
        description = doc.strip().splitlines()[0] if doc.strip() else ""
    formula = getattr(obj, "FORMULA", "")
    family = PotentialFamily(
        name=name,
        module=obj,
        V=V,
        parameters=parameters,
        description=description.strip(),
        formula=formula if isinstance(formula, str) else str(formula),
        doc=doc,
        source=source,
        origin=origin,
        file=file,
        **hooks,
    )
    # A default outside its own range is a bug in the plug-in, not user error.
    for key, spec in parameters.items():
        try:
            spec.parse(spec.default, key, name)
        except RadsolveError as exc:
            raise PluginError(f"plug-in {source}: the default of {key!r} is not valid: {exc}") from None
    return family


def _describe_exception(exc: BaseException) -> str:
    text = str(exc).strip()
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


#: The ``origin`` of families built in a program by :func:`make_family`.
PROGRAM_ORIGIN = "program"


def make_family(name: str, V: Callable, parameters: Mapping[str, Any] | None = None, *,
                units: str = "atomic", description: str = "", formula: str = "", doc: str = "",
                source: str = "", rebuild: tuple | None = None, **hooks: Callable) -> PotentialFamily:
    """A family built in a program rather than found in a module.

    It is checked exactly like a plug-in module with the same ``NAME``,
    ``PARAMETERS``, ``V``, ``UNITS`` and hooks (see DEVELOPERS.md), is not
    registered anywhere (``discover`` does not see it) and has origin
    ``"program"``.  Formula and tabulated potentials are built this way.

    Parameters
    ----------
    name : str
        The family's NAME.
    V : callable
        ``V(r, **params)``.
    parameters : mapping, optional
        Like a module's PARAMETERS.
    units : {"atomic", "nuclear"}
        Like a module's UNITS.
    description, formula, doc : str
        Like DESCRIPTION, FORMULA and the module docstring.
    source : str
        Where the family came from, for messages (e.g. a file path).
    rebuild : (callable, args, kwargs), optional
        How to build the family again, for pickling its potentials:
        ``callable(*args, **kwargs)`` must return a Potential of an
        equivalent family.  Without it, its potentials do not pickle.
    **hooks : callable
        Any of the optional hooks (``v_infinity``, ``small_r``, ...).

    Raises
    ------
    PluginError
        If the pieces break the protocol (as for a plug-in).
    """
    from types import SimpleNamespace

    unknown = sorted(set(hooks) - set(HOOKS))
    if unknown:
        raise PluginError(f"make_family {name!r}: unknown hook(s) {', '.join(unknown)}; "
                          f"allowed: {', '.join(HOOKS)}")
    namespace = SimpleNamespace(NAME=name, PARAMETERS=dict(parameters or {}), V=V, UNITS=units,
                                DESCRIPTION=description, FORMULA=formula, REBUILD=rebuild,
                                **hooks)
    namespace.__doc__ = doc
    return _family_from_object(namespace, source or f"<{name}>", PROGRAM_ORIGIN)


# --------------------------------------------------------------------------- #
# Bound potentials
# --------------------------------------------------------------------------- #

def _rebuild_from_recipe(recipe: tuple, params: dict) -> "Potential":
    """Unpickling helper for families made by :func:`make_family`: rebuild, then bind."""
    func, args, kwargs = recipe
    return func(*args, **kwargs).family.bind(**params)


class Potential:
    """A potential family bound to validated parameter values.

    Calling it evaluates V in hartree at radii in bohr, checking the values.
    Parameters are in atomic units (bohr, hartree, 1/bohr) or strings.
    """

    __slots__ = ("_family", "_params")

    def __init__(self, family: PotentialFamily, parameters: Mapping[str, Any]):
        self._family = family
        self._params = dict(parameters)

    @property
    def name(self) -> str:
        """The family's NAME."""
        return self._family.name

    @property
    def family(self) -> PotentialFamily:
        """The :class:`PotentialFamily`."""
        return self._family

    @property
    def parameters(self) -> dict[str, Any]:
        """A copy of the parameter values (atomic units, or strings)."""
        return dict(self._params)

    def _where(self) -> str:
        return f"potential {self.name!r} ({self._family.source})"

    def _length_unit(self) -> str:
        return "fm" if self._family.units == "nuclear" else "bohr"

    def _hook_failed(self, hook: str, exc: BaseException) -> PluginError:
        return PluginError(f"{self._where()}: {hook} raised {_describe_exception(exc)}")

    def __call__(self, r: Any) -> np.ndarray:
        """V(r) in hartree, r in bohr (scalar or array); a float array of r's shape.

        Raises
        ------
        PluginError
            If V raises, returns complex values with a nonzero imaginary part,
            NaN or infinities, or an array of another shape; the message names
            the family, its source and the first offending radius.
        """
        r_arr = np.asarray(r, dtype=float)
        view = r_arr.view()
        view.flags.writeable = False  # a plug-in must not modify the solver's grid
        return self._checked("V", lambda: self._family.V(view, **self._params), r_arr)

    def raw(self, r: Any) -> np.ndarray:
        """V(r) like ``self(r)``, except that infinities and NaN are returned, not refused.

        For probing only: a potential may overflow far inside any physical
        scale (a Lennard-Jones core at 1e-30 bohr) or far outside it, and the
        prober needs to know where V is finite rather than fail.
        """
        r_arr = np.asarray(r, dtype=float)
        view = r_arr.view()
        view.flags.writeable = False
        with np.errstate(all="ignore"):
            return self._checked("V", lambda: self._family.V(view, **self._params), r_arr, finite=False)

    def _checked(self, what: str, compute: Callable[[], Any], r_arr: np.ndarray,
                 finite: bool = True) -> np.ndarray:
        """Run ``compute`` (a plug-in function of r) and check its values as for V."""
        try:
            out = compute()
        except RadsolveError:
            raise
        except Exception as exc:  # noqa: BLE001
            raise PluginError(f"{self._where()}: {what} raised {_describe_exception(exc)}") from None
        try:
            values = np.asarray(out)
        except Exception as exc:  # noqa: BLE001
            raise PluginError(f"{self._where()}: {what} returned {type(out).__name__}, not numbers "
                              f"({_describe_exception(exc)})") from None
        if values.shape != r_arr.shape:
            raise PluginError(
                f"{self._where()}: {what} returned shape {values.shape} for r of shape {r_arr.shape}; "
                f"{what} must return one value per radius (np.full_like(r, c) for a constant)"
            )
        if np.iscomplexobj(values):
            imag = values.imag
            bad = np.flatnonzero(imag != 0)
            if bad.size:
                i = bad[0]
                raise PluginError(
                    f"{self._where()}: {what} returned a complex value {values.flat[i]!r} at "
                    f"r = {_fmt(r_arr.flat[i])} {self._length_unit()}; a potential must be real"
                )
            values = values.real
        if values.dtype.kind not in "fiu":
            try:
                values = values.astype(float)
            except (TypeError, ValueError):
                raise PluginError(f"{self._where()}: {what} returned values of type {values.dtype}, "
                                  "not real numbers") from None
        values = values.astype(float, copy=False)
        good = np.isfinite(values)
        if finite and not good.all():
            i = np.flatnonzero(~good)[0]
            raise PluginError(
                f"{self._where()}: {what} returned {values.flat[i]} at r = {_fmt(r_arr.flat[i])} "
                f"{self._length_unit()}; "
                f"{what} must be finite at every radius asked for (r > 0)"
            )
        if values.ndim == 0:
            return np.float64(values)
        return values

    def v_infinity(self) -> float | None:
        """lim V(r) as r → ∞ in hartree (``inf`` if confining); None without the hook."""
        hook = self._family.v_infinity
        if hook is None:
            return None
        try:
            value = float(hook(**self._params))
        except Exception as exc:  # noqa: BLE001
            raise self._hook_failed("v_infinity", exc) from None
        if math.isnan(value) or value == -math.inf:
            raise PluginError(f"{self._where()}: v_infinity returned {value}; "
                              "it must be a finite number or +inf")
        return value

    def small_r(self) -> tuple[float, float] | None:
        """``(c, p)`` with V(r) ≈ c·r**p as r → 0; None without the hook."""
        hook = self._family.small_r
        if hook is None:
            return None
        try:
            c, p = hook(**self._params)
            c, p = float(c), float(p)
        except Exception as exc:  # noqa: BLE001
            raise self._hook_failed("small_r", exc) from None
        if not (math.isfinite(c) and math.isfinite(p)):
            raise PluginError(f"{self._where()}: small_r returned ({c}, {p}); both must be finite")
        return c, p

    def exact_energy(self, n: int, l: int, mass: float = 1.0) -> float | None:
        """The exact energy of level (n, l) in hartree for reduced mass ``mass``, or None.

        Raises
        ------
        InputError
            Unless n > l >= 0 are integers and mass > 0.
        """
        if not (isinstance(n, (int, np.integer)) and isinstance(l, (int, np.integer))
                and 0 <= l < n):
            raise InputError(f"exact_energy needs integers n > l >= 0, got n={n!r}, l={l!r}")
        if not (mass > 0 and math.isfinite(mass)):
            raise InputError(f"mass must be a positive finite number, got {mass!r}")
        hook = self._family.exact_energy
        if hook is None:
            return None
        try:
            value = hook(int(n), int(l), float(mass), **self._params)
        except Exception as exc:  # noqa: BLE001
            raise self._hook_failed("exact_energy", exc) from None
        if value is None:
            return None
        value = float(value)
        if not math.isfinite(value):
            raise PluginError(f"{self._where()}: exact_energy returned {value}")
        return value

    def breakpoints(self) -> list[float]:
        """Sorted radii (bohr) where V or a low derivative is not smooth; may be empty."""
        hook = self._family.breakpoints
        if hook is None:
            return []
        try:
            points = [float(x) for x in hook(**self._params)]
        except Exception as exc:  # noqa: BLE001
            raise self._hook_failed("breakpoints", exc) from None
        bad = [x for x in points if not (x > 0 and math.isfinite(x))]
        if bad:
            raise PluginError(f"{self._where()}: breakpoints must be positive finite radii, got {bad}")
        return sorted(set(points))

    def potential_error(self, r: Any) -> np.ndarray | None:
        """Pointwise |V - V_true| (energy units) at radii ``r`` when the family
        knows it (e.g. a table's interpolation error); None without the hook."""
        hook = self._family.potential_error
        if hook is None:
            return None
        r_arr = np.asarray(r, dtype=float)
        view = r_arr.view()
        view.flags.writeable = False
        values = self._checked("potential_error", lambda: hook(view, **self._params), r_arr)
        return np.abs(values)

    @property
    def l_dependent(self) -> bool:
        """True when the family defines V_l (a different potential per l)."""
        return self._family.V_l is not None

    @property
    def has_scalar(self) -> bool:
        """True when the family defines a Lorentz-scalar potential (``scalar_potential``)."""
        return self._family.scalar_potential is not None

    def scalar(self, r, finite: bool = True) -> np.ndarray:
        """The family's Lorentz-scalar potential S(r), checked like V (same shape, real; finite unless
        ``finite=False``, which keeps infinities as :meth:`raw` does)."""
        if not self.has_scalar:
            raise InputError(f"potential {self.name!r} has no Lorentz-scalar part; "
                             "families with one define scalar_potential(r, ...)", parameter="scalar")
        r_arr = np.asarray(r, dtype=float)
        view = r_arr.view()
        view.flags.writeable = False
        fam, params = self._family, self._params
        with np.errstate(all="ignore"):
            return self._checked("scalar_potential", lambda: fam.scalar_potential(view, **params), r_arr,
                                 finite=finite)

    @property
    def has_spin_orbit(self) -> bool:
        """True when the family defines a spin-orbit term."""
        return self._family.spin_orbit is not None

    def channel(self, l: int, j: float | None = None) -> "ChannelPotential":
        """The potential felt in the partial wave (l, j), hartree at r in bohr.

        V_l(r) (or V(r) when the family has no V_l), plus V_so(r) <l.s> with
        <l.s> = [j(j+1) - l(l+1) - 3/4] / 2 when ``j`` is given.

        Raises
        ------
        InputError
            If ``j`` is given for a family without a spin-orbit term, or is not
            l +- 1/2 (j = 1/2 only, for l = 0).
        """
        if j is not None:
            if not self.has_spin_orbit:
                raise InputError(f"potential {self.name!r} has no spin-orbit term; "
                                 "families with one define spin_orbit(r, ...)")
            allowed = (0.5,) if l == 0 else (l - 0.5, l + 0.5)
            if float(j) not in allowed:
                raise InputError(f"j = {j} is not allowed for l = {l}; allowed: "
                                 + ", ".join(f"{a:g}" for a in allowed))
        return ChannelPotential(self, int(l), None if j is None else float(j))

    def with_parameters(self, **changes: Any) -> "Potential":
        """A new Potential of the same family with some parameters changed."""
        return self._family.bind(**{**self._params, **changes})

    def __repr__(self) -> str:
        args = ", ".join(f"{k}={v!r}" for k, v in self._params.items())
        return f"Potential({self.name!r}{', ' if args else ''}{args})"

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Potential):
            return NotImplemented
        return (self._family.name == other._family.name
                and self._family.source == other._family.source
                and self._params == other._params)

    def __hash__(self) -> int:
        return hash((self._family.name, self._family.source, tuple(sorted(self._params.items()))))

    def __reduce__(self):
        recipe = getattr(self._family.module, "REBUILD", None)
        if self._family.origin == PROGRAM_ORIGIN and recipe is not None:
            return (_rebuild_from_recipe, (recipe, self._params))
        # Other families are found again by name or file when unpickled.
        from radsolve.potentials.discovery import _rebuild_potential

        return (_rebuild_potential, (self.name, self._family.file, self._family.origin, self._params))


class ChannelPotential:
    """The potential of one partial wave (l, j) of a :class:`Potential`.

    It has the interface the solver uses (call, v_infinity, small_r,
    breakpoints, exact_energy); the small-r law and the exact levels of the
    central V are passed on only when the channel adds nothing to V.
    """

    __slots__ = ("base", "l", "j")

    def __init__(self, base: Potential, l: int, j: float | None):
        self.base, self.l, self.j = base, l, j

    @property
    def name(self) -> str:
        return self.base.name

    @property
    def parameters(self) -> dict[str, Any]:
        return self.base.parameters

    @property
    def family(self) -> PotentialFamily:
        return self.base.family

    @property
    def plain(self) -> bool:
        """True when this channel is just the central V."""
        return self.j is None and not self.base.l_dependent

    @property
    def spin_orbit_factor(self) -> float:
        """<l.s> = [j(j+1) - l(l+1) - 3/4] / 2 (0 without j)."""
        if self.j is None:
            return 0.0
        return 0.5 * (self.j * (self.j + 1.0) - self.l * (self.l + 1.0) - 0.75)

    def __call__(self, r: Any) -> np.ndarray:
        return self._values(r, finite=True)

    def raw(self, r: Any) -> np.ndarray:
        """The channel's V at ``r`` with infinities and NaN returned, not refused (for probing)."""
        with np.errstate(all="ignore"):
            return self._values(r, finite=False)

    def _values(self, r: Any, finite: bool) -> np.ndarray:
        base, fam, params = self.base, self.base.family, self.base.parameters
        r_arr = np.asarray(r, dtype=float)
        view = r_arr.view()
        view.flags.writeable = False
        if fam.V_l is not None:
            values = base._checked("V_l", lambda: fam.V_l(view, self.l, **params), r_arr, finite)
        else:
            values = base(r_arr) if finite else base.raw(r_arr)
        if self.j is not None and self.spin_orbit_factor != 0.0:
            so = base._checked("spin_orbit", lambda: fam.spin_orbit(view, **params), r_arr, finite)
            values = values + self.spin_orbit_factor * so
        return values

    def v_infinity(self) -> float | None:
        return self.base.v_infinity()

    def small_r(self) -> tuple[float, float] | None:
        return self.base.small_r() if self.plain else None

    def breakpoints(self) -> list[float]:
        return self.base.breakpoints()

    def potential_error(self, r: Any) -> np.ndarray | None:
        return self.base.potential_error(r)

    def exact_energy(self, n: int, l: int, mass: float = 1.0) -> float | None:
        return self.base.exact_energy(n, l, mass) if self.plain else None

    def __repr__(self) -> str:
        jtxt = "" if self.j is None else f", j={self.j:g}"
        return f"ChannelPotential({self.base!r}, l={self.l}{jtxt})"
