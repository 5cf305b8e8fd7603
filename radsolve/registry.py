"""Potential families: the plug-in protocol, discovery and parameter binding.

A *family* is a Python module (or any object) with ``NAME``, ``PARAMETERS`` and
``V(r, **params)``; see "Writing a potential family" in DEVELOPERS.md for the
full protocol and its optional hooks.  A :class:`Potential` is a family bound to
validated parameter values; it is what the solvers evaluate.

Families are found (:func:`discover`) in this order:

1. the modules of the package ``radsolve.potentials`` (the built-ins);
2. entry points of the group ``radsolve.potentials``;
3. ``*.py`` files in the folders of the environment variable ``RADSOLVE_PLUGINS``
   (separated by ``os.pathsep``);
4. ``*.py`` files in the folders passed as ``plugin_dirs`` (``--plugins``).

A file or entry point that cannot be loaded, or that breaks the protocol, does
not stop the others: it is kept as a :class:`BrokenFamily` (listed by
``radsolve potentials`` with its cause; using it raises that cause).  Two
families with the same NAME are both unusable under that name, and the error
names both sources.  Discovery keeps no state between calls: each call looks at
the folders and the environment as they are then.
"""

from __future__ import annotations

import difflib
import hashlib
import importlib
import importlib.util
import inspect
import math
import os
import re
import sys
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping

import numpy as np

from .errors import InputError, PluginError, RadsolveError

#: Environment variable listing extra plug-in folders (os.pathsep-separated).
PLUGINS_ENV = "RADSOLVE_PLUGINS"

#: Entry-point group through which installed packages export families.
ENTRY_POINT_GROUP = "radsolve.potentials"

#: Parameter kinds (see :class:`Parameter`).
PARAMETER_KINDS = ("dimensionless", "length", "energy", "inverse_length", "choice", "text")

#: Names a family may not use for a parameter: they are taken by V's radius
#: argument, by the ``exact_energy(n, l, mass, ...)`` hook, or by
#: :func:`potential`'s own keyword.
RESERVED_PARAMETER_NAMES = frozenset({"r", "n", "l", "mass", "plugins"})

#: The optional hooks of a family and how many positional arguments each takes
#: before the parameters (see DEVELOPERS.md).
HOOKS = {"v_infinity": 0, "small_r": 0, "exact_energy": 3, "breakpoints": 0, "validate": 0,
         "V_l": 2, "spin_orbit": 1, "potential_error": 1}

_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")
_PARAM_RE = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")

_UNIT_OF_KIND = {
    "dimensionless": "",
    "length": " bohr",
    "energy": " hartree",
    "inverse_length": " /bohr",
}

#: The unit systems a family may declare with ``UNITS = ...`` and the units
#: its length / energy / inverse-length parameters are then expressed in.
FAMILY_UNIT_SYSTEMS = ("atomic", "nuclear")
_UNITS_OF_KIND_IN = {
    "atomic": _UNIT_OF_KIND,
    "nuclear": {"dimensionless": "", "length": " fm", "energy": " MeV", "inverse_length": " /fm"},
}


def _fmt(x: float) -> str:
    """A float as short as possible but exact enough to recognise."""
    return f"{x:.10g}"


# --------------------------------------------------------------------------- #
# Parameters
# --------------------------------------------------------------------------- #

