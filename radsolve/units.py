"""Units at the edges of radsolve: energies, lengths, masses, and their parsing.

Inside radsolve everything is in atomic units (hartree, bohr, electron masses,
ħ = 1).  This module converts to and from the units people type, and parses
strings such as ``"0.5angstrom"``, ``"3 eV"``, ``"2/angstrom"`` or
``"muon+proton"``.

Every constant comes from :mod:`scipy.constants` (CODATA).  scipy.constants is
imported lazily, on the first conversion, so that importing this module stays
cheap for the command line's start-up.
"""

from __future__ import annotations

import difflib
import math
import numbers
import re
import unicodedata
from dataclasses import dataclass
from functools import lru_cache

from radsolve.errors import InputError

#: Canonical energy unit names, in the order shown to users.
ENERGY_UNITS = ("hartree", "eV", "meV", "keV", "MeV", "rydberg", "cm-1")

#: Canonical length unit names, in the order shown to users.
LENGTH_UNITS = ("bohr", "angstrom", "nm", "pm", "fm")

#: Particles known to :func:`parse_mass`, in the order shown to users.
PARTICLES = (
    "electron", "positron", "muon", "antimuon", "tau", "proton", "neutron",
    "deuteron", "triton", "helion", "alpha",
)

#: The kinds of quantity :func:`parse_quantity` understands.
QUANTITY_KINDS = ("length", "energy", "inverse_length", "dimensionless")

# Aliases for energy units.  meV and MeV differ only in case, so those two
# (and only those two) are matched case-sensitively; every other name is also
# accepted in any case.
_ENERGY_ALIASES = {
    "hartree": "hartree", "Eh": "hartree", "Ha": "hartree", "au": "hartree",
    "eV": "eV", "meV": "meV", "keV": "keV", "MeV": "MeV",
    "rydberg": "rydberg", "Ry": "rydberg",
    "cm-1": "cm-1", "cm^-1": "cm-1",
}
_CASE_SENSITIVE_ENERGY = {"meV", "MeV"}

_LENGTH_ALIASES = {
    "bohr": "bohr", "a0": "bohr",
    "angstrom": "angstrom", "\u00c5": "angstrom",
    "nm": "nm", "pm": "pm", "fm": "fm",
}

# A decimal number, optionally signed, with an optional exponent.  The exponent
# group only matches when digits follow the "e", so "3eV" reads as 3 and "eV".
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY_RE = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$")


@lru_cache(maxsize=None)
def _energy_factors() -> dict[str, float]:
    """Hartree per unit for each canonical energy unit (CODATA via scipy)."""
    from scipy.constants import physical_constants as pc

    ev = pc["electron volt-hartree relationship"][0]
    return {
        "hartree": 1.0,
        "eV": ev,
        "meV": 1e-3 * ev,
        "keV": 1e3 * ev,
        "MeV": 1e6 * ev,
        "rydberg": pc["Rydberg constant times hc in J"][0] / pc["Hartree energy"][0],
        # 1 cm^-1 = 100 m^-1
        "cm-1": 100.0 * pc["inverse meter-hartree relationship"][0],
    }


@lru_cache(maxsize=None)
def _length_factors() -> dict[str, float]:
    """Bohr per unit for each canonical length unit (CODATA via scipy)."""
    from scipy.constants import angstrom, femto, nano, physical_constants, pico

    a0 = physical_constants["Bohr radius"][0]
    return {
        "bohr": 1.0,
        "angstrom": angstrom / a0,
        "nm": nano / a0,
        "pm": pico / a0,
        "fm": femto / a0,
    }


@lru_cache(maxsize=None)
def _particle_masses() -> dict[str, float]:
    """Mass of each known particle in electron masses (CODATA via scipy)."""
    from scipy.constants import physical_constants as pc

    def ratio(key: str) -> float:
        return pc[f"{key}-electron mass ratio"][0]

    return {
        "electron": 1.0,
        "positron": 1.0,
        "muon": ratio("muon"),
        "antimuon": ratio("muon"),
        "tau": ratio("tau"),
        "proton": ratio("proton"),
        "neutron": ratio("neutron"),
        "deuteron": ratio("deuteron"),
        "triton": ratio("triton"),
        "helion": ratio("helion"),
        "alpha": ratio("alpha particle"),
    }


def _normalize(text: str) -> str:
    # NFKC folds the angstrom sign U+212B into the letter U+00C5.
    return unicodedata.normalize("NFKC", text).strip()


