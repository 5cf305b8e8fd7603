"""Finding potential families: built-ins, entry points, plug-in folders; look-up by name.
Families are found (:func:`discover`) in this order:

1. the modules of the package ``radsolve.potentials.builtin`` (the built-ins);
2. entry points of the group ``radsolve.potentials``;
3. ``*.py`` files in the folders of the environment variable ``RADSOLVE_PLUGINS``
   (separated by ``os.pathsep``);
4. ``*.py`` files in the folders passed as ``plugin_dirs`` (``--plugins``).

A file or entry point that cannot be loaded, or that breaks the protocol, does
not stop the others: it is kept as a :class:`BrokenFamily` (listed by
``radsolve potentials`` with its cause; using it raises that cause).  Two
families with the same NAME are both unusable under that name, and the error
names both sources.  Each call looks at the folders and the environment as
they are then, and at the entry points as installed then (their scan is kept
while the folders on ``sys.path`` and their modification times are unchanged,
which installing or removing a package changes); the built-ins, which ship
inside the package, are read once per process.
"""

from __future__ import annotations

import difflib
import functools
import hashlib
import importlib
import importlib.util
import inspect
import os
import re
import sys
from pathlib import Path
from typing import Any, Mapping

from radsolve.errors import InputError, PluginError
from radsolve.potentials.protocol import (HOOKS, _NAME_RE, BrokenFamily, Potential, PotentialFamily,
                                         _describe_exception, _family_from_object)

#: Environment variable listing extra plug-in folders (os.pathsep-separated).
PLUGINS_ENV = "RADSOLVE_PLUGINS"

#: Entry-point group through which installed packages export families.
ENTRY_POINT_GROUP = "radsolve.potentials"


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
    """The package of built-in families, ``radsolve.potentials.builtin``."""
    return importlib.import_module("radsolve.potentials.builtin")


@functools.lru_cache(maxsize=1)
def _builtin_families() -> tuple[PotentialFamily | BrokenFamily, ...]:
    """The built-in families (frozen objects; read once: they ship inside the package)."""
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
    return tuple(found)


def _entry_point_families() -> tuple[PotentialFamily | BrokenFamily, ...]:
    """The families other installed packages declare (entry-point group ``radsolve.potentials``).

    Reading the installed packages' metadata takes milliseconds, more than a
    small solve, so the scan is kept while the places it reads stay as they
    were: the folders on sys.path, each with its modification time (installing
    or removing a package changes its folder's).
    """
    import importlib.metadata

    places = []
    for entry in sys.path:
        try:
            places.append((entry, os.stat(entry or ".").st_mtime_ns))
        except OSError:
            places.append((entry, None))
    return _scan_entry_points(tuple(places), importlib.metadata.entry_points)


@functools.lru_cache(maxsize=4)
def _scan_entry_points(places: tuple, entry_points) -> tuple[PotentialFamily | BrokenFamily, ...]:
    """The scan of :func:`_entry_point_families` for one state of ``places`` (and one ``entry_points``)."""
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
    return tuple(found)


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
            "give a folder holding *.py potential files",
            parameter=None if what == "RADSOLVE_PLUGINS" else "plugins",
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
        raise InputError(f"potential name must be a string, got {name!r}", parameter="potential")
    if name in found:
        return found[name]
    folded = {k.lower().replace("-", "_"): k for k in found}
    key = name.strip().lower().replace("-", "_")
    if key in folded:
        return found[folded[key]]
    known = sorted(found)
    near = difflib.get_close_matches(name, known, n=1)
    hint = f" (did you mean {near[0]!r}?)" if near else ""
    raise InputError(f"unknown potential {name!r}{hint}; known potentials: {', '.join(known)}",
                     parameter="potential")


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


def as_potential(potential: Any, plugins: Any = None, fixed: Mapping[str, Any] | None = None) -> Potential:
    """A bound potential from what a user passes: a family name or a Potential, with ``fixed`` values set.

    The one place where the API's functions (solve, sweep, threshold, fit)
    turn their ``potential`` argument into a :class:`Potential`.

    Raises
    ------
    InputError
        For anything else, naming what was given.
    """
    fixed = dict(fixed or {})
    if isinstance(potential, str):
        return get_family(potential, plugins).bind(**fixed)
    if not callable(potential) or not hasattr(potential, "parameters"):
        raise InputError(f"potential must be a family name or a radsolve Potential, got {type(potential).__name__}",
                         parameter="potential")
    return potential.with_parameters(**fixed) if fixed else potential


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


def _rebuild_potential(name: str, file: str | None, origin: str, params: dict) -> "Potential":
    """Unpickling helper: find the family again and bind ``params``."""
    if file is not None and origin in ("plugin folder", PLUGINS_ENV):
        return load_plugin_file(file, origin).bind(**params)
    return potential(name, **params)


