"""χ² grid scans: serial against distributed, scheduler addresses, truth recovery, helpers.

The data are made by our own forward model from a known scene (noise-free), on an invented
small (u, v) sampling, so the truth has χ² = 0 and lies on the grid.
"""
import json
import threading

import numpy as np
import pytest

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.data.observations import ObservationSet
from diskexplorer.errors import ParameterError, SeedError
from diskexplorer.fitting.comparison import Comparison
from diskexplorer.fitting.paths import set_values
from diskexplorer.fitting.scan import (axis_values, best_point, confidence_levels, safe_name, scan_grid,
                                       write_scan)

R_IN = np.array([0.26, 0.28, 0.30, 0.32])   # au; truth 0.30
T_IN = np.array([1400.0, 1500.0, 1600.0])   # K; truth 1500
AXES = {"rings.0.r_in": R_IN, "rings.0.t_in": T_IN}


def truth():
    return Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0), rings=[
        Ring(r_in=0.30, r_out=0.6, t_in=1500.0, q=0.5, dust=None, name="inner", c1=0.3, s1=0.2),
        Ring(r_in=1.0, r_out=3.0, t_in=600.0, q=0.5, sigma_in=1e-3, dust=PowerLawOpacity(), name="outer")],
        inclination=40.0, position_angle=30.0)


def synthetic_data(scene):
    """Noise-free V² and closure phases of ``scene`` on a few baselines and wavelengths."""
    rng = np.random.default_rng(7)
    wl = np.array([2.2, 3.5, 10.0])                  # µm
    u, v = rng.uniform(-60, 60, 8), rng.uniform(-60, 60, 8)   # m
    U, V, W = (a.ravel() for a in np.broadcast_arrays(u[:, None], v[:, None], wl[None, :]))
    u1, v1, u2, v2 = (rng.uniform(-50, 50, 4) for _ in range(4))
    U1, V1, U2, V2, W3 = (a.ravel() for a in np.broadcast_arrays(u1[:, None], v1[:, None], u2[:, None],
                                                                 v2[:, None], wl[None, :]))
    obs = ObservationSet.from_arrays(
        vis2=dict(u=U, v=V, wavelength=W, vis2=scene.vis2(U, V, W), vis2_err=np.full(W.size, 0.01)),
        t3=dict(u1=U1, v1=V1, u2=U2, v2=V2, wavelength=W3, t3phi=scene.closure_phase(U1, V1, U2, V2, W3),
                t3phi_err=np.full(W3.size, 1.0), t3amp=np.full(W3.size, 1.0),
                t3amp_err=np.full(W3.size, 0.1)))
    return {"observations": obs}


@pytest.fixture(scope="module")
def scene():
    # Start away from the truth in the scanned parameters only.
    return truth().with_ring(0, r_in=0.28, t_in=1400.0)


@pytest.fixture(scope="module")
def data():
    return synthetic_data(truth())


@pytest.fixture(scope="module")
def serial(scene, data):
    return scan_grid(scene, data, AXES, scheduler="serial")


@pytest.fixture(scope="module")
def cluster():
    from distributed import Client, LocalCluster

    cl = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address="127.0.0.1:0")
    client = Client(cl)
    yield cl, client
    client.close()
    cl.close()


def point_by_point(scene, data):
    """The reference: one Comparison.compare per grid point, no scan machinery."""
    comp = Comparison(data["observations"])
    out = np.empty((R_IN.size, T_IN.size))
    for i, r in enumerate(R_IN):
        for j, t in enumerate(T_IN):
            out[i, j] = comp.compare(set_values(scene, {"rings.0.r_in": r, "rings.0.t_in": t})).total
    return out


def test_serial_scan_matches_point_by_point(scene, data, serial):
    assert serial["chi2"].dims == ("rings_0_r_in", "rings_0_t_in")
    assert serial["chi2"].shape == (4, 3)
    np.testing.assert_array_equal(serial["chi2"].values, point_by_point(scene, data))
    # Per-kind χ² add up to the weighted total (t3amp has weight 0 by default).
    parts = serial["chi2_vis2"] + serial["chi2_t3phi"]
    np.testing.assert_allclose(parts.values, serial["chi2"].values, rtol=1e-12)
    assert serial.attrs["status"] == "complete" and serial.attrs["n_evaluated"] == 12
    assert json.loads(serial.attrs["npoints"])["vis2"] == 24
    assert serial["rings_0_r_in"].attrs["path"] == "rings.0.r_in"
    assert serial["rings_0_t_in"].attrs["units"] == "K"


