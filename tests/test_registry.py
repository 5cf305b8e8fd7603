"""The plug-in protocol: discovery, validation, parameter parsing and checked evaluation."""

import os
import pickle
import textwrap
from importlib.metadata import EntryPoint
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from scipy.constants import angstrom, femto, physical_constants

from radsolve import potentials as registry
from radsolve.errors import InputError, PluginError
from radsolve.potentials import (
    Parameter,
    Potential,
    PotentialFamily,
    describe,
    discover,
    families,
    potential,
)

FIXTURES = Path(__file__).parent / "plugins_fixture"
BOHR_M = physical_constants["Bohr radius"][0]
BUILT_INS = {"coulomb", "yukawa", "finite_nucleus", "empty_core", "flat_core", "harmonic", "linear",
             "woods_saxon", "cornell", "rytova_keldysh", "alkali_model"}


@pytest.fixture(autouse=True)
def _no_plugin_env(monkeypatch):
    monkeypatch.delenv(registry.PLUGINS_ENV, raising=False)


def write(folder: Path, name: str, body: str) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / name
    path.write_text(textwrap.dedent(body))
    return path


def refused(folders):
    """What a broken plug-in gives: one BrokenFamily, whose use raises its cause, and
    every other family still usable (a broken file must not stop the rest)."""
    found = discover(folders)
    broken = registry.broken_families(found)
    assert len(broken) == 1, broken
    (fam,) = broken.values()
    assert BUILT_INS <= set(registry.usable_families(found))
    assert potential("coulomb", plugins=folders)(np.array([2.0])).tolist() == [-0.5]
    with pytest.raises(PluginError) as info:
        potential(fam.name, plugins=folders)
    assert str(info.value) == fam.cause
    assert "Traceback" not in fam.cause
    return info


MINIMAL = """\
    import numpy as np
    NAME = "gauss_well"
    PARAMETERS = {"depth": 2.0, "width": 1.5}   # defaults, atomic units
    def V(r, depth, width):
        return -depth * np.exp(-(r / width) ** 2)
"""


# --------------------------------------------------------------------------- built-ins

def test_all_built_ins_are_discovered():
    found = discover()
    assert set(found) == BUILT_INS
    for fam in found.values():
        assert fam.origin == "built-in"
        assert Path(fam.source).is_file()
        assert fam.description and fam.formula and fam.doc
        for key, spec in fam.parameters.items():
            assert spec.description, (fam.name, key)


def test_families_is_sorted():
    assert families() == sorted(BUILT_INS)


def test_built_in_defaults_bind_and_evaluate():
    r = np.geomspace(1e-6, 50, 40)
    for name in BUILT_INS:
        pot = potential(name)
        values = pot(r)
        assert values.shape == r.shape and np.all(np.isfinite(values))


# --------------------------------------------------------------------------- minimal plug-in

def test_fixture_file_is_the_documented_minimal_form():
    assert (FIXTURES / "gauss_well.py").read_text() == textwrap.dedent(MINIMAL)


def check_gauss_well(pot):
    r = np.array([0.0, 0.5, 1.5, 4.0])
    assert pot.name == "gauss_well"
    assert pot.parameters == {"depth": 2.0, "width": 1.5}
    np.testing.assert_allclose(pot(r), -2.0 * np.exp(-(r / 1.5) ** 2), rtol=1e-15)
    assert pot.v_infinity() is None and pot.small_r() is None
    assert pot.exact_energy(1, 0, 1.0) is None and pot.breakpoints() == []


def test_minimal_plugin_via_plugin_dirs():
    found = discover(plugin_dirs=[FIXTURES])
    assert set(found) == BUILT_INS | {"gauss_well"}
    fam = found["gauss_well"]
    assert fam.origin == "plugin folder"
    assert fam.source == str((FIXTURES / "gauss_well.py").resolve())
    assert fam.parameters["depth"] == Parameter(2.0)
    check_gauss_well(potential("gauss_well", plugins=[FIXTURES]))