@dataclass(frozen=True)
class Parameter:
    """One parameter of a potential family.

    Parameters
    ----------
    default : float or str
        The default value: a number in atomic units (bohr, hartree, 1/bohr),
        a string with a unit (``"0.5fm"``, parsed like user input) or, for
        ``kind="choice"``/``"text"``, a string.
    kind : str
        ``"dimensionless"``, ``"length"`` (accepts ``0.5angstrom``),
        ``"energy"`` (accepts ``3eV``), ``"inverse_length"`` (accepts
        ``2/angstrom``), ``"choice"`` (one string of ``choices``) or
        ``"text"`` (any string).
    minimum, maximum : float, optional
        Allowed range in atomic units; inclusive unless ``exclusive_minimum``
        / ``exclusive_maximum``.
    choices : sequence of str, optional
        The allowed strings of a ``"choice"`` parameter (giving ``choices``
        implies ``kind="choice"``).
    description : str
        One line: what the parameter means.
    exclusive_minimum, exclusive_maximum : bool
        Whether the bound itself is excluded (``> 0`` rather than ``>= 0``).
    units : str
        The unit system of the family (``"atomic"`` or ``"nuclear"``): in a
        nuclear family lengths are fm, energies MeV and inverse lengths
        1/fm (defaults, bounds and plain numbers alike).  Set by the registry
        from the family's ``UNITS``; a plug-in need not give it.
    """

    default: Any
    kind: str = "dimensionless"
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[str, ...] | None = None
    description: str = ""
    exclusive_minimum: bool = False
    exclusive_maximum: bool = False
    units: str = "atomic"

    def __post_init__(self) -> None:
        if self.choices is not None:
            choices = tuple(self.choices)
            if not choices or not all(isinstance(c, str) for c in choices):
                raise PluginError(f"Parameter choices must be a non-empty list of strings, got {self.choices!r}")
            object.__setattr__(self, "choices", choices)
            if self.kind == "dimensionless":
                object.__setattr__(self, "kind", "choice")
        if self.kind not in PARAMETER_KINDS:
            raise PluginError(
                f"Parameter kind {self.kind!r} is not one of {', '.join(PARAMETER_KINDS)}"
            )
        if self.kind == "choice" and self.choices is None:
            raise PluginError("a Parameter of kind 'choice' needs choices=[...]")
        if self.units not in FAMILY_UNIT_SYSTEMS:
            raise PluginError(f"Parameter units {self.units!r} is not one of {', '.join(FAMILY_UNIT_SYSTEMS)}")

    @property
    def _unit_suffix(self) -> str:
        return _UNITS_OF_KIND_IN[self.units].get(self.kind, "")

    @property
    def is_numeric(self) -> bool:
        """Whether values are numbers (not ``"choice"`` or ``"text"``)."""
        return self.kind not in ("choice", "text")

    @property
    def unit(self) -> str:
        """The unit values are expressed in (``"bohr"``, ``"hartree"``, ``"fm"``, ``"MeV"``, ...; ``""`` if none)."""
        return self._unit_suffix.strip()

    def range_text(self) -> str:
        """The allowed range as text, e.g. ``"> 0 bohr"`` (empty when unrestricted)."""
        unit = self._unit_suffix
        parts = []
        if self.minimum is not None:
            parts.append(f"{'>' if self.exclusive_minimum else '>='} {_fmt(self.minimum)}{unit}")
        if self.maximum is not None:
            parts.append(f"{'<' if self.exclusive_maximum else '<='} {_fmt(self.maximum)}{unit}")
        if self.kind == "choice":
            parts.append("one of " + ", ".join(self.choices))
        return " and ".join(parts)

    def parse(self, value: Any, name: str, family: str = "") -> float | str:
        """Validate ``value`` for this parameter.

        Parameters
        ----------
        value : float or str
            A number in atomic units, a string with a unit suffix
            (``"5angstrom"``), or a string choice.
        name : str
            The parameter's name, for messages.
        family : str
            The family's name, for messages.

        Returns
        -------
        float or str
            The value in atomic units, or the chosen string.

        Raises
        ------
        InputError
            When the value cannot be read or is out of range; e.g.
            ``parameter 'screening_length' of yukawa must be > 0 bohr (got -1)``.
        """
        label = f"parameter {name!r}" + (f" of {family}" if family else "")
        if self.kind == "text":
            if not isinstance(value, str):
                raise InputError(f"{label} must be text, got {value!r}")
            return value
        if self.kind == "choice":
            if isinstance(value, str):
                if value in self.choices:
                    return value
                folded = {c.lower(): c for c in self.choices}
                if value.strip().lower() in folded:
                    return folded[value.strip().lower()]
            near = difflib.get_close_matches(str(value), self.choices, n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise InputError(
                f"{label} must be one of {', '.join(self.choices)}; got {value!r}{hint}"
            )

        from .units import parse_quantity_in

        number = parse_quantity_in(value, self.kind, self.units, name=label)
        given = str(value)
        if isinstance(value, str) and _fmt(number) != value.strip():
            given = f"{value.strip()} = {_fmt(number)}{self._unit_suffix}"
        if self.minimum is not None:
            low_bad = number <= self.minimum if self.exclusive_minimum else number < self.minimum
            if low_bad:
                raise InputError(f"{label} must be {self.range_text()} (got {given})")
        if self.maximum is not None:
            high_bad = number >= self.maximum if self.exclusive_maximum else number > self.maximum
            if high_bad:
                raise InputError(f"{label} must be {self.range_text()} (got {given})")
        return number

    def default_text(self) -> str:
        """The default value as shown to users, with its atomic unit."""
        if not self.is_numeric:
            return str(self.default)
        if isinstance(self.default, str):
            return self.default
        value = float(self.default)
        text = f"{_fmt(value)}{self._unit_suffix}"
        if self.kind == "length" and self.units == "atomic" and 0 < abs(value) < 1e-3:
            # Nuclear sizes read better in femtometres.
            from .units import length_unit_factor

            text += f" (= {value / length_unit_factor('fm'):.6g} fm)"
        return text


def as_parameter(spec: Any, name: str = "", source: str = "") -> Parameter:
    """Turn a PARAMETERS entry into a :class:`Parameter`.

    A bare number becomes ``Parameter(default)`` (dimensionless, no range); a
    bare string becomes a ``"text"`` parameter with that default.
    """
    if isinstance(spec, Parameter):
        return spec
    if isinstance(spec, bool) or not isinstance(spec, (int, float, str, np.integer, np.floating)):
        raise PluginError(
            f"{source}: PARAMETERS[{name!r}] must be a number, a string or a "
            f"radsolve.registry.Parameter, got {spec!r}"
        )
    if isinstance(spec, str):
        return Parameter(spec, kind="text")
    return Parameter(float(spec))


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
                    f"its parameters: {listing}"
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


def _declared_name(path: Path) -> str:
    """The literal ``NAME = "..."`` of a plug-in file, read without running it, or its stem."""
    import ast

    try:
        tree = ast.parse(path.read_text(encoding="utf-8", errors="replace"))
    except (SyntaxError, ValueError, OSError):
        return path.stem
    for node in tree.body:
        if (isinstance(node, ast.Assign) and len(node.targets) == 1
                and isinstance(node.targets[0], ast.Name) and node.targets[0].id == "NAME"
                and isinstance(node.value, ast.Constant) and isinstance(node.value.value, str)
                and _NAME_RE.match(node.value.value)):
            return node.value.value
    return path.stem


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


def _private_module_name(path: Path) -> str:
    digest = hashlib.sha1(str(path).encode()).hexdigest()[:12]
    stem = re.sub(r"\W", "_", path.stem)
    return f"_radsolve_plugin_{digest}_{stem}"


def load_plugin_file(path: str | os.PathLike, origin: str = "plugin folder") -> PotentialFamily:
    """Load one plug-in file as a family.

    The file is executed under a private module name (``sys.path`` is not
    changed).  Loading the same file again executes it again, so edits are
    seen.

    Raises
    ------
    PluginError
        If the file fails to import (naming the file, the exception type and
        its message) or does not follow the protocol.
    """
    path = Path(path).resolve()
    module_name = _private_module_name(path)
    spec = importlib.util.spec_from_file_location(module_name, path)
    if spec is None or spec.loader is None:
        raise PluginError(f"plug-in {path}: cannot be loaded as a Python module")
    module = importlib.util.module_from_spec(spec)
    # Registered while executing so that dataclasses, pickling by reference
    # and relative look-ups inside the plug-in work; the name is private.
    sys.modules[module_name] = module
    try:
        spec.loader.exec_module(module)
    except BaseException as exc:  # noqa: BLE001 - any failure is the plug-in's
        sys.modules.pop(module_name, None)
        if isinstance(exc, KeyboardInterrupt):
            raise
        raise PluginError(f"plug-in {path} failed to import: {_describe_exception(exc)}") from None
    return _family_from_object(module, str(path), origin, file=str(path))


def _builtin_package():
    """The package of built-in families, ``radsolve.potentials``.

    An installed radsolve has it (mapped from the top-level ``potentials/``
    folder).  Run from a source checkout without installing (e.g.
    ``python -m radsolve`` in the repository root, which imports the source
    tree), it is loaded from that folder under the same name.
    """
    try:
        return importlib.import_module("radsolve.potentials")
    except ModuleNotFoundError as exc:
        if exc.name != "radsolve.potentials":
            raise
    root = Path(__file__).resolve().parent.parent
    folder = root / "potentials"
    if not ((folder / "__init__.py").is_file() and (root / "pyproject.toml").is_file()):
        raise PluginError("the built-in potential families (radsolve.potentials) are missing from "
                          "this installation; reinstall radsolve")
    spec = importlib.util.spec_from_file_location(
        "radsolve.potentials", folder / "__init__.py", submodule_search_locations=[str(folder)])
    package = importlib.util.module_from_spec(spec)
    sys.modules["radsolve.potentials"] = package
    spec.loader.exec_module(package)
    return package


def _builtin_families() -> list[PotentialFamily | BrokenFamily]:
    import pkgutil

    package = _builtin_package()
    found: list[PotentialFamily | BrokenFamily] = []
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda i: i.name):
        if info.name.startswith("_"):
            continue
        qualified = f"{package.__name__}.{info.name}"
        try:
            module = importlib.import_module(qualified)
        except Exception as exc:  # noqa: BLE001
            found.append(BrokenFamily(info.name, qualified, "built-in",
                                      f"built-in potential module {qualified} failed to import: "
                                      f"{_describe_exception(exc)}"))
            continue
        if not (hasattr(module, "NAME") and hasattr(module, "V")):
            continue  # a helper module, not a family
        source = getattr(module, "__file__", None) or qualified
        try:
            found.append(_family_from_object(module, source, "built-in", file=source))
        except PluginError as exc:
            found.append(BrokenFamily(str(module.NAME), source, "built-in", str(exc), source))
    return found


