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
        f"{label}unknown {what} unit {unit!r}{extra}; allowed: {', '.join(allowed)}", parameter=name
    )


def energy_unit_factor(unit: str, parameter: str | None = "unit") -> float:
    """Hartree per one ``unit``.

    Parameters
    ----------
    unit : str
        One of :data:`ENERGY_UNITS` or an alias: ``Eh``, ``Ha``, ``au`` (hartree),
        ``Ry`` (rydberg), ``cm^-1`` (cm-1).  ``meV`` and ``MeV`` are
        case-sensitive; other names are not.
    parameter : str, optional
        The argument ``unit`` was given as, named by the error (the output
        unit ``unit`` of most functions).

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
        raise _unit_error(unit, "energy", ENERGY_UNITS, parameter)
    return _energy_factors()[canonical]


def length_unit_factor(unit: str, parameter: str | None = None) -> float:
    """Bohr per one ``unit`` (``bohr``/``a0``, ``angstrom``/``Å``, ``nm``, ``pm``, ``fm``).

    Raises
    ------
    InputError
        If the unit is unknown; the message lists the allowed units.
    """
    canonical = _canonical_length_unit(unit) if isinstance(unit, str) else None
    if canonical is None:
        raise _unit_error(unit, "length", LENGTH_UNITS, parameter)
    return _length_factors()[canonical]


def to_unit(value_hartree, unit: str):
    """Convert an energy (float or array) from hartree to ``unit``."""
    return value_hartree / energy_unit_factor(unit)


def from_unit(value, unit: str):
    """Convert an energy (float or array) given in ``unit`` to hartree."""
    return value * energy_unit_factor(unit)


def _finite_number(value: object, name: str, parameter: str | None = None) -> float:
    """``value`` as a finite float, or InputError naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise InputError(f"{name} must be a number, got {value!r}", parameter=parameter)
    number = float(value)
    if not math.isfinite(number):
        raise InputError(f"{name} must be a finite number, got {value!r}", parameter=parameter)
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


def parse_quantity_in(value: object, kind: str, system: str = "atomic", name: str = "value",
                      parameter: str | None = None) -> float:
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
        return parse_quantity(value, kind, name, parameter)
    if not isinstance(value, str):
        return _finite_number(value, name, parameter)
    match = _QUANTITY_RE.match(_normalize(value))
    if match is not None and not match.group(2):
        number = float(match.group(1))
        if not math.isfinite(number):
            raise InputError(f"{name} must be a finite number, got {value!r}", parameter=parameter)
        return number  # already in the system's own unit: no round trip through bohr
    try:
        atomic = parse_quantity(value, kind, name, parameter)
    except InputError as exc:
        # Re-word "a plain number in bohr ..." for this system.
        message = str(exc).replace(_allowed_suffixes(kind), _allowed_suffixes(kind, system))
        raise InputError(message, parameter=parameter) from None
    length, energy = _SYSTEM_BASE_UNITS[system]
    if kind == "length":
        return atomic / _length_factors()[length]
    if kind == "energy":
        return atomic / _energy_factors()[energy]
    if kind == "inverse_length":
        return atomic * _length_factors()[length]
    return atomic


def parse_quantity(value: object, kind: str, name: str = "value", parameter: str | None = None) -> float:
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
        How the input is called in error messages (e.g. ``"radius"``).
    parameter : str, optional
        The API argument the value was given as, set on the errors
        (:attr:`radsolve.errors.InputError.parameter`).

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
        return _finite_number(value, name, parameter)

    text = _normalize(value)
    match = _QUANTITY_RE.match(text)
    if match is None:
        raise InputError(
            f"{name}: cannot read {value!r} as a number; expected {_allowed_suffixes(kind)}",
            parameter=parameter,
        )
    number = float(match.group(1))
    if not math.isfinite(number):  # e.g. "1e999"
        raise InputError(f"{name} must be a finite number, got {value!r}", parameter=parameter)
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
    raise InputError(f"{name}: {what} in {value!r}; expected {_allowed_suffixes(kind)}", parameter=parameter)


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
        f"mass: unknown particle {name!r}{hint}; known particles: {', '.join(PARTICLES)}",
        parameter="mass",
    )


