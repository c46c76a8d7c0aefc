"""Throughput of χ² grid scans: serial, and a LocalCluster with 1 and 2 workers.

Scans inner-ring r_in × T_in (40 × 40 by default) of the demo scene against the demo data
(``load_sample_data()``) and prints grid points per second and the speed-up over serial.
Two figures per run: wall time including the cluster start and the workers' first import
and data transfer ("wall"), and the steady rate measured from the first finished chunk to
the last ("steady"), which is what a long scan converges to.

Run: ``python benchmarks/bench_scan.py [--n 40] [--workers 1 2]``. Not a test.
"""
import argparse
import time

import numpy as np


def run(scene, data, n, scheduler, n_workers=None):
    from diskexplorer.fitting.scan import best_point, scan_grid

    stamps = []
    t0 = time.perf_counter()
    ds = scan_grid(scene, data, {"rings.0.r_in": (0.25, 0.45, n, "log"), "rings.0.t_in": (1200.0, 1800.0, n)},
                   scheduler=scheduler, n_workers=n_workers,
                   progress=lambda done, total: stamps.append((time.perf_counter(), done)))
    wall = time.perf_counter() - t0
    (t_first, d_first), (t_last, d_last) = stamps[0], stamps[-1]
    steady = (d_last - d_first) / (t_last - t_first) if t_last > t_first else float("nan")
    return ds, wall, steady, best_point(ds)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=40, help="grid points per axis")
    parser.add_argument("--workers", type=int, nargs="*", default=[1, 2])
    parser.add_argument("--no-serial", action="store_true")
    args = parser.parse_args()

    from diskexplorer.fitting.comparison import Comparison
    from diskexplorer.sample import demo_scene, load_sample_data

    scene = demo_scene()
    d = load_sample_data()
    data = {k: d[k] for k in ("observations", "photometry", "spectrum")}
    comp = Comparison(**data)
    comp.compare(scene)
    t = time.perf_counter()
    for _ in range(5):
        comp.compare(scene.with_ring(0, t_in=1450.0))
    per_point = (time.perf_counter() - t) / 5
    npts = sum(comp.compare(scene).npoints.values())
    print(f"grid {args.n} x {args.n} = {args.n ** 2} points; {npts} data points; "
          f"one comparison {per_point * 1e3:.1f} ms (floor: {1 / per_point:.1f} points/s per core)")

    rows, reference, base = [], None, None
    configs = ([] if args.no_serial else [("serial", "serial", None)]) + \
              [(f"LocalCluster {w} worker{'s' if w > 1 else ''}", None, w) for w in args.workers]
    for label, scheduler, w in configs:
        ds, wall, steady, best = run(scene, data, args.n, scheduler, w)
        rate = args.n ** 2 / wall
        if reference is None:
            reference, base = ds["chi2"].values, rate
        else:
            # Worker processes may differ from serial by rounding (SIMD paths depend on memory
            # alignment); anything beyond ~1e-12 would be a real discrepancy.
            with np.errstate(invalid="ignore", divide="ignore"):
                diff = np.nanmax(np.abs(ds["chi2"].values - reference) / np.abs(reference))
            label += "" if diff < 1e-12 else f"  (DIFFERS {diff:.1e})"
        rows.append((label, wall, rate, steady, rate / base))
        print(f"{label:<26} wall {wall:7.1f} s  {rate:6.1f} points/s  steady {steady:6.1f} points/s  "
              f"speed-up {rate / base:4.2f}  best r_in={best['rings.0.r_in']:.4f} au "
              f"T_in={best['rings.0.t_in']:.0f} K chi2={best['chi2']:.1f}", flush=True)


if __name__ == "__main__":  # worker processes are spawned: the guard is required
    main()
