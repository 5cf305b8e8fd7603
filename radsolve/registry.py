"""Kept so that plug-ins written for radsolve 0.1 (``from radsolve.registry import Parameter``) still load.

New code imports from :mod:`radsolve.potentials`.
"""

from radsolve.potentials import *  # noqa: F401,F403
from radsolve.potentials import __all__  # noqa: F401
