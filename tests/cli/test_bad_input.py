"""Bad input on the command line: a clear one-line message and exit status 2.

Every case checks three things: the exit status is 2, the message on stderr
names the offending input (and, where there is a short list, what is
allowed), and there is no traceback.  A few cases run in a real process
(``python -m radsolve``) so that nothing is hidden by the in-process runner.

The fall-to-the-centre case uses V = -g/r^2 with g = 1, mu = 1, l = 0:
the Hamiltonian is unbounded below when 2 mu g > (l + 1/2)^2 (textbook
result, e.g. Landau & Lifshitz, Quantum Mechanics, section 35).
"""

from __future__ import annotations

import pytest

from helpers import CLI_PLUGINS, invoke


def assert_clean_failure(result, *words, status=2):
    """Exit ``status``, every word on stderr, no traceback anywhere."""
    assert result.exit_code == status, (result.exit_code, result.stdout, result.stderr,
                                        result.exception)
    assert "Traceback" not in result.stdout + result.stderr
    # An uncaught exception inside the runner would show up here.
    assert result.exception is None or isinstance(result.exception, SystemExit)
    for word in words:
        assert word in result.stderr, (word, result.stderr)
    assert result.stdout == ""  # nothing that could be mistaken for a result


# -------------------------------------------------------------- our own checks
# Messages raised as RadsolveError: exactly one line "radsolve: error: ...".

RADSOLVE_ERRORS = [
    # malformed -p
    (["coulomb", "-p", "Z"], ["-p", "'Z'", "KEY=VALUE"]),
    (["coulomb", "-p", "=2"], ["-p", "'=2'", "name"]),
    (["coulomb", "-p", "Z="], ["-p", "'Z'", "value"]),
    (["coulomb", "-p", "Z=1", "-p", "Z=2"], ["'Z'", "twice"]),
    # values the parameter does not accept
    (["coulomb", "-p", "Z=abc"], ["'Z'", "abc"]),
    (["coulomb", "-p", "Z=nan"], ["'Z'", "nan"]),
    (["coulomb", "-p", "Z=inf"], ["'Z'", "inf"]),
    (["coulomb", "-p", "Z=-1"], ["'Z'", "> 0"]),
    (["yukawa", "-p", "screening_length=-2"], ["'screening_length'", "> 0"]),
    (["yukawa", "-p", "screening_length=0.5angstrom", "-p", "Z=1e999"], ["'Z'", "finite"]),
    (["yukawa", "-p", "screening_length=3eV"], ["'screening_length'", "eV", "angstrom"]),
    # unknown names, with a near-name suggestion
    (["yukawwa"], ["'yukawwa'", "did you mean 'yukawa'"]),
    (["yukawa", "-p", "screening=2"], ["'screening'", "did you mean 'screening_length'"]),
    # mass
    (["coulomb", "--mass", "-1"], ["--mass", "positive"]),
    (["coulomb", "--mass", "0"], ["--mass", "positive"]),
    (["coulomb", "--mass", "nan"], ["--mass", "nan"]),
    (["coulomb", "--mass", "inf"], ["--mass", "inf"]),
    (["coulomb", "--mass", "muonn+proton"], ["--mass", "'muonn'", "'muon'"]),
    (["coulomb", "--mass", "electron+"], ["--mass", "empty"]),
    # unit, tolerance, l options
    (["coulomb", "--unit", "kcal"], ["--unit", "'kcal'", "hartree", "eV", "cm-1"]),
    (["coulomb", "--tol", "0"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "1"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "-1e-8"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "2"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "nan"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "inf"], ["--tol", "between 1e-14 and 0.1"]),
    (["coulomb", "--tol", "1e-16"], ["--tol", "1e-14"]),  # below what the solver accepts
    (["coulomb", "--l", "1", "--lmax", "2"], ["--l", "--lmax"]),
    (["coulomb", "--l", "300"], ["--l", "300"]),
    (["coulomb", "--count", "5000"], ["--count", "5000"]),
    # files and folders
    (["coulomb", "--plugins", "/nonexistent/radsolve-plugins"], ["/nonexistent/radsolve-plugins"]),
    (["coulomb", "--out", "/nonexistent/folder/levels.json"], ["--out", "/nonexistent/folder"]),
]


@pytest.mark.parametrize("args, words", RADSOLVE_ERRORS, ids=lambda a: " ".join(map(str, a)))
def test_levels_rejects(args, words):
    result = invoke("levels", *args)
    assert_clean_failure(result, *words)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("radsolve: error: "), result.stderr


# ------------------------------------------------- usage errors from typer/click