def test_minimal_plugin_via_environment(tmp_path, monkeypatch):
    write(tmp_path / "env", "gauss_well.py", MINIMAL)
    monkeypatch.setenv(registry.PLUGINS_ENV, str(tmp_path / "nothing-here") + "x")
    with pytest.raises(InputError, match="RADSOLVE_PLUGINS"):
        discover()
    other = tmp_path / "other"
    other.mkdir()
    monkeypatch.setenv(registry.PLUGINS_ENV, f"{tmp_path / 'env'}{os.pathsep}{other}")
    check_gauss_well(potential("gauss_well"))
    assert discover()["gauss_well"].origin == registry.PLUGINS_ENV


def test_plugin_dir_may_be_a_single_path_or_file(tmp_path):
    path = write(tmp_path, "gauss_well.py", MINIMAL)
    assert "gauss_well" in discover(tmp_path)
    assert "gauss_well" in discover(str(path))


def test_sys_path_is_not_changed(tmp_path):
    import sys

    write(tmp_path, "gauss_well.py", MINIMAL)
    before = list(sys.path)
    discover([tmp_path])
    assert sys.path == before


def test_edits_to_a_plugin_are_seen(tmp_path):
    write(tmp_path, "gauss_well.py", MINIMAL)
    assert potential("gauss_well", plugins=tmp_path).parameters["depth"] == 2.0
    write(tmp_path, "gauss_well.py", MINIMAL.replace('"depth": 2.0', '"depth": 3.0'))
    assert potential("gauss_well", plugins=tmp_path).parameters["depth"] == 3.0


def test_underscore_files_are_skipped():
    # tests/plugins_fixture/_helper_skipped.py raises when executed.
    assert "gauss_well" in discover([FIXTURES])


def test_same_folder_twice_is_not_a_duplicate():
    assert "gauss_well" in discover([FIXTURES, FIXTURES])


def test_missing_folder_is_input_error(tmp_path):
    with pytest.raises(InputError) as info:
        discover([tmp_path / "absent"])
    assert "absent" in str(info.value) and "--plugins" in str(info.value)


# --------------------------------------------------------------------------- broken plug-ins

def test_import_failure_names_file_and_cause(tmp_path):
    path = write(tmp_path, "broken.py", "import numpy as np\nNAME = 'x'\n1 / 0\n")
    info = refused([tmp_path])
    message = str(info.value)
    assert str(path) in message and "ZeroDivisionError" in message
    assert "Traceback" not in message


def test_syntax_error_names_file(tmp_path):
    path = write(tmp_path, "typo.py", "NAME = 'typo'\ndef V(r:\n")
    info = refused([tmp_path])
    assert str(path) in str(info.value) and "SyntaxError" in str(info.value)


@pytest.mark.parametrize("missing", ["NAME", "PARAMETERS", "V"])
def test_missing_attribute_is_named(tmp_path, missing):
    lines = {"NAME": "NAME = 'well'", "PARAMETERS": "PARAMETERS = {'depth': 1.0}",
             "V": "def V(r, depth):\n    return -depth + 0 * r"}
    body = "\n".join(v for k, v in lines.items() if k != missing) + "\n"
    path = write(tmp_path, "well.py", body)
    info = refused([tmp_path])
    assert str(path) in str(info.value) and missing in str(info.value)


def test_v_signature_must_accept_parameters(tmp_path):
    path = write(tmp_path, "well.py", """\
        NAME = "well"
        PARAMETERS = {"depth": 1.0, "width": 2.0}
        def V(r, depth):
            return -depth + 0 * r
    """)
    info = refused([tmp_path])
    assert str(path) in str(info.value) and "width" in str(info.value)


def test_v_taking_keyword_catch_all_is_accepted(tmp_path):
    write(tmp_path, "well.py", """\
        NAME = "well"
        PARAMETERS = {"depth": 1.0}
        def V(r, **params):
            return -params["depth"] + 0 * r
    """)
    assert potential("well", plugins=tmp_path)(np.ones(3)).tolist() == [-1.0] * 3


