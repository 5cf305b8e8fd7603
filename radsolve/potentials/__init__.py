"""Potentials: the family protocol, the discovery of families, and binding parameters.

- :mod:`~radsolve.potentials.parameters` — a family's parameters and how values are parsed;
- :mod:`~radsolve.potentials.protocol` — what a family is (checked), :func:`make_family`,
  and :class:`Potential`, a family bound to parameter values;
- :mod:`~radsolve.potentials.discovery` — finding families (built-ins, entry points,
  plug-in folders) and :func:`potential`, the look-up by name;
- :mod:`~radsolve.potentials.formula`, :mod:`~radsolve.potentials.tabulated` — families
  built from a formula or a table;
- :mod:`radsolve.potentials.builtin` — the built-in families, one module each.

Plug-in authors need only this package::

    from radsolve.potentials import Parameter
"""

from radsolve.potentials.discovery import (
    ENTRY_POINT_GROUP,
    PLUGINS_ENV,
    as_potential,
    broken_families,
    describe,
    discover,
    families,
    get_family,
    load_plugin_file,
    plugin_folders,
    potential,
    usable_families,
)
from radsolve.potentials.parameters import PARAMETER_KINDS, Parameter, as_parameter
from radsolve.potentials.protocol import (
    HOOKS,
    BrokenFamily,
    ChannelPotential,
    Potential,
    PotentialFamily,
    make_family,
)

__all__ = ["ENTRY_POINT_GROUP", "HOOKS", "PARAMETER_KINDS", "PLUGINS_ENV", "BrokenFamily", "ChannelPotential",
           "Parameter", "Potential", "PotentialFamily", "as_parameter", "as_potential", "broken_families", "describe", "discover",
           "families", "get_family", "load_plugin_file", "make_family", "plugin_folders", "potential",
           "usable_families"]