def test_local_cluster_equals_serial(scene, data, serial, cluster):
    _, client = cluster
    seen = []
    ds = scan_grid(scene, data, AXES, scheduler=client, chunk_size=5,
                   progress=lambda done, total: seen.append((done, total)))
    for name in serial.data_vars:
        np.testing.assert_allclose(ds[name].values, serial[name].values, rtol=1e-13, err_msg=name)
    # 12 points in chunks of 5: three progress calls ending at (12, 12).
    assert len(seen) == 3 and seen[-1] == (12, 12)
    assert sorted(d for d, _ in seen) == [d for d, _ in seen]


def test_scheduler_address_equals_serial(scene, data, serial, cluster):
    cl, _ = cluster
    address = cl.scheduler_address
    assert address.startswith("tcp://127.0.0.1:")
    # A Comparison (not a dict) as data, via the address string.
    ds = scan_grid(scene, Comparison(data["observations"]), AXES, scheduler=address, chunk_size=4)
    np.testing.assert_allclose(ds["chi2"].values, serial["chi2"].values, rtol=1e-13)
    assert ds.attrs["scheduler"] == address


def test_cluster_workers_know_the_species_registered_here(scene, data, cluster):
    # A species registered in this process only: workers are other processes.
    from diskexplorer.dust import DustMix, register_species, unregister_species

    name = "scan_test_grey_table"
    register_species(name, kappa=np.array([[1.0, 2000.0], [10.0, 800.0], [100.0, 60.0]]),
                     source="synthetic κ for this test")
    try:
        own = scene.with_ring(1, dust=DustMix({name: 1.0}, grain_size=0.1, shape="cde"))
        axes = {"rings.0.t_in": T_IN}
        here = scan_grid(own, data, axes, scheduler="serial")
        there = scan_grid(own, data, axes, scheduler=cluster[1])
        assert np.all(np.isfinite(there["chi2"].values))
        np.testing.assert_allclose(there["chi2"].values, here["chi2"].values, rtol=1e-10)
        # the species changes the model: it is not silently replaced by some default dust
        assert not np.allclose(here["chi2"].values, scan_grid(scene, data, axes, scheduler="serial")["chi2"].values)
    finally:
        unregister_species(name)


def test_minimum_at_truth(serial):
    best = best_point(serial)
    assert best["rings.0.r_in"] == pytest.approx(0.30)
    assert best["rings.0.t_in"] == pytest.approx(1500.0)
    assert best["chi2"] == pytest.approx(0.0, abs=1e-12)
    assert set(best) >= {"chi2_vis2", "chi2_t3phi"}


def test_cancel_returns_partial_result(scene, data):
    calls = []

    def cancel():
        return len(calls) >= 1   # stop after the first chunk

    ds = scan_grid(scene, data, AXES, scheduler="serial", chunk_size=3,
                   progress=lambda d, t: calls.append(d), cancel=cancel)
    assert ds.attrs["status"] == "cancelled"
    assert ds.attrs["n_evaluated"] == 3
    assert np.isfinite(ds["chi2"].values).sum() == 3


def test_cancel_on_cluster_from_another_thread(scene, data, cluster):
    # The widget pattern: a threading.Event set elsewhere; here set before any chunk returns.
    _, client = cluster
    stop = threading.Event()
    stop.set()
    ds = scan_grid(scene, data, AXES, scheduler=client, chunk_size=1, cancel=stop.is_set)
    assert ds.attrs["status"] == "cancelled"
    assert ds.attrs["n_evaluated"] < 12


def test_refused_points_are_nan(scene, data):
    # r_out of ring 0 is 0.6 au: r_in = 0.7 is a hole in the map, not an error.
    ds = scan_grid(scene, data, {"rings.0.r_in": [0.3, 0.7], "rings.0.t_in": [1500.0, 1600.0]},
                   scheduler="serial")
    assert np.all(np.isfinite(ds["chi2"].values[0])) and np.all(np.isnan(ds["chi2"].values[1]))


def test_refine_per_grid_point(scene, data):
    start = scene.with_ring(1, t_in=650.0)
    plain = scan_grid(start, data, {"rings.0.r_in": [0.28, 0.30], "rings.0.t_in": [1500.0]},
                      scheduler="serial")
    ds = scan_grid(start, data, {"rings.0.r_in": [0.28, 0.30], "rings.0.t_in": [1500.0]},
                   refine_free=["rings[outer].t_in"], refine_max_nfev=6, scheduler="serial")
    assert "refined_rings_1_t_in" in ds
    assert np.all(ds["chi2"].values <= plain["chi2"].values)
    assert json.loads(ds.attrs["free_parameters"]) == ["rings.0.r_in", "rings.0.t_in", "rings.1.t_in"]
    assert "rings.1.t_in" in best_point(ds)