def reduced_mass(*masses: float) -> float:
    """Reduced mass 1 / (1/m1 + 1/m2 + ...) of positive masses (any one unit)."""
    if not masses:
        raise InputError("mass: reduced_mass needs at least one mass", parameter="mass")
    for m in masses:
        if not (m > 0 and math.isfinite(m)):
            raise InputError(f"mass must be a positive finite number, got {m!r}", parameter="mass")
    return 1.0 / math.fsum(1.0 / m for m in masses)


# --- masses as people type them ------------------------------------------------

#: Suffixes a mass may carry (``"0.50391u"``, ``"939.57MeV"``), in the order shown to users.
#: ``u`` and ``Da`` are the dalton (unified atomic mass unit), ``me`` the electron mass;
#: the energies mean that energy over c^2 (``/c^2`` may be written out).
MASS_UNITS = ("u", "Da", "me", "eV", "keV", "MeV", "GeV")

# Spellings of each mass unit.  MeV is matched case-sensitively (meV would be a
# milli-electronvolt); the others in any case.
_MASS_ALIASES = {"u": "u", "Da": "u", "dalton": "u", "amu": "u", "me": "me", "m_e": "me",
                 "eV": "eV", "keV": "keV", "MeV": "MeV", "GeV": "GeV"}
_CASE_SENSITIVE_MASS = {"MeV"}
_OVER_C_SQUARED = ("/c^2", "/c**2", "/c2")
_MASS_TERM_RE = re.compile(rf"^({_NUMBER})\s*([^+\s][^+]*?)?\s*$")
_NOT_FINITE = ("nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity")


def _canonical_mass_unit(suffix: str) -> str | None:
    unit = suffix.strip()
    for tail in _OVER_C_SQUARED:
        if unit.endswith(tail):
            unit = unit[: -len(tail)].strip()
            break
    if unit in _MASS_ALIASES:
        return _MASS_ALIASES[unit]
    for alias, canonical in _MASS_ALIASES.items():
        if alias not in _CASE_SENSITIVE_MASS and alias.lower() == unit.lower():
            return canonical
    return None


@lru_cache(maxsize=None)
def _mass_unit_factors(system: str) -> dict[str, float]:
    """One of each mass unit in the system's mass unit (CODATA via scipy.constants)."""
    from scipy.constants import physical_constants as pc

    electron_MeV = pc["electron mass energy equivalent in MeV"][0]
    if system == "atomic":  # electron masses
        per_MeV = 1.0 / electron_MeV
        dalton = 1.0 / pc["electron mass in u"][0]
        electron = 1.0
    else:  # MeV/c^2
        per_MeV = 1.0
        dalton = pc["atomic mass constant energy equivalent in MeV"][0]
        electron = electron_MeV
    return {"u": dalton, "me": electron, "eV": 1e-6 * per_MeV, "keV": 1e-3 * per_MeV,
            "MeV": per_MeV, "GeV": 1e3 * per_MeV}


def _particle_mass_in(name: str, system: str) -> float:
    mass = particle_mass(name)
    if system == "atomic":
        return mass
    from scipy.constants import physical_constants as pc

    return mass * pc["electron mass energy equivalent in MeV"][0]


def mass_syntax(system: str = "atomic") -> str:
    """What a mass may be written as in ``system``, for messages and help texts."""
    unit = "electron masses" if system == "atomic" else "MeV/c^2"
    return (f"a number of {unit}, a number followed by one of {', '.join(MASS_UNITS)} "
            f"(e.g. 0.50391u, 939.57MeV), or a particle ({', '.join(PARTICLES)}); "
            "terms joined by '+' mean their reduced mass (electron+proton)")