def _entry_point_families() -> list[PotentialFamily | BrokenFamily]:
    from importlib.metadata import entry_points

    found: list[PotentialFamily | BrokenFamily] = []
    for ep in sorted(entry_points(group=ENTRY_POINT_GROUP), key=lambda e: (e.name, e.value)):
        dist = getattr(getattr(ep, "dist", None), "name", None)
        source = f"entry point {ep.name} = {ep.value}" + (f" (package {dist})" if dist else "")
        try:
            obj = ep.load()
        except Exception as exc:  # noqa: BLE001
            found.append(BrokenFamily(ep.name, source, "entry point",
                                      f"plug-in {source} failed to load: {_describe_exception(exc)}"))
            continue
        file = getattr(inspect.getmodule(obj), "__file__", None)
        try:
            found.append(_family_from_object(obj, source, "entry point", file=file))
        except PluginError as exc:
            found.append(BrokenFamily(str(getattr(obj, "NAME", ep.name)), source, "entry point",
                                      str(exc), file))
    return found


def _as_path_list(dirs: Any) -> list[str]:
    if dirs is None:
        return []
    if isinstance(dirs, (str, os.PathLike)):
        return [os.fspath(dirs)]
    return [os.fspath(d) for d in dirs]


def _folder_files(folder: str, what: str) -> list[Path]:
    path = Path(folder).expanduser()
    if path.is_file() and path.suffix == ".py":
        return [path]  # a single plug-in file is accepted where a folder is
    if not path.is_dir():
        raise InputError(
            f"{what}: plug-in folder {folder!r} does not exist or is not a folder; "
            "give a folder holding *.py potential files"
        )
    return sorted(p for p in path.glob("*.py") if not p.name.startswith("_") and p.is_file())


