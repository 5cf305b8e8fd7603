"""Parameters of potential families: kinds, units, ranges and parsing of values.

A family's ``PARAMETERS`` maps names to defaults or to :class:`Parameter`
objects; :func:`as_parameter` turns either into a :class:`Parameter`.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from radsolve.errors import InputError, PluginError

#: Parameter kinds (see :class:`Parameter`).
PARAMETER_KINDS = ("dimensionless", "length", "energy", "inverse_length", "choice", "text")

#: Names a family may not use for a parameter: they are taken by V's radius
#: argument, by the ``exact_energy(n, l, mass, ...)`` hook, or by
#: :func:`potential`'s own keyword.
RESERVED_PARAMETER_NAMES = frozenset({"r", "n", "l", "mass", "plugins"})

#: The optional hooks of a family and how many positional arguments each takes
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
                raise InputError(f"{label} must be text, got {value!r}", parameter=name, family=family or None)
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
                f"{label} must be one of {', '.join(self.choices)}; got {value!r}{hint}",
                parameter=name, family=family or None,
            )

        from radsolve.units import parse_quantity_in

        try:
            number = parse_quantity_in(value, self.kind, self.units, name=label)
        except InputError as exc:
            raise InputError(str(exc), parameter=name, family=family or None) from None
        given = str(value)
        if isinstance(value, str) and _fmt(number) != value.strip():
            given = f"{value.strip()} = {_fmt(number)}{self._unit_suffix}"
        if self.minimum is not None:
            low_bad = number <= self.minimum if self.exclusive_minimum else number < self.minimum
            if low_bad:
                raise InputError(f"{label} must be {self.range_text()} (got {given})", parameter=name,
                                 family=family or None)
        if self.maximum is not None:
            high_bad = number >= self.maximum if self.exclusive_maximum else number > self.maximum
            if high_bad:
                raise InputError(f"{label} must be {self.range_text()} (got {given})", parameter=name,
                                 family=family or None)
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
            from radsolve.units import length_unit_factor

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
            f"radsolve.potentials.Parameter, got {spec!r}"
        )
    if isinstance(spec, str):
        return Parameter(spec, kind="text")
    return Parameter(float(spec))