def _canonical_energy_unit(unit: str) -> str | None:
    unit = _normalize(unit)
    if unit in _ENERGY_ALIASES:
        return _ENERGY_ALIASES[unit]
    folded = unit.lower()
    for alias, canonical in _ENERGY_ALIASES.items():
        if alias not in _CASE_SENSITIVE_ENERGY and alias.lower() == folded:
            return canonical
    return None


def _canonical_length_unit(unit: str) -> str | None:
    unit = _normalize(unit)
    if unit in _LENGTH_ALIASES:
        return _LENGTH_ALIASES[unit]
    folded = unit.lower()
    for alias, canonical in _LENGTH_ALIASES.items():
        if alias.lower() == folded:
            return canonical
    return None


def _unit_error(unit: object, what: str, allowed: tuple[str, ...], name: str | None = None) -> InputError:
    label = f"{name}: " if name else ""
    extra = ""
    if isinstance(unit, str) and unit.lower() == "mev":
        extra = " (meV and MeV differ by case: milli- vs mega-electronvolt)"
    return InputError(
        f"{label}unknown {what} unit {unit!r}{extra}; allowed: {', '.join(allowed)}"
    )


def energy_unit_factor(unit: str) -> float:
    """Hartree per one ``unit``.

    Parameters
    ----------
    unit : str
        One of :data:`ENERGY_UNITS` or an alias: ``Eh``, ``Ha``, ``au`` (hartree),
        ``Ry`` (rydberg), ``cm^-1`` (cm-1).  ``meV`` and ``MeV`` are
        case-sensitive; other names are not.

    Returns
    -------
    float
        The energy of 1 ``unit`` in hartree (e.g. about 0.0367 for ``"eV"``).

    Raises
    ------
    InputError
        If the unit is unknown; the message lists the allowed units.
    """
    canonical = _canonical_energy_unit(unit) if isinstance(unit, str) else None
    if canonical is None:
        raise _unit_error(unit, "energy", ENERGY_UNITS)
    return _energy_factors()[canonical]


def length_unit_factor(unit: str) -> float:
    """Bohr per one ``unit`` (``bohr``/``a0``, ``angstrom``/``Å``, ``nm``, ``pm``, ``fm``).

    Raises
    ------
    InputError
        If the unit is unknown; the message lists the allowed units.
    """
    canonical = _canonical_length_unit(unit) if isinstance(unit, str) else None
    if canonical is None:
        raise _unit_error(unit, "length", LENGTH_UNITS)
    return _length_factors()[canonical]


def to_unit(value_hartree, unit: str):
    """Convert an energy (float or array) from hartree to ``unit``."""
    return value_hartree / energy_unit_factor(unit)


def from_unit(value, unit: str):
    """Convert an energy (float or array) given in ``unit`` to hartree."""
    return value * energy_unit_factor(unit)