def plugin_folders(plugin_dirs: Any = None) -> list[tuple[str, str]]:
    """The plug-in folders in search order, as ``(folder, where-it-was-given)``."""
    folders = [(d, PLUGINS_ENV) for d in os.environ.get(PLUGINS_ENV, "").split(os.pathsep) if d.strip()]
    folders += [(d, "plugin folder") for d in _as_path_list(plugin_dirs)]
    return folders


def discover(plugin_dirs: Any = None) -> dict[str, PotentialFamily | BrokenFamily]:
    """Find every potential family.

    Parameters
    ----------
    plugin_dirs : path or list of paths, optional
        Extra folders of ``*.py`` plug-in files (what ``--plugins`` gives);
        searched after the folders of ``RADSOLVE_PLUGINS``.  A path to a
        single ``.py`` file is accepted too.

    Returns
    -------
    dict of str to PotentialFamily or BrokenFamily
        Keyed by NAME, in discovery order.  A plug-in that fails to import or
        breaks the protocol is a :class:`BrokenFamily` carrying the cause
        (naming the file); so is a NAME that two sources define (naming
        both).  The other families are unaffected.

    Raises
    ------
    InputError
        If a plug-in folder does not exist.
    """
    found: dict[str, PotentialFamily | BrokenFamily] = {}

    def add(family: PotentialFamily | BrokenFamily) -> None:
        other = found.get(family.name)
        if other is None:
            found[family.name] = family
            return
        first = other.source.split(" and ")[0] if isinstance(other, BrokenFamily) else other.source
        found[family.name] = BrokenFamily(
            family.name, f"{first} and {family.source}", family.origin,
            f"two potential families are named {family.name!r}: {first} and "
            f"{family.source}; rename one (NAME = ...)", family.file)

    for family in _builtin_families():
        add(family)
    for family in _entry_point_families():
        add(family)
    seen_files: set[Path] = {Path(f.file).resolve() for f in found.values() if f.file}
    for folder, what in plugin_folders(plugin_dirs):
        label = "RADSOLVE_PLUGINS" if what == PLUGINS_ENV else "--plugins"
        for path in _folder_files(folder, label):
            resolved = path.resolve()
            if resolved in seen_files:
                continue  # the same folder given twice, or a built-in file
            seen_files.add(resolved)
            try:
                add(load_plugin_file(resolved, origin=what))
            except PluginError as exc:
                add(BrokenFamily(_declared_name(resolved), str(resolved), what, str(exc), str(resolved)))
    return found


