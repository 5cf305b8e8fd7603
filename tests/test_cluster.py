"""Sweeps on a real Dask distributed cluster (loopback), compared with the serial run.

No physics reference is needed here: the check is that the cluster gives
bit-for-bit the rows of the serial run (same solver, same inputs), in the
same order.  Needs the optional dependency radsolve[cluster] (marker needs_dask:
skipped without it; CI installs it and sets RADSOLVE_REQUIRE_EXTRAS=1).
"""

from __future__ import annotations

import numpy as np
import pytest

from helpers import invoke
from radsolve.analysis import sweeps
from radsolve.errors import InputError
from radsolve.analysis.sweeps import sweep

# distributed itself is imported where it is used, so that this file imports without it.
pytestmark = pytest.mark.needs_dask

VARY = {"screening_length": [0.8, 1.2, 3.0, 4.8, 9.0, 15.0]}
SETTINGS = dict(l=[0, 1], count=2, tol=1e-8)


@pytest.fixture(scope="module")
def serial():
    return sweep("yukawa", vary=VARY, workers=1, **SETTINGS)


@pytest.fixture(scope="module")
def loopback_cluster():
    import distributed

    # Threads in this process, but real TCP on loopback, so that the sweep
    # connects through a scheduler address as it would to a remote cluster.
    cluster = distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                       protocol="tcp://", host="127.0.0.1", scheduler_port=0,
                                       dashboard_address=None,
                                       scheduler_kwargs={"dashboard_address": "127.0.0.1:0"})
    assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
    yield cluster
    cluster.close()


def _same(a, b) -> None:
    assert np.array_equal(a.energy, b.energy, equal_nan=True)
    assert np.array_equal(a.error_estimate, b.error_estimate, equal_nan=True)
    assert np.array_equal(a.bound, b.bound)
    assert np.array_equal(a.converged, b.converged)
    assert a.to_csv() == b.to_csv()


def test_scheduler_address_gives_the_serial_result(serial, loopback_cluster, tmp_path):
    out = tmp_path / "rows.csv"
    res = sweep("yukawa", vary=VARY, cluster=loopback_cluster.scheduler_address, out=out, **SETTINGS)
    _same(res, serial)
    assert out.read_text() == serial.to_csv()


def test_client_object_gives_the_serial_result(serial, loopback_cluster):
    import distributed

    with distributed.Client(loopback_cluster) as client:
        res = sweep("yukawa", vary=VARY, cluster=client, **SETTINGS)
        assert client.status == "running"  # a client we were given is left open
    _same(res, serial)


def test_local_cluster_started_here(serial):
    res = sweep("yukawa", vary=VARY, cluster="local", workers=1, **SETTINGS)
    _same(res, serial)


def test_cli_cluster_option(serial, loopback_cluster, tmp_path):
    out = tmp_path / "cli.csv"
    result = invoke("sweep", "yukawa", "--vary", "screening_length=0.8,1.2,3,4.8,9,15",
                    "-l", "0", "-l", "1", "--count", "2", "--tol", "1e-8",
                    "--cluster", loopback_cluster.scheduler_address, "--out", str(out))
    assert result.exit_code == 0, result.output
    assert out.read_text() == serial.to_csv()


def test_unreachable_scheduler_is_a_clear_error(monkeypatch):
    monkeypatch.setattr(sweeps, "CLUSTER_TIMEOUT", 1.0)
    with pytest.raises(InputError, match=r"tcp://127\.0\.0\.1:9.*no Dask scheduler answered"):
        sweep("yukawa", vary=VARY, cluster="tcp://127.0.0.1:9", **SETTINGS)
    with pytest.raises(InputError, match="expected 'local' or a scheduler address"):
        sweep("yukawa", vary=VARY, cluster="somewhere", **SETTINGS)


def test_cli_unreachable_scheduler_exits_2_without_traceback(monkeypatch):
    monkeypatch.setattr(sweeps, "CLUSTER_TIMEOUT", 1.0)
    result = invoke("sweep", "yukawa", "--vary", "screening_length=1:2:2",
                    "--cluster", "tcp://127.0.0.1:9")
    assert result.exit_code == 2
    assert "no Dask scheduler answered" in result.stderr
    assert "Traceback" not in result.output + result.stderr
