"""Relativistic levels: the Dirac and Klein-Gordon radial equations.

The equation a solve uses is chosen by ``solve(equation=...)``; this package
holds everything that is not the Schrodinger equation.  It is light to import
(the command line reads :data:`EQUATIONS` at start-up); the numerical pieces
are its submodules:

``effective``
    A relativistic channel (Dirac kappa, or Klein-Gordon l) turned into the
    exactly equivalent second-order equation for one function, with an
    energy-dependent effective potential V_eff(r; W).
``selfconsistent``
    Any registered Schrodinger method made to solve that equation: on each
    grid the level with k nodes is the W for which the k-th eigenvalue of
    -1/(2m) u'' + V_eff(r; W) u equals W.
``exact``
    The textbook Dirac-Coulomb and Klein-Gordon-Coulomb energies.
``front``
    The relativistic branch of :func:`radsolve.solve`: input checks, one
    Schrodinger-machinery solve per channel, labels n l j, one SolveResult.
"""

from __future__ import annotations

from radsolve.errors import InputError

SCHRODINGER = "schrodinger"
DIRAC = "dirac"
KLEIN_GORDON = "klein-gordon"

#: The equations ``solve(equation=...)`` accepts, the default first.
EQUATIONS = (SCHRODINGER, DIRAC, KLEIN_GORDON)

_SPELLINGS = {
    "schrodinger": SCHRODINGER, "schroedinger": SCHRODINGER, "schrödinger": SCHRODINGER,
    "dirac": DIRAC,
    "klein-gordon": KLEIN_GORDON, "klein_gordon": KLEIN_GORDON, "kleingordon": KLEIN_GORDON,
    "klein–gordon": KLEIN_GORDON, "kg": KLEIN_GORDON,
}


def validated_equation(equation) -> str:
    """The canonical name of ``equation`` (one of :data:`EQUATIONS`), or InputError(parameter="equation")."""
    if equation is None:
        return SCHRODINGER
    key = equation.strip().lower() if isinstance(equation, str) else None
    if key not in _SPELLINGS:
        raise InputError(f"equation must be one of {', '.join(EQUATIONS)}, got {equation!r}",
                         parameter="equation")
    return _SPELLINGS[key]
