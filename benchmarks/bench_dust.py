"""Timing of the dust library build and of a mixture update (not a test).

Usage (from the project root)::

    python benchmarks/bench_dust.py            # mixture timings + a full library build
    python benchmarks/bench_dust.py --no-build # mixture timings only

The build is run in a subprocess exactly as a user would (``python -m
diskexplorer.dust.build``, JIT on unless --no-jit), writing to a temporary file so the
committed table is not touched. The mixture update is what a slider move costs: build
a new DustMix (validation, canonical form), form the weighted sum of library rows and
interpolate to the app's wavelengths. Floor: the bare weighted sum + interpolation in
numpy, which the update cannot avoid.
"""
import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np


def _median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def bench_mixture(repeat=2000):
    import diskexplorer.dust as dust
    lib = dust.get_library()
    wl_app = np.concatenate([np.linspace(1.5, 2.5, 30), np.linspace(3.0, 5.0, 30),
                             np.linspace(7.5, 13.5, 90)])  # ~150 data wavelengths
    state = {"i": 0}

    def update():
        state["i"] += 1
        d = 1e-7 * (state["i"] % 100000)  # a new value every call: no cache hit
        mix = dust.DustMix({"olivine_glass": 0.5 - d, "pyroxene_glass": 0.2 + d, "forsterite": 0.15,
                            "silica": 0.05, "iron": 0.1}, grain_size=1.5, shape="dhs")
        return mix.kappa(wl_app)

    mix = dust.DustMix({"olivine_glass": 0.5, "forsterite": 0.5}, grain_size=1.5)
    cached = _median_time(lambda: mix.kappa(wl_app), repeat)
    fresh = _median_time(update, repeat)
    rows = np.stack([lib.row(s, "dhs", 1.5) for s in
                     ("olivine_glass", "pyroxene_glass", "forsterite", "silica", "iron")])
    w = np.array([0.5, 0.2, 0.15, 0.05, 0.1])
    x = np.log(wl_app)
    floor = _median_time(lambda: np.interp(x, lib.log_wavelength, w @ rows), repeat)
    print(f"mixture update (new 5-species DustMix + κ at {wl_app.size} λ): {fresh * 1e6:8.1f} µs median")
    print(f"κ of an existing mixture (cached row):                  {cached * 1e6:8.1f} µs median")
    print(f"floor (weighted sum of 5 rows × {lib.wavelength.size} + interp):     {floor * 1e6:8.1f} µs median")
    print(f"ratio update / floor: {fresh / floor:.1f}")


def bench_build(jit=True):
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "kappa_library.npz")
        cmd = [sys.executable, "-m", "diskexplorer.dust.build", "--output", out]
        if not jit:
            cmd.append("--no-jit")
        t0 = time.perf_counter()
        res = subprocess.run(cmd, capture_output=True, text=True)
        dt = time.perf_counter() - t0
        if res.returncode:
            print(res.stdout, res.stderr)
            raise SystemExit(f"build failed (exit {res.returncode})")
        print(res.stdout.strip())
        print(f"library build ({'JIT' if jit else 'no JIT'}), wall time incl. interpreter start: {dt:.1f} s")


def main():
    p = argparse.ArgumentParser()
    p.add_argument("--no-build", action="store_true")
    p.add_argument("--no-jit", action="store_true")
    p.add_argument("--repeat", type=int, default=2000)
    args = p.parse_args()
    bench_mixture(args.repeat)
    if not args.no_build:
        bench_build(jit=not args.no_jit)


if __name__ == "__main__":
    main()