def _finite_number(value: object, name: str) -> float:
    """``value`` as a finite float, or InputError naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise InputError(f"{name} must be a number, got {value!r}")
    number = float(value)
    if not math.isfinite(number):
        raise InputError(f"{name} must be a finite number, got {value!r}")
    return number


#: The base length and energy unit of each unit system (see :func:`unit_system`).
_SYSTEM_BASE_UNITS = {"atomic": ("bohr", "hartree"), "nuclear": ("fm", "MeV")}


def _allowed_suffixes(kind: str, system: str = "atomic") -> str:
    length, energy = _SYSTEM_BASE_UNITS.get(system, _SYSTEM_BASE_UNITS["atomic"])
    if kind == "length":
        return f"a plain number in {length} or a number followed by one of " + ", ".join(LENGTH_UNITS)
    if kind == "energy":
        return f"a plain number in {energy} or a number followed by one of " + ", ".join(ENERGY_UNITS)
    if kind == "inverse_length":
        return (f"a plain number in 1/{length} or a number followed by "
                + ", ".join("/" + u for u in LENGTH_UNITS))
    return "a plain number (this quantity has no unit)"


def parse_quantity_in(value: object, kind: str, system: str = "atomic", name: str = "value") -> float:
    """Parse a number with an optional unit suffix into the units of ``system``.

    Like :func:`parse_quantity`, but a plain number is taken to be in the
    base unit of the unit system ``system`` (``"atomic"``: bohr, hartree,
    1/bohr; ``"nuclear"``: fm, MeV, 1/fm) and a suffixed value is converted
    to that unit: ``parse_quantity_in("0.5angstrom", "length", "nuclear")``
    is 50000 (fm).

    Raises
    ------
    InputError
        As :func:`parse_quantity`, with messages naming the system's units;
        also for an unknown ``system``.
    """
    if system not in _SYSTEM_BASE_UNITS:
        raise InputError(f"unknown unit system {system!r}; allowed: {', '.join(_SYSTEM_BASE_UNITS)}")
    if system == "atomic":
        return parse_quantity(value, kind, name)
    if not isinstance(value, str):
        return _finite_number(value, name)
    match = _QUANTITY_RE.match(_normalize(value))
    if match is not None and not match.group(2):
        number = float(match.group(1))
        if not math.isfinite(number):
            raise InputError(f"{name} must be a finite number, got {value!r}")
        return number  # already in the system's own unit: no round trip through bohr
    try:
        atomic = parse_quantity(value, kind, name)
    except InputError as exc:
        # Re-word "a plain number in bohr ..." for this system.
        message = str(exc).replace(_allowed_suffixes(kind), _allowed_suffixes(kind, system))
        raise InputError(message) from None
    length, energy = _SYSTEM_BASE_UNITS[system]
    if kind == "length":
        return atomic / _length_factors()[length]
    if kind == "energy":
        return atomic / _energy_factors()[energy]
    if kind == "inverse_length":
        return atomic * _length_factors()[length]
    return atomic


def parse_quantity(value: object, kind: str, name: str = "value") -> float:
    """Parse a number with an optional unit suffix into atomic units.

    Parameters
    ----------
    value : float or str
        A real number (already in atomic units), or a string: a number
        optionally followed by a unit, with or without a space —
        ``"10"``, ``"10bohr"``, ``"0.5angstrom"``, ``"0.84 fm"``, ``"3eV"``,
        ``"1e-3hartree"``, ``"2/angstrom"``.
    kind : {"length", "energy", "inverse_length", "dimensionless"}
        What the value is.  Lengths come back in bohr, energies in hartree,
        inverse lengths in 1/bohr (suffix ``/unit``, e.g. ``"0.5/bohr"``, or
        ``unit^-1``), dimensionless values accept no suffix.
    name : str
        How the input is called in error messages (e.g. ``"--radius"``).

    Returns
    -------
    float
        The value in atomic units.

    Raises
    ------
    InputError
        For NaN, infinities, text that is not a number, an unknown suffix or a
        suffix of the wrong kind (``"3eV"`` for a length).  The message names
        ``name`` and says what is allowed.
    """
    if kind not in QUANTITY_KINDS:
        raise InputError(f"unknown quantity kind {kind!r}; allowed: {', '.join(QUANTITY_KINDS)}")
    if not isinstance(value, str):
        return _finite_number(value, name)

    text = _normalize(value)
    match = _QUANTITY_RE.match(text)
    if match is None:
        raise InputError(
            f"{name}: cannot read {value!r} as a number; expected {_allowed_suffixes(kind)}"
        )
    number = float(match.group(1))
    if not math.isfinite(number):  # e.g. "1e999"
        raise InputError(f"{name} must be a finite number, got {value!r}")
    suffix = match.group(2)
    if not suffix:
        return number

    if kind == "length":
        unit = _canonical_length_unit(suffix)
        if unit is not None:
            return number * _length_factors()[unit]
    elif kind == "energy":
        unit = _canonical_energy_unit(suffix)
        if unit is not None:
            return number * _energy_factors()[unit]
    elif kind == "inverse_length":
        unit = None
        if suffix.startswith("/"):
            unit = _canonical_length_unit(suffix[1:].strip())
        else:
            for tail in ("^-1", "-1"):
                if suffix.endswith(tail):
                    unit = _canonical_length_unit(suffix[: -len(tail)].strip())
                    break
        if unit is not None:
            return number / _length_factors()[unit]

    # Say what the suffix is when it is a unit of another kind.
    other = None
    if _canonical_length_unit(suffix):
        other = "a length"
    elif _canonical_energy_unit(suffix):
        other = "an energy"
    elif suffix.startswith("/") and _canonical_length_unit(suffix[1:].strip()):
        other = "an inverse length"
    what = f"{suffix!r} is {other} unit" if other else f"unknown unit {suffix!r}"
    if suffix.lower() == "mev" and kind == "energy":
        what += " (meV and MeV differ by case: milli- vs mega-electronvolt)"
    raise InputError(f"{name}: {what} in {value!r}; expected {_allowed_suffixes(kind)}")


def particle_mass(name: str) -> float:
    """Mass of a known particle (see :data:`PARTICLES`) in electron masses.

    Raises
    ------
    InputError
        For an unknown name, listing the known ones and suggesting a near name.
    """
    masses = _particle_masses()
    key = _normalize(name).lower() if isinstance(name, str) else name
    if key in masses:
        return masses[key]
    near = difflib.get_close_matches(str(key), PARTICLES, n=1)
    hint = f" (did you mean {near[0]!r}?)" if near else ""
    raise InputError(
        f"mass: unknown particle {name!r}{hint}; known particles: {', '.join(PARTICLES)}"
    )


def reduced_mass(*masses: float) -> float:
    """Reduced mass 1 / (1/m1 + 1/m2 + ...) of positive masses (any one unit)."""
    if not masses:
        raise InputError("reduced_mass needs at least one mass")
    for m in masses:
        if not (m > 0 and math.isfinite(m)):
            raise InputError(f"mass must be a positive finite number, got {m!r}")
    return 1.0 / math.fsum(1.0 / m for m in masses)


def parse_mass(value: object) -> float:
    """Parse a (reduced) mass into electron masses.

    Parameters
    ----------
    value : float or str
        A positive finite number of electron masses (or such a number as a
        string), a particle name (``"muon"``), or two or more terms joined by
        ``+`` meaning the reduced mass m1·m2/(m1 + m2) (generally
        1/(1/m1 + 1/m2 + ...)): ``"electron+proton"``, ``"muon+proton"``,
        ``"electron+positron"``.  A term may itself be a number in electron
        masses (``"1+1836.15"``).  Known particles: see :data:`PARTICLES`
        (masses from CODATA via scipy.constants).

    Returns
    -------
    float
        The mass in electron masses.

    Raises
    ------
    InputError
        For zero, negative, NaN or infinite masses, unknown particle names
        (listing the known ones) and empty terms.
    """
    if not isinstance(value, str):
        mass = _finite_number(value, "mass")
        if mass <= 0:
            raise InputError(f"mass must be positive (electron masses), got {value!r}")
        return mass

    terms = [t.strip() for t in value.split("+")]
    if len(terms) > 1 and terms[0] == "" and re.fullmatch(_NUMBER, value.strip()):
        terms = [value.strip()]  # "+3" is a signed number, not an empty term
    where = f" in {value!r}" if len(terms) > 1 else ""
    masses = []
    for term in terms:
        if not term:
            raise InputError(
                f"mass: empty term in {value!r}; write particle names or numbers joined by '+', "
                "e.g. 'electron+proton'"
            )
        if re.fullmatch(_NUMBER, term):
            m = float(term)
            if not (m > 0 and math.isfinite(m)):
                raise InputError(f"mass must be a positive finite number, got {term!r}{where}")
            masses.append(m)
        elif term.lower() in ("nan", "inf", "+inf", "-inf", "infinity"):
            raise InputError(f"mass must be a positive finite number, got {term!r}{where}")
        else:
            masses.append(particle_mass(term))
    return masses[0] if len(masses) == 1 else reduced_mass(*masses)


# --- unit systems ------------------------------------------------------------

UNIT_SYSTEMS = ("atomic", "nuclear")


@dataclass(frozen=True)
class UnitSystem:
    """The units a solve works in.

    The radial equation is solved as -1/(2 m) u'' + (V - E) u = 0 in the
    system's own energy and length units, where m = ``kinetic_mass(mass)``
    absorbs hbar**2: in atomic units m is the reduced mass in electron
    masses; in nuclear units (MeV, fm) m = mu c**2 / (hbar c)**2 in
    MeV**-1 fm**-2, with mu c**2 in MeV.

    Attributes
    ----------
    name : str
        ``"atomic"`` or ``"nuclear"``.
    energy_unit, length_unit, mass_unit : str
        ``hartree``/``bohr``/``electron masses``, or ``MeV``/``fm``/``MeV/c^2``.
    """

    name: str
    energy_unit: str
    length_unit: str
    mass_unit: str

    def energy_factor(self) -> float:
        """Hartree per energy unit of this system."""
        return energy_unit_factor(self.energy_unit)

    def parse_mass(self, value: object) -> float:
        """A reduced mass in ``mass_unit``: a number, or particles joined by '+'.

        None means the system's default: one electron mass in atomic units;
        nuclear units have no default (an InputError says so).

        In nuclear units a term may also be a number with the suffix ``u``
        (unified atomic mass units, ``"56u"``) or ``MeV`` (``"939MeV"``);
        see :func:`parse_nuclear_mass`.
        """
        if value is None:
            if self.name == "atomic":
                return 1.0  # the electron, the natural default of atomic units
            raise InputError(f"mass is needed in {self.name} units (no default there): give it in "
                             f"{self.mass_unit}, in u, or as particles, e.g. 'neutron', '939.57MeV', "
                             "'1u', 'proton+neutron'")
        if self.name == "atomic":
            return parse_mass(value)
        return parse_nuclear_mass(value)

    def kinetic_mass(self, mass: float) -> float:
        """The m of -1/(2 m) u'' in this system's units for reduced mass ``mass``."""
        if self.name == "atomic":
            return float(mass)
        from scipy import constants as const

        hbar_c_MeV_fm = const.hbar * const.c / (const.mega * const.e * const.femto)
        return float(mass) / hbar_c_MeV_fm**2


