"""Shared fixtures of the test suite.

Plain helper functions that tests import live in tests/helpers.py; what needs
pytest's machinery (a temporary folder, a session-wide solve) is here.
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

# helpers.py is imported as a plain module (tests/ is on sys.path); let pytest
# rewrite its asserts so that a failing check there explains itself.
pytest.register_assert_rewrite("helpers")


@pytest.fixture(scope="session")
def radsolve_process(tmp_path_factory):
    """Run ``python -m radsolve ARGS`` in a real process; returns the CompletedProcess.

    The process runs in an empty folder outside the repository, so that it uses the
    installed radsolve as a user's shell would, with RADSOLVE_PLUGINS and
    RADSOLVE_TRACEBACK removed from its environment (``env_extra`` adds variables).
    The 600 s timeout only guards against a hang; it is no speed goal.
    """
    cwd = tmp_path_factory.mktemp("neutral-cwd")

    def run(*args, env_extra: dict | None = None) -> subprocess.CompletedProcess:
        env = dict(os.environ)
        env.pop("RADSOLVE_PLUGINS", None)
        env.pop("RADSOLVE_TRACEBACK", None)
        env.update(env_extra or {})
        return subprocess.run([sys.executable, "-m", "radsolve", *map(str, args)],
                              capture_output=True, text=True, env=env, timeout=600, cwd=cwd)

    return run


@pytest.fixture(scope="session")
def hydrogen_result():
    """One solve of -1/r for l = 0..4 with 5 levels each (n <= 9), unit mass, tol 1e-10."""
    import radsolve

    result = radsolve.solve("coulomb", l=[0, 1, 2, 3, 4], count=5, tol=1e-10)
    assert result.success, result.message
    return result