def test_axis_specifications():
    np.testing.assert_allclose(axis_values((1.0, 100.0, 3, "log")), [1.0, 10.0, 100.0])
    np.testing.assert_allclose(axis_values((0.0, 1.0, 5)), [0, 0.25, 0.5, 0.75, 1.0])
    np.testing.assert_allclose(axis_values([0.1, 0.2, 3]), [0.1, 0.2, 3.0])   # a list is values
    with pytest.raises(ParameterError, match="lo > 0"):
        axis_values((0.0, 1.0, 3, "log"))
    assert safe_name("geometry.inclination") == "geometry_inclination"


def test_bad_input_rejected(scene, data):
    with pytest.raises(SeedError, match="not a parameter path"):
        scan_grid(scene, data, {"nonsense": [1, 2]}, scheduler="serial")
    with pytest.raises(ParameterError, match="outside the allowed range"):
        scan_grid(scene, data, {"geometry.inclination": [10, 95]}, scheduler="serial")
    with pytest.raises(ParameterError, match="both scanned and refined"):
        scan_grid(scene, data, AXES, refine_free=["rings.0.t_in"], scheduler="serial")
    with pytest.raises(ParameterError, match="Comparison or a dict"):
        scan_grid(scene, [1, 2], AXES, scheduler="serial")


def test_confidence_levels(serial):
    # scipy.stats.chi2.ppf: the textbook Δχ² = 1.00, 2.30 (1σ for 1 and 2 parameters), 11.83 (3σ, 2).
    assert confidence_levels(serial, 1, levels=(0.6827,))[0.6827] == pytest.approx(1.0, abs=1e-3)
    lv = confidence_levels(serial, 2)
    assert lv[0.6827] == pytest.approx(2.30, abs=0.01)
    assert lv[0.9973] == pytest.approx(11.83, abs=0.01)
    absolute = confidence_levels(serial, 2, absolute=True)
    assert absolute[0.6827] == pytest.approx(lv[0.6827] + np.nanmin(serial["chi2"].values))
    with pytest.raises(ParameterError, match="n_free"):
        confidence_levels(serial, 0)


def test_write_scan_netcdf_roundtrip(serial, tmp_path):
    import xarray as xr

    path = write_scan(serial, tmp_path / "scan.nc")
    back = xr.open_dataset(path)
    try:
        xr.testing.assert_identical(back.load(), serial)
    finally:
        back.close()
    with pytest.raises(FileExistsError, match="overwrite=True"):
        write_scan(serial, path)
    write_scan(serial, path, overwrite=True)


def test_workers_restore_the_malloc_thresholds_dask_switched_off():
    # dask's nanny sets MALLOC_TRIM_THRESHOLD_ in every worker; there (and only there) the
    # worker side of a scan sets fixed thresholds, once per process.
    import os
    import subprocess
    import sys

    code = ("from diskexplorer.fitting.scan_worker import tune_allocator as t\n"
            "print(t(), t())")
    env = {k: v for k, v in os.environ.items() if k != "MALLOC_TRIM_THRESHOLD_"}
    plain = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    assert plain.stdout.split() == ["False", "False"]
    worker = subprocess.run([sys.executable, "-c", code], env=dict(env, MALLOC_TRIM_THRESHOLD_="65536"),
                            capture_output=True, text=True, check=True)
    assert worker.stdout.split() == (["True", "True"] if sys.platform.startswith("linux") else ["False", "False"])


def test_scheduler_none_is_serial_and_local_is_one_shared_cluster(scene, data, serial):
    from diskexplorer.fitting import scan
    from diskexplorer.fitting.scan import close_local_cluster, local_client

    ds = scan_grid(scene, data, AXES, scheduler=None)
    assert ds.attrs["scheduler"] == "serial"
    np.testing.assert_array_equal(ds["chi2"].values, serial["chi2"].values)
    try:
        first = scan_grid(scene, data, AXES, scheduler="local", n_workers=1)
        client = local_client(start=False)
        shipped = scan._SHIPPED[id(client)][1]
        second = scan_grid(scene, data, AXES, scheduler="local")
        assert scan._SHIPPED[id(client)][1] is shipped  # the data went to the workers once
        assert local_client(start=False) is client and client.status == "running"
        assert first.attrs["scheduler"] == second.attrs["scheduler"] == client.scheduler.address
        np.testing.assert_allclose(second["chi2"].values, serial["chi2"].values, rtol=1e-13)
    finally:
        close_local_cluster()
    assert local_client(start=False) is None