def broken_families(found: Mapping[str, Any]) -> dict[str, BrokenFamily]:
    """The entries of a :func:`discover` result that cannot be used."""
    return {k: v for k, v in found.items() if isinstance(v, BrokenFamily)}


def usable_families(found: Mapping[str, Any]) -> dict[str, PotentialFamily]:
    """The entries of a :func:`discover` result that can be used."""
    return {k: v for k, v in found.items() if not isinstance(v, BrokenFamily)}


def families(plugins: Any = None) -> list[str]:
    """Sorted names of every usable family (see :func:`discover`)."""
    return sorted(usable_families(discover(plugins)))


def _lookup(name: str, found: Mapping[str, PotentialFamily]) -> PotentialFamily:
    if not isinstance(name, str):
        raise InputError(f"potential name must be a string, got {name!r}")
    if name in found:
        return found[name]
    folded = {k.lower().replace("-", "_"): k for k in found}
    key = name.strip().lower().replace("-", "_")
    if key in folded:
        return found[folded[key]]
    known = sorted(found)
    near = difflib.get_close_matches(name, known, n=1)
    hint = f" (did you mean {near[0]!r}?)" if near else ""
    raise InputError(f"unknown potential {name!r}{hint}; known potentials: {', '.join(known)}")


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


def get_family(name: str | PotentialFamily, plugins: Any = None) -> PotentialFamily:
    """The family called ``name`` (see :func:`potential` for the look-up rules).

    Raises
    ------
    PluginError
        When that family is broken (the cause: the file and what went wrong).
    """
    if isinstance(name, PotentialFamily):
        return name
    family = _lookup(name, discover(plugins))
    if isinstance(family, BrokenFamily):
        raise PluginError(family.cause)
    return family