@pytest.mark.parametrize("bad_name", ["'two words'", "3", "''", "'9lives'"])
def test_bad_name_is_refused(tmp_path, bad_name):
    path = write(tmp_path, "p.py", f"NAME = {bad_name}\nPARAMETERS = {{}}\ndef V(r):\n    return r\n")
    info = refused([tmp_path])
    assert "NAME" in str(info.value)
    assert str(path) in str(info.value)


@pytest.mark.parametrize("param", ["r", "mass", "l", "n", "plugins"])
def test_reserved_parameter_names_are_refused(tmp_path, param):
    write(tmp_path, "p.py", f"NAME = 'p'\nPARAMETERS = {{'{param}': 1.0}}\n"
                            f"def V(r, **k):\n    return r\n")
    assert "reserved" in str(refused([tmp_path]).value)


def test_default_outside_its_range_is_a_plugin_error(tmp_path):
    path = write(tmp_path, "p.py", """\
        from radsolve.potentials import Parameter
        NAME = "p"
        PARAMETERS = {"width": Parameter(-1.0, kind="length", minimum=0.0, exclusive_minimum=True)}
        def V(r, width):
            return -1.0 / (r + width)
    """)
    info = refused([tmp_path])
    assert str(path) in str(info.value) and "width" in str(info.value)


def test_duplicate_names_name_both_files(tmp_path):
    first = write(tmp_path / "a", "gauss_well.py", MINIMAL)
    second = write(tmp_path / "b", "other_name.py", MINIMAL)
    info = refused([tmp_path / "a", tmp_path / "b"])
    message = str(info.value)
    assert str(first.resolve()) in message and str(second.resolve()) in message


def test_duplicate_of_a_built_in_is_an_error(tmp_path):
    path = write(tmp_path, "mine.py", MINIMAL.replace("gauss_well", "coulomb"))
    found = discover([tmp_path])
    # Neither is taken silently: the name is unusable until one is renamed,
    # and every other family still works.
    assert set(registry.broken_families(found)) == {"coulomb"}
    assert BUILT_INS - {"coulomb"} <= set(registry.usable_families(found))
    with pytest.raises(PluginError) as info:
        potential("coulomb", plugins=tmp_path)
    assert "coulomb.py" in str(info.value) and str(path.resolve()) in str(info.value)
    assert potential("yukawa", plugins=tmp_path)(np.array([1.0])).size == 1


# --------------------------------------------------------------------------- checked evaluation

def bad_plugin(tmp_path, body):
    path = write(tmp_path, "bad.py", "import numpy as np\nNAME = 'bad'\nPARAMETERS = {}\n" + body)
    return potential("bad", plugins=tmp_path), path


def test_nan_values_name_family_file_and_radius(tmp_path):
    pot, path = bad_plugin(tmp_path, "def V(r):\n    return np.where(r > 2, np.nan, -1.0 / r)\n")
    with pytest.raises(PluginError) as info:
        pot(np.array([1.0, 2.0, 2.5, 3.0]))
    message = str(info.value)
    assert "'bad'" in message and str(path.resolve()) in message
    assert "nan" in message and "r = 2.5 bohr" in message


def test_infinite_values_are_refused(tmp_path):
    pot, _ = bad_plugin(tmp_path, "def V(r):\n    with np.errstate(divide='ignore'):\n"
                                  "        return -1.0 / (r - 1.0)\n")
    with pytest.raises(PluginError, match="r = 1 bohr"):
        pot(np.array([0.5, 1.0, 2.0]))


def test_complex_values_are_refused(tmp_path):
    pot, path = bad_plugin(tmp_path, "def V(r):\n    return -1.0 / r + 1j * (r > 1)\n")
    with pytest.raises(PluginError) as info:
        pot(np.array([0.5, 1.0, 1.5]))
    assert "complex" in str(info.value) and "r = 1.5 bohr" in str(info.value)
    assert str(path.resolve()) in str(info.value)


