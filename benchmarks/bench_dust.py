"""Timing of the dust library build and of a mixture update (not a test).

Usage (from the project root)::

    python benchmarks/bench_dust.py            # mixture timings + a full library build
    python benchmarks/bench_dust.py --no-build # mixture timings only

A mixture change in the live loop: the standard case of bench_engine.py with mixtures as
the rings' dust, one ring's mixture changed, all observables re-evaluated (the engine
asks the new mixture for κ at the data's wavelengths, then recomputes that ring), side by
side with a T_in change of the same ring.

The build is run in a subprocess exactly as a user would (``python -m
diskexplorer.dust.build``, JIT on unless --no-jit), writing to a temporary file so the
committed table is not touched. The mixture update is what a slider move costs: build
a new DustMix (validation, canonical form), form the weighted sum of library rows and
interpolate to the app's wavelengths. Floor: the bare weighted sum + interpolation in
numpy, which the update cannot avoid.
"""
import argparse
import dataclasses
import os

# Before numpy loads its BLAS: one thread, as bench_engine.py and the app.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402


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


def bench_mixture_in_engine(rounds=5, repeat=60):
    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    from bench_engine import side_by_side, standard_case

    import diskexplorer.dust as dust
    from diskexplorer.observables import Observer
    scene, (u, v, wl), (u1, v1, u2, v2, wl3), _ = standard_case()

    def mix(d):
        return dust.DustMix({"olivine_glass": 0.5 - d, "pyroxene_glass": 0.2 + d, "forsterite": 0.15,
                             "silica": 0.05, "iron": 0.1}, grain_size=1.5, shape="dhs")

    scene = scene.replace(rings=tuple(dataclasses.replace(r, dust=mix(0.0)) for r in scene.rings))
    obs = Observer(u, v, wl, u1, v1, u2, v2, wl3, sed_wavelength=np.geomspace(0.4, 30, 40))
    obs.observe(scene)

    def mixture_change(k):  # a new mixture every call: no cache hit anywhere
        obs.observe(scene.with_ring(0, dust=mix(1e-6 * (k + 1))))

    def ring_change(k):
        obs.observe(scene.with_ring(0, t_in=1400.0 + 0.01 * k))

    res = [side_by_side({"mix": mixture_change, "ring": ring_change}, repeat=repeat,
                        offset=r * (repeat + 10)) for r in range(rounds)]
    t_mix = statistics.median(r["mix"] for r in res)
    t_ring = statistics.median(r["ring"] for r in res)
    print(f"engine, standard case with mixtures ({dust.get_library().wavelength.size}-point library): "
          f"mixture change of one ring {t_mix:.2f} ms, T_in change {t_ring:.2f} ms (medians of "
          f"{rounds} rounds)")


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
    bench_mixture_in_engine()
    if not args.no_build:
        bench_build(jit=not args.no_jit)


if __name__ == "__main__":
    main()
