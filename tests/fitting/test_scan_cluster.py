"""``diskexplorer scan --scheduler`` against a dask cluster of separate programs on 127.0.0.1.

A ``dask scheduler`` and two ``dask worker`` processes are started from the venv's ``dask``
command line, exactly as on a cluster of machines; the scan runs as its own program too and
its netCDF grid must equal the serial scan in this process. The processes are always stopped,
also when the test fails.
"""
from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from _processes import free_port, port_open, stop_tree

DASK = Path(sys.executable).with_name("dask")
GRID = {"rings.0.r_in": (0.30, 0.40, 4), "rings.0.t_in": (1300.0, 1700.0, 3)}


def _start(args, log):
    # Own process group and a log file: a blocked pipe must never stall a worker.
    return subprocess.Popen([str(DASK), *args], stdout=log, stderr=subprocess.STDOUT, start_new_session=True)


def _wait_for_workers(address, n, timeout=60.0):
    from distributed import Client

    with Client(address, timeout="20s") as client:
        client.wait_for_workers(n, timeout=timeout)
        return len(client.scheduler_info()["workers"])


@pytest.mark.slow
def test_scan_on_separate_scheduler_and_workers_equals_serial(tmp_path):
    from diskexplorer.fitting.scan import scan_grid
    from diskexplorer.fitting.start_import import read_start
    from diskexplorer.sample import copy_sample_data

    assert DASK.exists(), f"{DASK}: the venv has no dask command line"
    copy_sample_data(tmp_path / "sample")
    start = tmp_path / "sample" / "aurelis_start.json"
    out = tmp_path / "scan.nc"
    port = free_port()
    address = f"tcp://127.0.0.1:{port}"
    procs = []
    logs = [open(tmp_path / name, "w") for name in ("scheduler.log", "worker1.log", "worker2.log")]
    try:
        procs.append(_start(["scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"], logs[0]))
        t0 = time.monotonic()
        while not port_open(port):
            assert procs[0].poll() is None, (tmp_path / "scheduler.log").read_text()
            assert time.monotonic() - t0 < 60, "the dask scheduler did not open its port within 60 s"
            time.sleep(0.2)
        for log in logs[1:]:
            procs.append(_start(["worker", address, "--nthreads", "1", "--no-dashboard",
                                 "--host", "127.0.0.1", "--local-directory", str(tmp_path)], log))
        assert _wait_for_workers(address, 2) == 2

        axes = [f"--axis={path}={lo}:{hi}:{n}" for path, (lo, hi, n) in GRID.items()]
        env = dict(os.environ, OPENBLAS_NUM_THREADS="1")
        run = subprocess.run([sys.executable, "-m", "diskexplorer.cli", "scan", str(start), *axes,
                              "--scheduler", address, "--out", str(out)],
                             capture_output=True, text=True, timeout=300, env=env)
        assert run.returncode == 0, run.stdout + run.stderr
        assert "on 2 workers of " + address in run.stdout
        assert "12/12 points 100 %" in run.stderr and "best grid point" in run.stdout

        sp = read_start(start)
        serial = scan_grid(sp.scene, sp.comparison(), GRID, scheduler=None)
        with xr.open_dataset(out) as ds:
            assert ds.attrs["scheduler"] == address and ds.attrs["status"] == "complete"
            for name in serial.data_vars:
                np.testing.assert_allclose(ds[name].values, serial[name].values, rtol=1e-12, err_msg=name)
            assert np.all(np.isfinite(ds["chi2"].values))
    finally:
        for proc in reversed(procs):  # workers first, then the scheduler
            stop_tree(proc)
        for log in logs:
            log.close()
    assert all(p.poll() is not None for p in procs)
