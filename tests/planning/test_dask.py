"""Sweeps on Dask: a local cluster and an external scheduler on 127.0.0.1 give the serial result.

One external cluster (``dask scheduler`` + ``dask worker`` processes) serves the whole module.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
import xarray as xr

import synthetic_eval
from aculink.errors import AculinkError
from aculink.planning import run_sweep

pytestmark = pytest.mark.slow

RANGES = [500.0, 1000.0, 2000.0, 3000.0, 4000.0, 6000.0]
DEPTHS = [10.0, 20.0, 50.0]
OPTS = dict(receivers=list(synthetic_eval.RECEIVERS), modulations=list(synthetic_eval.MODULATIONS),
            chunk_ranges=1, quiet=True, evaluate=synthetic_eval.evaluate, source_depths_m=[10.0, 30.0])
DASK = Path(sys.executable).with_name("dask")


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def scheduler():
    """A real scheduler and two worker processes, listening on 127.0.0.1 only."""
    port = free_port()
    here = Path(__file__).parent
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(here.parents[1]), str(here)]))
    address = f"tcp://127.0.0.1:{port}"
    procs = [subprocess.Popen([str(DASK), "scheduler", "--host", "127.0.0.1", "--port", str(port),
                               "--no-dashboard"], env=env, stdout=subprocess.DEVNULL,
                              stderr=subprocess.DEVNULL)]
    procs.append(subprocess.Popen([str(DASK), "worker", address, "--nworkers", "2", "--nthreads", "1",
                                   "--no-dashboard", "--host", "127.0.0.1"], env=env,
                                  stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                                  start_new_session=True))
    from distributed import Client

    deadline = time.monotonic() + 60
    try:
        while True:
            try:
                with Client(address, timeout="2s") as c:
                    if len(c.scheduler_info()["workers"]) >= 2:
                        break
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail("the test Dask cluster did not start")
            time.sleep(0.3)
        yield address
    finally:
        # The worker command and the processes it spawned share one new process group.
        os.killpg(procs[1].pid, signal.SIGKILL)
        procs[0].terminate()
        for p in procs:
            try:
                p.wait(timeout=10)
            except subprocess.TimeoutExpired:
                p.kill()


@pytest.fixture(scope="module")
def serial(tmp_path_factory):
    site = synthetic_eval.make_site()
    out = tmp_path_factory.mktemp("serial") / "serial.nc"
    return site, run_sweep(site, RANGES, DEPTHS, out, workers=0, **OPTS)


def test_external_scheduler_equals_serial(scheduler, serial, tmp_path):
    """A sweep through --scheduler on a real cluster equals the serial one (regression)."""
    site, ref = serial
    got = run_sweep(site, RANGES, DEPTHS, tmp_path / "ext.nc", scheduler=scheduler, **OPTS)
    xr.testing.assert_identical(got, ref)
    xr.testing.assert_identical(xr.open_dataset(tmp_path / "ext.nc").load(), ref)


def test_local_cluster_equals_serial(serial, tmp_path):
    """A 2-process LocalCluster sweep equals the serial one (regression)."""
    site, ref = serial
    got = run_sweep(site, RANGES, DEPTHS, tmp_path / "loc.nc", workers=2, **OPTS)
    xr.testing.assert_identical(got, ref)


def test_unreachable_scheduler_is_one_line_within_timeout(serial, tmp_path):
    site, _ = serial
    port = free_port()
    start = time.monotonic()
    with pytest.raises(AculinkError, match=f"tcp://127.0.0.1:{port}") as info:
        run_sweep(site, RANGES, DEPTHS, tmp_path / "u.nc", scheduler=f"tcp://127.0.0.1:{port}", **OPTS)
    assert time.monotonic() - start < 15
    assert "\n" not in str(info.value)
    assert not (tmp_path / "u.nc.parts").exists(), "a refused sweep must leave nothing behind"
    # so the corrected command runs at once
    got = run_sweep(site, RANGES, DEPTHS, tmp_path / "u.nc", workers=0, **OPTS)
    xr.testing.assert_identical(got, serial[1])


def test_local_cluster_takes_over_from_the_caller():
    """While the local cluster starts, the calling process runs tasks; then the workers take the
    rest; every task's result arrives exactly once (the runner's contract, no outside source)."""
    import runner_tasks
    from aculink.planning.dask_runner import run_tasks

    got = {}
    run_tasks(runner_tasks.where, os.getpid(), list(range(60)), got.__setitem__, workers=2)
    assert sorted(got) == list(range(60))
    pids = set(got.values())
    assert any(p != os.getpid() for p in pids), "the workers never took over"


def test_cli_sweep_through_scheduler_equals_serial(scheduler, tmp_path, capsys):
    """`aculink sweep --scheduler` on the real chain equals `--workers 0` (regression): the same
    variables, attributes and choices, and the predictions to 1e-9 relative. (Inside a full suite
    run on a loaded host the receiver predictions have differed in the last bits between the
    pytest process and the scheduler's worker processes, cause not found; bit identity holds when
    this module runs alone and in the synthetic tests above.)"""
    from aculink.cli import main

    site_file = Path(__file__).with_name("isovelocity_silt.toml")
    args = ["sweep", str(site_file), "--ranges-m", "1000:4000:1000", "--depths-m", "20,50",
            "--receiver", "dfe", "--chunk-ranges", "1", "--quiet"]
    assert main(args + ["-o", str(tmp_path / "a.nc"), "--workers", "0"]) == 0
    assert main(args + ["-o", str(tmp_path / "b.nc"), "--scheduler", scheduler]) == 0
    capsys.readouterr()
    serial, remote = xr.open_dataset(tmp_path / "a.nc").load(), xr.open_dataset(tmp_path / "b.nc").load()
    assert set(serial.data_vars) == set(remote.data_vars) and serial.attrs.keys() == remote.attrs.keys()
    for name, var in serial.data_vars.items():
        if var.dtype.kind == "f":
            xr.testing.assert_allclose(var, remote[name], rtol=1e-9, atol=0.0)
        else:
            xr.testing.assert_identical(var, remote[name])