def _looks_numeric(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def unit_system(name: str | None) -> UnitSystem:
    """The :class:`UnitSystem` called ``name`` (``"atomic"`` when None)."""
    key = "atomic" if name is None else str(name).strip().lower()
    if key == "atomic":
        return UnitSystem("atomic", "hartree", "bohr", "electron masses")
    if key == "nuclear":
        return UnitSystem("nuclear", "MeV", "fm", "MeV/c^2")
    raise InputError(f"unknown unit system {name!r}; allowed: {', '.join(UNIT_SYSTEMS)}")


_NUCLEAR_MASS_TERM_RE = re.compile(rf"^({_NUMBER})\s*(u|MeV|MeV/c\^?2|GeV|GeV/c\^?2)?$")


def parse_nuclear_mass(value: object) -> float:
    """Parse a (reduced) mass into MeV/c^2.

    Parameters
    ----------
    value : float or str
        A positive number of MeV/c^2, or a string of one or more terms
        joined by ``+`` meaning the reduced mass 1/(1/m1 + 1/m2 + ...).  A
        term is a number of MeV/c^2 (``"939.5"``, ``"939.5MeV"``), of GeV/c^2
        (``"1.5GeV"``), of unified atomic mass units (``"207u"``), or a
        particle name (see :data:`PARTICLES`).  So ``"neutron+207u"`` is a
        neutron bound to a core of 207 u.  The masses come from CODATA via
        scipy.constants (the u from "atomic mass constant energy
        equivalent in MeV").

    Returns
    -------
    float
        The mass in MeV/c^2.

    Raises
    ------
    InputError
        For zero, negative, NaN or infinite masses, unknown particle names
        or units, and empty terms.
    """
    from scipy.constants import physical_constants as pc

    if not isinstance(value, str):
        mass = _finite_number(value, "mass")
        if mass <= 0:
            raise InputError(f"mass must be > 0 MeV/c^2 (got {value!r})")
        return mass
    text = _normalize(value)
    terms = [t.strip() for t in text.split("+")]
    if len(terms) > 1 and terms[0] == "" and _NUCLEAR_MASS_TERM_RE.match(text[1:].strip()):
        terms = [text]  # "+3" is a signed number, not an empty term
    where = f" in {value!r}" if len(terms) > 1 else ""
    electron = pc["electron mass energy equivalent in MeV"][0]
    per_unit = {"u": pc["atomic mass constant energy equivalent in MeV"][0], "GeV": 1e3}
    masses = []
    for term in terms:
        if not term:
            raise InputError(f"mass: empty term in {value!r}; write particle names or masses "
                             "joined by '+', e.g. 'neutron+207u'")
        match = _NUCLEAR_MASS_TERM_RE.match(term)
        if match is not None:
            unit = (match.group(2) or "MeV").split("/")[0]
            m = float(match.group(1)) * per_unit.get(unit, 1.0)
            if not (m > 0 and math.isfinite(m)):
                raise InputError(f"mass must be a positive finite number, got {term!r}{where}")
            masses.append(m)
        elif term.lower() in ("nan", "inf", "+inf", "-inf", "infinity"):
            raise InputError(f"mass must be a positive finite number, got {term!r}{where}")
        elif re.match(_NUMBER, term):
            raise InputError(f"mass: cannot read {term!r}{where}; a mass in nuclear units is a "
                             "number of MeV/c^2, a number with u, MeV or GeV (e.g. 207u), "
                             "or a particle name")
        else:
            masses.append(particle_mass(term) * electron)
    return masses[0] if len(masses) == 1 else reduced_mass(*masses)