def parse_mass_in(value: object, system: str = "atomic") -> float:
    """Parse a (reduced) mass into the mass unit of ``system``.

    Parameters
    ----------
    value : float or str
        A positive finite number in the system's mass unit (electron masses in
        atomic units, MeV/c^2 in nuclear units), or a string of one or more
        terms joined by ``+``, meaning the reduced mass 1/(1/m1 + 1/m2 + ...).
        A term is a number in the system's unit, a number with a mass unit of
        :data:`MASS_UNITS` -- ``u`` or ``Da`` (dalton), ``me`` (electron
        masses), ``eV``, ``keV``, ``MeV``, ``GeV`` (each over c^2; ``/c^2``
        may be written out) -- or a particle name of :data:`PARTICLES`.
        Every system accepts every form: ``"0.50391u"`` in atomic units is
        0.50391 dalton in electron masses.
    system : {"atomic", "nuclear"}

    Returns
    -------
    float
        The mass in electron masses (atomic) or MeV/c^2 (nuclear).  The
        conversions use CODATA via scipy.constants (the dalton from
        "electron mass in u" or "atomic mass constant energy equivalent in
        MeV", the electron from "electron mass energy equivalent in MeV").

    Raises
    ------
    InputError
        (``parameter="mass"``) for zero, negative, NaN or infinite masses,
        unknown particles (listing the known ones) or units (listing the
        allowed ones), and empty terms.
    """
    unit = "electron masses" if system == "atomic" else "MeV/c^2"
    if not isinstance(value, str):
        mass = _finite_number(value, "mass", "mass")
        if mass <= 0:
            raise InputError(f"mass must be positive ({unit}), got {value!r}", parameter="mass")
        return mass

    text = _normalize(value)
    # Split at '+' between terms, not at the sign of an exponent ("1e+5u").
    terms = [t.strip() for t in re.split(r"(?<![0-9.][eE])\+", text)]
    if len(terms) > 1 and terms[0] == "" and _MASS_TERM_RE.match(text[1:].strip()) and len(terms) == 2:
        terms = [text]  # "+3" is a signed number, not an empty term
    where = f" in {value!r}" if len(terms) > 1 else ""
    factors = _mass_unit_factors(system)
    masses = []
    for term in terms:
        if not term:
            raise InputError(f"mass: empty term in {value!r}; write particle names or masses joined "
                             "by '+', e.g. 'electron+proton' or 'neutron+207u'", parameter="mass")
        if term.lower() in _NOT_FINITE:
            raise InputError(f"mass must be a positive finite number, got {term!r}{where}",
                             parameter="mass")
        match = _MASS_TERM_RE.match(term)
        if match is None:
            masses.append(_particle_mass_in(term, system))
            continue
        number, suffix = float(match.group(1)), match.group(2)
        factor = 1.0
        if suffix:
            canonical = _canonical_mass_unit(suffix)
            if canonical is None:
                hint = (" (MeV is written with a capital M and V: mega-electronvolt)"
                        if suffix.strip().lower().startswith("mev") else "")
                raise InputError(f"mass: cannot read {term!r}{where}: unknown mass unit {suffix!r}{hint}; "
                                 f"a mass is {mass_syntax(system)}", parameter="mass")
            factor = factors[canonical]
        m = number * factor
        if not (m > 0 and math.isfinite(m)):
            raise InputError(f"mass must be a positive finite number, got {term!r}{where}",
                             parameter="mass")
        masses.append(m)
    return masses[0] if len(masses) == 1 else reduced_mass(*masses)


def parse_mass(value: object) -> float:
    """Parse a (reduced) mass into electron masses: :func:`parse_mass_in` in atomic units.

    ``2``, ``"muon"``, ``"electron+proton"`` (the reduced mass), ``"0.50391u"``
    (daltons), ``"105.66MeV"``.  Known particles: see :data:`PARTICLES`
    (masses from CODATA via scipy.constants).
    """
    return parse_mass_in(value, "atomic")


def parse_nuclear_mass(value: object) -> float:
    """Parse a (reduced) mass into MeV/c^2: :func:`parse_mass_in` in nuclear units.

    ``"939.5"``, ``"939.5MeV"``, ``"1.5GeV"``, ``"207u"``, ``"neutron"``,
    ``"neutron+207u"`` (a neutron bound to a core of 207 u).
    """
    return parse_mass_in(value, "nuclear")


# --- unit systems ------------------------------------------------------------

UNIT_SYSTEMS = ("atomic", "nuclear")