def test_complex_values_with_zero_imaginary_part_are_real(tmp_path):
    pot, _ = bad_plugin(tmp_path, "def V(r):\n    return (-1.0 / r).astype(complex)\n")
    values = pot(np.array([0.5, 2.0]))
    assert values.dtype == float and values.tolist() == [-2.0, -0.5]


@pytest.mark.parametrize("body", [
    "def V(r):\n    return -np.sum(1.0 / r)\n",          # a scalar for an array
    "def V(r):\n    return (-1.0 / r)[:-1]\n",            # one value short
    "def V(r):\n    return np.outer(r, r)\n",             # 2-d
])
def test_wrong_shape_is_refused(tmp_path, body):
    pot, path = bad_plugin(tmp_path, body)
    with pytest.raises(PluginError, match="shape") as info:
        pot(np.linspace(1, 2, 5))
    assert str(path.resolve()) in str(info.value)


def test_exception_inside_v_is_a_plugin_error(tmp_path):
    pot, path = bad_plugin(tmp_path, "def V(r):\n    raise KeyError('oops')\n")
    with pytest.raises(PluginError) as info:
        pot(np.ones(2))
    assert "KeyError" in str(info.value) and str(path.resolve()) in str(info.value)


def test_v_may_not_modify_the_grid(tmp_path):
    pot, _ = bad_plugin(tmp_path, "def V(r):\n    r[0] = 5.0\n    return -1.0 / r\n")
    r = np.array([1.0, 2.0])
    with pytest.raises(PluginError):
        pot(r)
    assert r.tolist() == [1.0, 2.0]


def test_non_numeric_values_are_refused(tmp_path):
    pot, _ = bad_plugin(tmp_path, "def V(r):\n    return np.array(['a'] * r.size)\n")
    with pytest.raises(PluginError, match="not real numbers"):
        pot(np.ones(2))


def test_scalar_and_array_radii():
    pot = potential("coulomb", Z=2)
    value = pot(0.5)
    assert np.shape(value) == () and float(value) == -4.0
    grid = np.array([[1.0, 2.0], [4.0, 8.0]])
    assert pot(grid).shape == (2, 2)
    assert pot([1.0, 2.0]).tolist() == [-2.0, -1.0]


def test_broken_hook_is_a_plugin_error(tmp_path):
    write(tmp_path, "p.py", """\
        NAME = "p"
        PARAMETERS = {"depth": 1.0}
        def V(r, depth):
            return -depth / (1 + r)
        def v_infinity(depth):
            return float("nan")
        def breakpoints(depth):
            return [-1.0]
    """)
    pot = potential("p", plugins=tmp_path)
    with pytest.raises(PluginError, match="v_infinity"):
        pot.v_infinity()
    with pytest.raises(PluginError, match="breakpoints"):
        pot.breakpoints()


# --------------------------------------------------------------------------- entry points

def test_entry_points_load_modules_and_objects(tmp_path, monkeypatch):
    write(tmp_path, "ep_module_family.py", MINIMAL.replace("gauss_well", "ep_well"))
    monkeypatch.syspath_prepend(str(tmp_path))
    holder = SimpleNamespace(
        NAME="ep_object", PARAMETERS={"k": 2.0}, V=lambda r, k: k * r**2, __doc__="A bowl.\n"
    )
    monkeypatch.setattr(registry, "_test_holder", holder, raising=False)
    eps = [
        EntryPoint("ep_well", "ep_module_family", registry.ENTRY_POINT_GROUP),
        EntryPoint("ep_object", "radsolve.potentials:_test_holder", registry.ENTRY_POINT_GROUP),
    ]

    def fake_entry_points(group=None):
        return [ep for ep in eps if ep.group == group]

    monkeypatch.setattr("importlib.metadata.entry_points", fake_entry_points)
    found = discover()
    assert found["ep_well"].origin == "entry point" and "ep_module_family" in found["ep_well"].source
    assert potential("ep_object", k=3)(np.array([2.0])).tolist() == [12.0]
    assert found["ep_object"].description == "A bowl."