USAGE_ERRORS = [
    (["levels", "coulomb", "--method", "rk4"], ["--method", "rk4", "numerov"]),
    (["levels", "coulomb", "--format", "xml"], ["--format", "xml", "json"]),
    (["levels", "coulomb", "--l", "-1"], ["--l"]),
    (["levels", "coulomb", "--l", "one"], ["--l", "integer"]),
    (["levels", "coulomb", "--lmax", "-1"], ["--lmax"]),
    (["levels", "coulomb", "--count", "0"], ["--count"]),
    (["levels", "coulomb", "--count", "two"], ["--count"]),
    # typer's own reading of text into a number: older versions echo the text ("'small' is not a valid
    # float"), 0.29 says "Input should be a valid number"; both name the option
    (["levels", "coulomb", "--tol", "small"], ["--tol", "valid"]),
    (["levels", "coulomb", "--no-such-option"], ["--no-such-option"]),
    (["levels"], ["NAME"]),
    (["no-such-command"], ["no-such-command"]),
    (["check", "--tol", "x"], ["--tol"]),
]


@pytest.mark.parametrize("args, words", USAGE_ERRORS, ids=lambda a: " ".join(map(str, a)))
def test_usage_errors(args, words):
    assert_clean_failure(invoke(*args), *words)


@pytest.mark.parametrize("tol", ["0", "1", "nan"])
def test_check_rejects_bad_tol(tol):
    assert_clean_failure(invoke("check", "--quick", "--tol", tol), "--tol", "0 < tol < 1")


def test_potentials_unknown_name_suggests():
    assert_clean_failure(invoke("potentials", "yukawwa"), "'yukawwa'", "did you mean 'yukawa'")


# ---------------------------------------------------------------- bad plug-ins


def test_plugin_that_fails_to_import_names_file_and_cause():
    folder = CLI_PLUGINS / "broken_import"
    # Using it fails cleanly with the cause ...
    assert_clean_failure(invoke("levels", "cli_broken", "--plugins", folder),
                         "cli_broken.py", "radsolve_no_such_module_for_tests")
    # ... but it stops nothing else: the built-ins still solve,
    ok = invoke("levels", "coulomb", "--plugins", folder, "--count", "1", "--tol", "1e-6")
    assert ok.exit_code == 0, ok.stderr
    assert "1s" in ok.stdout
    # and the listing shows it as broken, with the cause, beside the others.
    listing = invoke("potentials", "--plugins", folder)
    assert listing.exit_code == 0
    assert "cli_broken -- BROKEN" in listing.stdout and "radsolve_no_such_module_for_tests" in listing.stdout
    assert "coulomb" in listing.stdout and "cli_broken.py" in listing.stderr


def test_broken_plugin_through_environment_variable():
    env = {"RADSOLVE_PLUGINS": str(CLI_PLUGINS / "broken_import")}
    listing = invoke("potentials", env=env)
    assert listing.exit_code == 0 and "cli_broken.py" in listing.stdout
    assert_clean_failure(invoke("potentials", "cli_broken", env=env), "cli_broken.py")


BAD_PLUGINS = [
    ("nan_v", "cli_nan_tail", ["nan"]),
    ("complex_v", "cli_complex", ["complex"]),
    ("wrong_shape", "cli_wrong_shape", ["shape"]),
    ("raises", "cli_raises", ["ZeroDivisionError", "deliberate failure"]),
]


@pytest.mark.parametrize("folder, name, words", BAD_PLUGINS, ids=[b[1] for b in BAD_PLUGINS])
def test_plugin_returning_unusable_values(folder, name, words):
    result = invoke("levels", name, "--plugins", CLI_PLUGINS / folder, "--count", "1", "--tol", "1e-6")
    assert_clean_failure(result, name, *words)


def test_fall_to_the_centre_is_refused():
    # 2 mu g = 2 > (l + 1/2)^2 = 1/4 (textbook result): no ground state exists.
    result = invoke("levels", "cli_inverse_square", "--plugins", CLI_PLUGINS / "inverse_square",
                    "--count", "1", "--tol", "1e-6")
    assert_clean_failure(result, "cli_inverse_square")
    assert any(w in result.stderr.lower() for w in ("fall", "unbounded", "no ground state"))


# ----------------------------------------------------------- in a real process


@pytest.mark.parametrize("args, words", [
    (["levels", "coulomb", "-p", "Z"], ["-p", "KEY=VALUE"]),
    (["levels", "yukawwa"], ["did you mean 'yukawa'"]),
    (["levels", "coulomb", "--count", "0"], ["--count"]),
    (["levels", "cli_nan_tail", "--plugins", CLI_PLUGINS / "nan_v", "--count", "1"],
     ["cli_nan_tail", "nan"]),
    (["levels", "cli_inverse_square", "--plugins", CLI_PLUGINS / "inverse_square", "--count", "1"],
     ["cli_inverse_square"]),
    (["levels", "cli_broken", "--plugins", CLI_PLUGINS / "broken_import"], ["cli_broken.py"]),
], ids=["malformed -p", "unknown potential", "count 0", "NaN plug-in", "fall to centre",
        "broken plug-in"])
def test_real_process_has_no_traceback(args, words, radsolve_process):
    proc = radsolve_process(*args)
    assert proc.returncode == 2, (proc.returncode, proc.stderr)
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.stdout == ""
    for word in words:
        assert word in proc.stderr, (word, proc.stderr)
