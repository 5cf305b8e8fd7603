"""Sweeps on any executor, through rich progress, and as xarray / NetCDF.

The physics anchor of every case: hydrogen-like levels -Z^2/(2 n^2) hartree
(textbook formula) over a sweep of Z, so that a row in the wrong place or with
the wrong value fails whatever back end produced it.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from radsolve import InputError
from radsolve.analysis.sweeps import sweep

ZS = [1.0, 2.0, 3.0]
ARGS = dict(l=[0, 1], count=2, tol=1e-8)


@pytest.fixture(scope="module")
def serial():
    return sweep("coulomb", {"Z": ZS}, workers=1, **ARGS)


def test_serial_rows_are_exact_hydrogen(serial):
    for row in serial.records():
        assert row["energy"] == pytest.approx(-row["Z"] ** 2 / (2 * row["n"] ** 2), rel=1e-8)


class MapOnly:
    """An executor that only has map (like a multiprocessing pool)."""

    def __init__(self):
        self.calls = 0

    def map(self, function, iterable):
        self.calls += 1
        return map(function, iterable)


@pytest.mark.parametrize("make", [lambda: ThreadPoolExecutor(2), MapOnly], ids=["threads", "map-only"])
def test_any_executor_gives_the_serial_rows(serial, make):
    executor = make()
    result = sweep("coulomb", {"Z": ZS}, executor=executor, **ARGS)
    assert result.to_csv() == serial.to_csv()
    if isinstance(executor, MapOnly):
        assert executor.calls == 1
    else:
        executor.shutdown()


def test_bad_executor_and_executor_with_cluster_are_refused():
    with pytest.raises(InputError, match="executor must be"):
        sweep("coulomb", {"Z": ZS}, executor=object(), **ARGS)
    with pytest.raises(InputError, match="executor and cluster"):
        sweep("coulomb", {"Z": ZS}, executor=MapOnly(), cluster="local", **ARGS)


def test_progress_goes_to_stderr_through_rich(capsys):
    sweep("coulomb", {"Z": ZS}, progress=True, workers=1, **ARGS)
    captured = capsys.readouterr()
    assert "3/3" in captured.err and "points" in captured.err
    assert captured.out == ""


@pytest.mark.needs_xarray
def test_to_xarray_has_the_axes_and_the_records():
    result = sweep("yukawa", {"Z": [1.0, 2.0], "screening_length": [1.0, 3.0, 10.0]}, l=[0, 1], count=2,
                   tol=1e-8)
    ds = result.to_xarray()
    assert ds["energy"].dims == ("Z", "screening_length", "level")
    assert list(ds["level"].values) == result.labels()
    assert ds["screening_length"].attrs["units"] == "bohr"
    for row in result.records():
        cell = ds.sel(Z=row["Z"], screening_length=row["screening_length"], level=row["label"])
        assert bool(cell["bound"]) == row["bound"]
        if row["bound"]:
            assert float(cell["energy"]) == row["energy"]
        else:
            assert np.isnan(float(cell["energy"]))
    assert ds.attrs["status"] == "success" and ds.attrs["energy_unit"] == "hartree"


@pytest.mark.needs_xarray
def test_netcdf_round_trip_from_the_api_and_the_out_file(serial, tmp_path):
    import xarray as xr

    path = tmp_path / "z.nc"
    result = sweep("coulomb", {"Z": ZS}, out=path, unit="eV", **ARGS)
    back = xr.open_dataset(path)
    expected = result.to_xarray("eV")
    np.testing.assert_array_equal(back["energy"].values, expected["energy"].values)
    assert back["energy"].attrs["units"] == "eV"
    assert list(back["level"].values) == result.labels()
    # CODATA via scipy.constants: E(1s, Z = 2) = -2 hartree in eV
    from scipy.constants import physical_constants

    ev_per_hartree = physical_constants["Hartree energy in eV"][0]
    assert float(back["energy"].sel(Z=2.0, level="1s")) == pytest.approx(-2.0 * ev_per_hartree, rel=1e-8)
    back.close()


@pytest.mark.needs_xarray
def test_netcdf_from_the_command_line(tmp_path):
    import xarray as xr
    from helpers import invoke

    path = tmp_path / "z.nc"
    run = invoke("sweep", "coulomb", "--vary", "Z=1:3:3", "--lmax", "1", "--count", "2", "--tol", "1e-8",
                 "--out", str(path))
    assert run.exit_code == 0, run.stderr
    back = xr.open_dataset(path)
    assert float(back["energy"].sel(Z=3.0, level="2p")) == pytest.approx(-9.0 / 8.0, rel=1e-8)  # -Z^2/(2 n^2)
    back.close()


def test_one_back_end_interface_chosen_from_workers_cluster_executor():
    from radsolve.analysis.sweeps.backends import OwnExecutor, ProcessPool, Serial, backend_for

    assert isinstance(backend_for(1, None, None, 10), Serial)
    assert isinstance(backend_for(4, None, None, 2), Serial)  # the first point runs here, one is left
    pool = backend_for(4, None, None, 10)
    assert isinstance(pool, ProcessPool) and pool.width == 4
    with ThreadPoolExecutor(3) as threads:
        own = backend_for(None, None, threads, 10)
        assert isinstance(own, OwnExecutor) and own.width == 3
    for backend in (Serial(), pool, own):
        assert callable(backend.run) and callable(backend.close)
