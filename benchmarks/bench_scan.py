"""Throughput of χ² grid scans: serial in process against a warm 2-worker LocalCluster.

Scans inner-ring r_in × T_in (30 × 30 by default) of the demo scene against the demo data
(``load_sample_data()``) and prints:

* serial points/s (``scheduler="serial"``, this process, single-threaded BLAS as in the
  served app);
* 2-worker points/s on an already running cluster whose workers have the data and warm
  caches (start-up excluded: the cluster is started and a small warm-up scan run first),
  as the wall time of the whole scan and as the steady rate from the first finished chunk
  to the last;
* their ratio (goal ≥ 1.6 with 2 workers);
* the cost of one grid point inside a worker against the same call in this process
  (``scan_worker.evaluate_chunk`` on the same chunk, timed inside the task; goal within
  20 %).

Run: ``python benchmarks/bench_scan.py [--n 30] [--workers 2] [--repeat 3]``. Not a test.
"""
import os

# Before numpy loads: the engine's products are small, and a second BLAS thread in the serial
# run would borrow the core the other worker needs (workers get one thread from dask).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

AXES = ("rings.0.r_in", "rings.0.t_in")


def axes(n):
    return {AXES[0]: (0.25, 0.45, n, "log"), AXES[1]: (1200.0, 1800.0, n)}


def run(scene, data, n, scheduler):
    """(dataset, wall s, steady points/s) of one n × n scan."""
    from diskexplorer.fitting.scan import scan_grid

    stamps = []
    t0 = time.perf_counter()
    ds = scan_grid(scene, data, axes(n), scheduler=scheduler,
                   progress=lambda done, total: stamps.append((time.perf_counter(), done)))
    wall = time.perf_counter() - t0
    (t_first, d_first), (t_last, d_last) = stamps[0], stamps[-1]
    steady = (d_last - d_first) / (t_last - t_first) if t_last > t_first else float("nan")
    return ds, wall, steady


def timed_chunk(payload, token, scene, paths, chunk, kinds, repeat):
    """Seconds per grid point of ``evaluate_chunk`` here (best of ``repeat`` after a warm-up)."""
    from diskexplorer.fitting.scan_worker import evaluate_chunk

    evaluate_chunk(payload, token, scene, paths, chunk, kinds)  # warm the engine's caches
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        evaluate_chunk(payload, token, scene, paths, chunk, kinds)
        best = min(best, time.perf_counter() - t)
    return best / len(chunk)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=30, help="grid points per axis (default 30)")
    parser.add_argument("--workers", type=int, default=2, help="workers of the LocalCluster (default 2)")
    parser.add_argument("--repeat", type=int, default=3, help="timed runs of each configuration (best kept)")
    args = parser.parse_args()

    from distributed import Client, LocalCluster

    from diskexplorer.fitting.scan import _payload, _token
    from diskexplorer.fitting.scan_worker import clear_cache
    from diskexplorer.sample import demo_scene, load_sample_data

    scene = demo_scene()
    d = load_sample_data()
    data = {k: d[k] for k in ("observations", "photometry", "spectrum")}
    comp, payload = _payload(data)
    kinds = list(comp.compare(scene).chi2)
    token = _token(payload)
    values = [np.asarray(v) for v in (np.geomspace(0.25, 0.45, args.n), np.linspace(1200.0, 1800.0, args.n))]
    mesh = np.meshgrid(*values, indexing="ij")
    chunk = np.stack([m.ravel() for m in mesh], axis=1)[:min(120, args.n ** 2)]
    print(f"grid {args.n} x {args.n} = {args.n ** 2} points; {sum(comp.compare(scene).npoints.values())} "
          f"data points; OPENBLAS_NUM_THREADS={os.environ['OPENBLAS_NUM_THREADS']}", flush=True)

    # serial, in this process; like the cluster below, one comparison (the app passes its
    # own) warmed by a small scan first
    serial_rates, reference = [], None
    clear_cache()
    run(scene, comp, 6, "serial")
    for _ in range(args.repeat):
        ds, wall, _ = run(scene, comp, args.n, "serial")
        reference = ds["chi2"].values
        serial_rates.append(args.n ** 2 / wall)
    serial = max(serial_rates)
    here = timed_chunk(payload, token + "-here", scene, list(AXES), chunk, kinds, args.repeat)

    t = time.perf_counter()
    cluster = LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                           dashboard_address=None)
    client = Client(cluster)
    try:
        start_up = time.perf_counter() - t
        run(scene, comp, 6, client)  # ships the data, imports the engine and fills caches on each worker
        walls, steadies, diff = [], [], 0.0
        for _ in range(args.repeat):
            ds, wall, steady = run(scene, comp, args.n, client)
            walls.append(args.n ** 2 / wall)
            steadies.append(steady)
            with np.errstate(invalid="ignore", divide="ignore"):
                diff = max(diff, float(np.nanmax(np.abs(ds["chi2"].values - reference) / np.abs(reference))))
        data_f = client.scatter(payload, broadcast=True, hash=False)
        there = client.submit(timed_chunk, data_f, token + "-there", scene, list(AXES), chunk, kinds,
                              args.repeat, pure=False).result()
    finally:
        client.close()
        cluster.close()
    rate, steady = max(walls), max(steadies)
    print(f"serial in process             {serial:7.1f} points/s  (runs: "
          + ", ".join(f"{r:.0f}" for r in serial_rates) + ")")
    print(f"{args.workers} workers, warm cluster      {rate:7.1f} points/s  (wall; runs: "
          + ", ".join(f"{r:.0f}" for r in walls) + f"); steady {steady:.1f} points/s; "
          f"cluster start-up {start_up:.1f} s excluded")
    print(f"ratio {args.workers} workers / serial     {rate / serial:7.2f}   (steady {steady / serial:.2f}; goal ≥ 1.6)")
    print(f"one grid point: worker {there * 1e3:.2f} ms, in process {here * 1e3:.2f} ms, "
          f"ratio {there / here:.2f} (goal ≤ 1.2)")
    print(f"largest relative difference of χ² from serial: {diff:.1e}")


if __name__ == "__main__":  # worker processes are spawned: the guard is required
    main()