#: The reduced masses a solve accepts, in each system's mass unit.
MASS_RANGE = {"atomic": (1e-6, 1e10), "nuclear": (1e-3, 1e8)}


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
        """The reduced mass a solve in this system uses, in ``mass_unit``.

        The one check of a mass: parsed by :func:`parse_mass_in` (numbers,
        ``u``/``Da``/``me``/``MeV``/... suffixes, particles joined by '+'), and
        inside :data:`MASS_RANGE`.  None means the system's default: one
        electron mass in atomic units; nuclear units have no default (an
        InputError says so).
        """
        if value is None:
            if self.name == "atomic":
                return 1.0  # the electron, the natural default of atomic units
            raise InputError(f"mass is needed in {self.name} units (no default there): give it in "
                             f"{self.mass_unit}, in u, or as particles, e.g. 'neutron', '939.57MeV', "
                             "'1u', 'proton+neutron'", parameter="mass")
        mass = parse_mass_in(value, self.name)
        low, high = MASS_RANGE[self.name]
        if not low <= mass <= high:
            raise InputError(f"mass {mass:.6g} {self.mass_unit} is outside the range solved here, "
                             f"{low:g} to {high:g} {self.mass_unit}", parameter="mass")
        return mass

    def kinetic_mass(self, mass: float) -> float:
        """The m of -1/(2 m) u'' in this system's units for reduced mass ``mass``."""
        if self.name == "atomic":
            return float(mass)
        return float(mass) / self.hbar_c() ** 2

    def hbar_c(self) -> float:
        """hbar c in this system's energy times length unit (CODATA via scipy.constants):
        1/alpha hartree bohr in atomic units (hbar = 1, c = 1/alpha), MeV fm in nuclear units."""
        from scipy import constants as const

        if self.name == "atomic":
            return 1.0 / const.fine_structure
        return const.hbar * const.c / (const.mega * const.e * const.femto)

    def coulomb_constant(self) -> float:
        """alpha hbar c, the strength of -1/r between unit charges: 1 hartree bohr in
        atomic units, about 1.44 MeV fm in nuclear units."""
        if self.name == "atomic":
            return 1.0
        from scipy import constants as const

        return const.fine_structure * self.hbar_c()

    def rest_energy(self, mass: float) -> float:
        """mass c**2 in this system's energy unit, ``mass`` in ``mass_unit`` (electron
        masses: times c**2 = 1/alpha**2 hartree; MeV/c**2: the number itself)."""
        if self.name == "atomic":
            return float(mass) * self.hbar_c() ** 2
        return float(mass)


def unit_system(name: str | None) -> UnitSystem:
    """The :class:`UnitSystem` called ``name`` (``"atomic"`` when None)."""
    key = "atomic" if name is None else str(name).strip().lower()
    if key == "atomic":
        return UnitSystem("atomic", "hartree", "bohr", "electron masses")
    if key == "nuclear":
        return UnitSystem("nuclear", "MeV", "fm", "MeV/c^2")
    raise InputError(f"unknown unit system {name!r}; allowed: {', '.join(UNIT_SYSTEMS)}",
                     parameter="units")


def family_unit_system(family, units: str | None = None) -> UnitSystem:
    """The unit system a solve of ``family`` works in: its own, which ``units`` may name.

    The one check of ``units`` (solve, sweep, threshold, fit): a family is
    solved in the system it is written in (``family.units`` or its module's
    ``UNITS``), and any other is an InputError (``parameter="units"``).
    """
    declared = getattr(family, "units", None)
    if declared is None:
        declared = getattr(getattr(family, "module", None), "UNITS", None)
    declared = "atomic" if declared is None else str(declared).lower()
    system = unit_system(declared if units is None else units)
    if system.name != declared:
        name = getattr(family, "name", family)
        raise InputError(f"units {system.name}: potential {name!r} is written in {declared} units, and "
                         f"another unit system is not supported for it; allowed for it: {declared}",
                         parameter="units")
    return system


def stored_energy_factor(system: str, unit: str | None) -> float:
    """Energies stored in ``system``'s unit (hartree or MeV) per one ``unit``: divide a stored energy
    by it to express it in ``unit`` (1 when ``unit`` is None: the system's own unit)."""
    if unit is None:
        return 1.0
    factor = energy_unit_factor(unit)
    return factor if system == "atomic" else factor / unit_system(system).energy_factor()


def stored_energy_unit(system: str, unit: str | None) -> str:
    """``unit``, or the system's own energy unit when it is None."""
    return unit if unit is not None else ("hartree" if system == "atomic" else "MeV")
