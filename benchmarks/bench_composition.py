"""Time of a composition solve and of a drop-one test on the sample (issue 21's goals).

Solves the sample's inner ring with six candidate components (olivine_glass,
pyroxene_glass, forsterite, iron, amorphous_carbon, enstatite_glass) from a wrong start
against every kind of the sample data (``aurelis_start.json``), then runs the drop-one test
over the six, and prints each time against its goal (solve < 1 s, drop-one < 5 s) with the
χ² and the number of model evaluations. The comparison is built and the engine's caches
warmed by one evaluation first (what the explorer has done before its button is pressed).

Run: ``python benchmarks/bench_composition.py [--repeat 3] [--sigma-in]``. Not a test.
"""
import os

# Before numpy loads: the engine's products are small (one BLAS thread, as in the served app).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import argparse  # noqa: E402
import time  # noqa: E402

COMPONENTS = ("olivine_glass", "pyroxene_glass", "forsterite", "iron", "amorphous_carbon", "enstatite_glass")
WRONG = {"olivine_glass": 0.3, "pyroxene_glass": 0.3, "forsterite": 0.1, "iron": 0.1,
         "amorphous_carbon": 0.1, "enstatite_glass": 0.1}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="timed runs of each (best is shown)")
    parser.add_argument("--sigma-in", action="store_true", help="also solve the ring's Σ_in")
    args = parser.parse_args()

    from diskexplorer.dust import DustMix
    from diskexplorer.fitting.composition import drop_one, solve_composition
    from diskexplorer.report.inputs import load_start
    from diskexplorer.sample import sample_data_dir

    start = load_start(str(sample_data_dir() / "aurelis_start.json"))
    comparison = start.comparison()
    dust = start.scene.rings[0].dust
    scene = start.scene.with_ring(0, dust=DustMix(WRONG, grain_size=dust.grain_size, shape=dust.shape))
    comparison.compare(scene)
    judged = comparison.compare(scene)
    points = sum(n for k, n in judged.npoints.items() if judged.weights.get(k, 1.0) > 0)
    print(f"sample: {points} points, kinds {', '.join(comparison.kinds)}; ring inner, {len(COMPONENTS)} components"
          f"{' and Σ_in' if args.sigma_in else ''}")

    best, result = float("inf"), None
    for _ in range(args.repeat):
        t = time.perf_counter()
        result = solve_composition(scene, comparison, "inner", COMPONENTS, sigma_in=args.sigma_in)
        best = min(best, time.perf_counter() - t)
    print(f"solve (with errors):   {best:6.3f} s   goal < 1 s   {'ok' if best < 1 else 'MISSED'}   "
          f"({result.nfev} evaluations, χ² {result.chi2_before:.6g} → {result.chi2_after:.6g})")
    print(result.rings[0].table())

    best, drop = float("inf"), None
    for _ in range(args.repeat):
        t = time.perf_counter()
        drop = drop_one(scene, comparison, "inner", COMPONENTS, sigma_in=args.sigma_in)
        best = min(best, time.perf_counter() - t)
    print(f"drop-one over {len(COMPONENTS)}:      {best:6.3f} s   goal < 5 s   {'ok' if best < 5 else 'MISSED'}")
    print(drop.table())


if __name__ == "__main__":
    main()