def test_entry_point_that_fails_to_load(monkeypatch):
    ep = EntryPoint("ghost", "no_such_module_for_radsolve", registry.ENTRY_POINT_GROUP)
    monkeypatch.setattr("importlib.metadata.entry_points", lambda group=None: [ep])
    info = refused(None)
    assert "ghost" in str(info.value) and "ModuleNotFoundError" in str(info.value)


# --------------------------------------------------------------------------- names and parameters

def test_unknown_family_suggests_near_name():
    with pytest.raises(InputError) as info:
        potential("yukwa")
    message = str(info.value)
    assert "did you mean 'yukawa'" in message
    for name in BUILT_INS:
        assert name in message


def test_family_names_forgive_case_and_dashes():
    assert potential("Finite-Nucleus").name == "finite_nucleus"


def test_unknown_parameter_lists_and_suggests():
    with pytest.raises(InputError) as info:
        potential("yukawa", screning_length=3)
    message = str(info.value)
    assert "'screning_length'" in message and "did you mean 'screening_length'" in message
    assert "Z" in message


def test_unit_suffixed_parameters():
    # 5 Å in bohr from CODATA via scipy.constants.
    pot = potential("yukawa", screening_length="5angstrom")
    assert pot.parameters["screening_length"] == pytest.approx(5 * angstrom / BOHR_M, rel=1e-12)
    nucleus = potential("finite_nucleus", radius="0.84 fm")
    assert nucleus.parameters["radius"] == pytest.approx(0.84 * femto / BOHR_M, rel=1e-12)
    well = potential("flat_core", well_depth="2eV")
    assert well.parameters["well_depth"] == pytest.approx(
        2 * physical_constants["electron volt-hartree relationship"][0], rel=1e-12)


@pytest.mark.parametrize("value", [-1, 0, "-1angstrom", "0fm"])
def test_negative_or_zero_lengths_are_refused(value):
    with pytest.raises(InputError) as info:
        potential("yukawa", screening_length=value)
    message = str(info.value)
    assert "parameter 'screening_length' of yukawa must be > 0 bohr" in message
    assert f"got {value}" in message


def test_wrong_unit_kind_names_the_parameter():
    with pytest.raises(InputError, match="screening_length"):
        potential("yukawa", screening_length="3eV")


def test_choice_parameter():
    assert potential("finite_nucleus", model="Gaussian").parameters["model"] == "gaussian"
    with pytest.raises(InputError) as info:
        potential("finite_nucleus", model="fermy")
    assert "uniform, gaussian, fermi" in str(info.value) and "did you mean 'fermi'" in str(info.value)


def test_cross_parameter_validation_happens_at_binding():
    # An rms radius below sqrt(12)·a is impossible for a Fermi shape.
    with pytest.raises(InputError, match="sqrt\\(12\\)"):
        potential("finite_nucleus", model="fermi", radius="1fm", diffuseness="0.5fm")


def test_missing_parameters_take_defaults():
    pot = potential("yukawa", Z=2)
    assert pot.parameters == {"Z": 2.0, "screening_length": 5.0}


def test_with_parameters_repr_equality_and_hash():
    pot = potential("yukawa", Z=2)
    wider = pot.with_parameters(screening_length="1nm")
    assert wider.parameters["Z"] == 2.0 and wider.name == "yukawa"
    assert wider != pot and pot == potential("yukawa", Z=2.0)
    assert hash(pot) == hash(potential("yukawa", Z=2.0))
    assert repr(pot) == "Potential('yukawa', Z=2.0, screening_length=5.0)"
    with pytest.raises(InputError):
        pot.with_parameters(Z=-1)


def test_parameters_property_is_a_copy():
    pot = potential("coulomb")
    pot.parameters["Z"] = 99.0
    assert pot.parameters["Z"] == 1.0


def test_pickle_round_trip(tmp_path):
    pot = potential("finite_nucleus", Z=6, radius="2.5fm", model="fermi")
    again = pickle.loads(pickle.dumps(pot))
    assert again == pot
    write(tmp_path, "gauss_well.py", MINIMAL)
    plug = potential("gauss_well", plugins=tmp_path, depth=4)
    again = pickle.loads(pickle.dumps(plug))
    assert again.parameters == plug.parameters and float(again(1.0)) == float(plug(1.0))


