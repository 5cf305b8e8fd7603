"""Shared fixtures of the test suite, and the markers for optional extras.

Plain helper functions that tests import live in tests/helpers.py; what needs
pytest's machinery (a temporary folder, a session-wide solve, a hook) is here.

A test that needs an optional dependency carries its marker (``needs_dask``,
``needs_pandas``, ``needs_xarray``; registered in pyproject.toml) and imports the
module inside the test or fixture, so that its file still imports without it.
Without the module the test is skipped with the reason; with
``RADSOLVE_REQUIRE_EXTRAS=1`` (set by .ci/run) or ``--require-extras`` it fails
instead, so that CI, which installs every extra, never skips one silently.
"""

from __future__ import annotations

import importlib.util
import os
import subprocess
import sys

import pytest

# helpers.py is imported as a plain module (tests/ is on sys.path); let pytest
# rewrite its asserts so that a failing check there explains itself.
pytest.register_assert_rewrite("helpers")

#: marker -> (the module the tests import, how a user gets it)
EXTRAS = {
    "needs_dask": ("distributed", "pip install 'radsolve[cluster]'"),
    "needs_pandas": ("pandas", "pip install 'radsolve[pandas]'"),
    "needs_xarray": ("xarray", "pip install 'radsolve[xarray]'"),
}


def pytest_addoption(parser):
    parser.addoption("--require-extras", action="store_true", default=False,
                     help="fail, instead of skipping, a test marked needs_* whose optional module is "
                          "not installed (also RADSOLVE_REQUIRE_EXTRAS=1; .ci/run sets it)")


def _extras_required(config) -> bool:
    return config.getoption("--require-extras") or os.environ.get("RADSOLVE_REQUIRE_EXTRAS", "") not in ("", "0")


def _missing_extra(item) -> str | None:
    """Why ``item`` cannot run here (a needs_* marker whose module is missing), or None."""
    for marker, (module, install) in EXTRAS.items():
        if item.get_closest_marker(marker) is not None and importlib.util.find_spec(module) is None:
            return f"{marker}: {module} is not installed ({install})"
    return None


def pytest_collection_modifyitems(config, items):
    # A skip mark (not a skip raised in a hook) reports the test's own file and line.
    if not _extras_required(config):
        for item in items:
            reason = _missing_extra(item)
            if reason:
                item.add_marker(pytest.mark.skip(reason=reason))


@pytest.hookimpl(tryfirst=True)
def pytest_runtest_setup(item):
    # tryfirst: fail before any fixture of the test (a Dask cluster, say) is set up.
    if _extras_required(item.config):
        reason = _missing_extra(item)
        if reason:
            pytest.fail(f"{reason}, and RADSOLVE_REQUIRE_EXTRAS / --require-extras asks for every extra",
                        pytrace=False)


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