def potential(name: str | PotentialFamily, /, plugins: Any = None, **params: Any) -> "Potential":
    """A potential: the family ``name`` with the given parameters.

    Parameters
    ----------
    name : str or PotentialFamily
        The family's NAME (``"yukawa"``); ``-`` and ``_`` and case are
        interchangeable when that is unambiguous.
    plugins : path or list of paths, optional
        Extra plug-in folders (see :func:`discover`).
    **params
        Parameter values: numbers in atomic units or strings with units
        (``screening_length="5angstrom"``); missing ones take their defaults.

    Raises
    ------
    InputError
        Unknown family (listing the known ones, with a near-name suggestion),
        unknown parameter (listing the family's parameters) or invalid value.
    PluginError
        See :func:`discover`.
    """
    return get_family(name, plugins).bind(**params)


def describe(family: str | PotentialFamily | "Potential", plugins: Any = None) -> str:
    """Text about a family: formula, parameters (defaults, units, ranges), docstring."""
    if isinstance(family, Potential):
        family = family.family
    fam = get_family(family, plugins)
    lines = [f"{fam.name}: {fam.description}" if fam.description else fam.name]
    if fam.formula:
        lines.append(f"  {fam.formula}")
    lines.append(f"defined in: {fam.source} ({fam.origin})")
    if fam.units != "atomic":
        lines.append(f"units: {fam.units} (V(r) in MeV at r in fm; lengths in fm, energies in MeV, "
                     "masses in MeV/c^2)")
    lines.append("")
    if fam.parameters:
        lines.append("parameters:")
        rows = []
        for key, spec in fam.parameters.items():
            kind = spec.kind
            rng = spec.range_text()
            rows.append((key, f"default {spec.default_text()}", f"[{kind}{'; ' + rng if rng else ''}]",
                         spec.description))
        widths = [max(len(r[i]) for r in rows) for i in range(3)]
        for row in rows:
            lines.append("  " + "  ".join(c.ljust(w) for c, w in zip(row[:3], widths)) +
                         (f"  {row[3]}" if row[3] else ""))
        if any(spec.is_numeric and spec.kind != "dimensionless" for spec in fam.parameters.values()):
            lines.append("  (values may carry units, e.g. 0.5angstrom, 2fm, 3eV, 2/angstrom)")
    else:
        lines.append("parameters: none")
    hooks = [h for h in HOOKS if getattr(fam, h)]
    lines.append("")
    lines.append("hooks: " + (", ".join(hooks) if hooks else "none (V is probed numerically)"))
    if fam.doc:
        lines.append("")
        lines.append(fam.doc)
    return "\n".join(lines).rstrip() + "\n"


# --------------------------------------------------------------------------- #
# Bound potentials
# --------------------------------------------------------------------------- #

def _rebuild_from_recipe(recipe: tuple, params: dict) -> "Potential":
    """Unpickling helper for families made by :func:`make_family`: rebuild, then bind."""
    func, args, kwargs = recipe
    return func(*args, **kwargs).family.bind(**params)


def _rebuild_potential(name: str, file: str | None, origin: str, params: dict) -> "Potential":
    """Unpickling helper: find the family again and bind ``params``."""
    if file is not None and origin in ("plugin folder", PLUGINS_ENV):
        return load_plugin_file(file, origin).bind(**params)
    return potential(name, **params)


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
