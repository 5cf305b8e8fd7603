"""A potential family shipped by another installed package is found through
the entry-point group ``radsolve.potentials`` (no mock: a real distribution's
metadata on sys.path, read by importlib.metadata)."""

import sys
import textwrap

import pytest

import radsolve


@pytest.fixture
def installed_distribution(tmp_path, monkeypatch):
    package = tmp_path / "wellpack"
    package.mkdir()
    (package / "__init__.py").write_text("")
    (package / "sech_well.py").write_text(textwrap.dedent('''
        """A Poeschl-Teller well -depth / cosh(r/width)**2 (a test family)."""
        import numpy as np
        NAME = "sech_well"
        PARAMETERS = {"depth": 1.0, "width": 1.0}
        def V(r, depth, width):
            return -depth / np.cosh(np.minimum(r / width, 300.0)) ** 2
    '''))
    info = tmp_path / "wellpack-0.1.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: wellpack\nVersion: 0.1\n")
    (info / "entry_points.txt").write_text("[radsolve.potentials]\nsech_well = wellpack.sech_well\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    yield
    for name in [m for m in sys.modules if m.startswith("wellpack")]:
        del sys.modules[name]


def test_family_from_an_installed_package_is_discovered_and_solved(installed_distribution):
    found = radsolve.discover()
    assert found["sech_well"].origin == "entry point"
    # -lambda(lambda-1)/2 sech^2 r with lambda = 6: the 1D levels are
    # -(lambda-1-n)^2/2; s waves (u(0) = 0) are the odd n, so -8 and -2 hartree
    # and nothing else (n = 5 sits at threshold).  Poeschl & Teller,
    # Z. Phys. 83, 143 (1933); textbook formula.
    result = radsolve.solve(radsolve.potential("sech_well", depth=15.0), l=0, count=5, method="both")
    assert [lev.label for lev in result.levels] == ["1s", "2s"]
    assert result.levels[0].energy == pytest.approx(-8.0, rel=1e-10)
    assert result.levels[1].energy == pytest.approx(-2.0, rel=1e-10)
    assert result.bound_counts == {0: 2}
