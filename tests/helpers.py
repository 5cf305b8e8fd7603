"""Plain helpers that several test files import (``from helpers import ...``).

pytest puts tests/ on sys.path (``pythonpath`` in pyproject.toml), so every test
folder imports this module the same way.  Fixtures live in conftest.py; what is
here is plain functions and constants, each with the source of its numbers.
"""

from __future__ import annotations

import json
from pathlib import Path

from scipy.constants import femto, physical_constants
from sympy.physics.hydrogen import E_nl

#: Plug-in folders of the command-line tests (tests/cli/cli_plugins/<case>/).
CLI_PLUGINS = Path(__file__).parent / "cli" / "cli_plugins"

# CODATA via scipy.constants.
EV_IN_HARTREE = physical_constants["electron volt-hartree relationship"][0]  # 1 eV in hartree
BOHR_M = physical_constants["Bohr radius"][0]
FM = femto / BOHR_M  # one femtometre in bohr


def exact_hydrogenic(n: int, Z: float, mu: float = 1.0) -> float:
    """Exact level of -Z/r in hartree: sympy's E_nl (infinite mass) times the reduced mass mu.

    Source: sympy.physics.hydrogen.E_nl (reference library), -Z^2/(2 n^2) hartree
    for unit mass; levels scale with mu (textbook formula).
    """
    return float(E_nl(n, Z)) * mu


def invoke(*args, env: dict | None = None):
    """Run the command line in-process (typer's CliRunner); stdout and stderr separately.

    Arguments are turned into strings, so paths and numbers may be passed as they are.
    The CLI is imported here, not at the top, so that tests of the API that import this
    module for something else do not load the command line.
    """
    from typer.testing import CliRunner

    from radsolve.cli import app

    return CliRunner().invoke(app, [str(a) for a in args], env=env)


def levels_json(*args, env: dict | None = None) -> dict:
    """``radsolve levels ARGS --format json``, which must exit 0; its document."""
    result = invoke("levels", *args, "--format", "json", env=env)
    assert result.exit_code == 0, (result.stdout, result.stderr)
    return json.loads(result.stdout)