def test_exact_energy_argument_checks():
    pot = potential("coulomb")
    with pytest.raises(InputError):
        pot.exact_energy(1, 1, 1.0)
    with pytest.raises(InputError):
        pot.exact_energy(2, 0, -1.0)


def test_bare_string_default_is_text(tmp_path):
    write(tmp_path, "p.py", """\
        NAME = "p"
        PARAMETERS = {"depth": 1, "label": "demo"}
        def V(r, depth, label):
            return -depth / (1.0 + r)
    """)
    fam = discover([tmp_path])["p"]
    assert fam.parameters["label"].kind == "text"
    assert fam.parameters["depth"] == Parameter(1.0)
    assert potential("p", plugins=tmp_path, label="x").parameters == {"depth": 1.0, "label": "x"}
    with pytest.raises(InputError, match="text"):
        potential("p", plugins=tmp_path, label=3)


# --------------------------------------------------------------------------- Parameter

def test_parameter_ranges_and_messages():
    spec = Parameter(1.0, kind="energy", minimum=-2.0, maximum=5.0, exclusive_maximum=True)
    assert spec.parse("1eV", "depth", "well") == pytest.approx(
        physical_constants["electron volt-hartree relationship"][0], rel=1e-12)
    assert spec.parse(-2.0, "depth") == -2.0
    with pytest.raises(InputError, match=r"parameter 'depth' of well must be >= -2 hartree and < 5 hartree"):
        spec.parse(5.0, "depth", "well")
    with pytest.raises(PluginError):
        Parameter(1.0, kind="speed")
    with pytest.raises(PluginError):
        Parameter("a", kind="choice")
    assert Parameter("a", choices=["a", "b"]).kind == "choice"


def test_describe_text():
    text = describe("yukawa")
    assert "yukawa" in text and "exp(-r/D)" in text
    assert "screening_length" in text and "default 5 bohr" in text and "> 0 bohr" in text
    assert "Yukawa" in text  # the docstring is included
    assert describe(potential("coulomb")).startswith("coulomb")


def test_family_objects_are_accepted():
    fam = discover()["harmonic"]
    assert isinstance(fam, PotentialFamily)
    pot = potential(fam, omega="0.1hartree")
    assert isinstance(pot, Potential) and pot.parameters["omega"] == 0.1


def test_default_text_shows_small_lengths_in_fm():
    # 1 fm in bohr from CODATA via scipy.constants.
    spec = Parameter(0.84 * femto / BOHR_M, kind="length")
    assert spec.default_text().endswith("bohr (= 0.84 fm)")
    assert Parameter(2.0, kind="length").default_text() == "2 bohr"
    assert Parameter(0.3, kind="energy").default_text() == "0.3 hartree"


def test_broken_file_is_listed_with_its_cause_and_named_by_its_declared_name(tmp_path):
    write(tmp_path, "good.py", MINIMAL)
    write(tmp_path, "zz_broken.py", "NAME = 'lj_well'\nimport numpy as np\nraise RuntimeError('no table')\n")
    found = discover([tmp_path])
    assert "gauss_well" in registry.usable_families(found)
    assert set(registry.broken_families(found)) == {"lj_well"}
    assert potential("gauss_well", plugins=tmp_path)(np.array([0.0])).tolist() == [-2.0]
    from radsolve.output.report import families_list

    listing = families_list(found)
    assert "lj_well -- BROKEN" in listing and "RuntimeError: no table" in listing
    assert "gauss_well" in listing.split("broken")[0]
    assert "lj_well" not in families(tmp_path)


def test_broken_file_without_a_readable_name_goes_by_its_stem(tmp_path):
    write(tmp_path, "typo_well.py", "NAME = 'typo'\ndef V(r:\n")
    found = discover([tmp_path])
    assert "typo_well" in registry.broken_families(found)
