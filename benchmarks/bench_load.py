"""Time loading 50 demo-sized OIFITS files, and the explorer on wide night files.

Each file: 4 telescopes (6 baselines) × 10 exposures × 150 channels of V², 4 closure
triangles × 10 exposures, written by diskexplorer's own writer into a temporary
directory. Goal: all 50 load in under 2 s. Run:

    python benchmarks/bench_load.py [--files 50] [--repeat 3] [--wide-dir DIR] [--only-wide]

With ``--wide-dir`` (or ``--only-wide``) it also times two wide night files
(:mod:`wide_files`): reading, building the explorer (goal < 1 s on the 210-channel
file), filter clicks (goal < 300 ms) and ``diskexplorer evaluate`` on the 200 000-point
file (goal < 10 s, < 800 MB peak memory, measured in a child process).
"""

import argparse
import tempfile
import time
from pathlib import Path

from astropy.io import fits

from diskexplorer.data import read_oifits
from diskexplorer.testing import make_oifits


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=50)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--no-checksum", action="store_true", help="skip CHECKSUM/DATASUM verification")
    parser.add_argument("--wide-dir", help="folder of the wide night files (written there if missing; "
                                           "default: a temporary folder)")
    parser.add_argument("--only-wide", action="store_true", help="run only the wide night file cases")
    args = parser.parse_args(argv)
    if args.wide_dir or args.only_wide:
        with tempfile.TemporaryDirectory() as tmp:
            wide(args.wide_dir or tmp, args.repeat)
        if args.only_wide:
            return None
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        paths = [make_oifits(tmp, f"demo_{i:03d}.fits", n_telescopes=4, n_exposures=10, n_channels=150,
                             n_triangles=4, seed=i, flag_fraction=0.02, mjd0=60000.0 + i)
                 for i in range(args.files)]
        t_write = time.perf_counter() - t0
        size = sum(Path(p).stat().st_size for p in paths) / 1e6
        times, bare = [], []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            obs = read_oifits(paths, check_checksums=not args.no_checksum)
            times.append(time.perf_counter() - t0)
            # Baseline, side by side: astropy alone opening every file and decoding every table.
            t0 = time.perf_counter()
            for p in paths:
                with fits.open(p, memmap=False) as hdul:
                    for hdu in hdul[1:]:
                        hdu.data
            bare.append(time.perf_counter() - t0)
    n = obs.n_points()
    print(f"wrote {args.files} files ({size:.1f} MB) in {t_write:.2f} s")
    print(f"loaded {n['vis2']} V2 and {n['t3']} T3 points from {args.files} files: "
          f"best {min(times):.3f} s, median {sorted(times)[len(times) // 2]:.3f} s over {args.repeat} runs "
          f"(goal < 2 s; checksums {'off' if args.no_checksum else 'verified'})")
    print(f"baseline, astropy alone opening the files and decoding every table: best {min(bare):.3f} s "
          f"-> read_oifits / astropy = {min(times) / min(bare):.2f}")
    # The same with 50 copies of the demo data set's own files (sample_data/, three instruments).
    import shutil

    from diskexplorer.sample import SAMPLE_FILES, sample_data_dir
    with tempfile.TemporaryDirectory() as tmp:
        src = [sample_data_dir() / n for n in SAMPLE_FILES["oifits"]]
        copies = []
        for i in range(args.files):
            dst = Path(tmp) / f"copy_{i:03d}_{src[i % 3].name}"
            shutil.copy(src[i % 3], dst)
            copies.append(str(dst))
        demo_times = []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            demo = read_oifits(copies, check_checksums=not args.no_checksum)
            demo_times.append(time.perf_counter() - t0)
    nd = demo.n_points()
    print(f"50 copies of the demo files ({nd['vis2']} V2, {nd['t3']} T3 points): best {min(demo_times):.3f} s, "
          f"median {sorted(demo_times)[len(demo_times) // 2]:.3f} s")
    return min(times)



_CHILD = """
import resource, subprocess, sys, time
t0 = time.perf_counter()
code = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL).returncode
print(time.perf_counter() - t0, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0, code)
"""


def wide(folder, repeat=3):
    """Wide night files: read, explorer build, filter clicks, evaluate (time and memory)."""
    import statistics
    import subprocess
    import sys

    from wide_files import filter_clicks, wide_files

    from diskexplorer.app import explore
    from diskexplorer.app.state.debounce import ManualScheduler
    from diskexplorer.fitting import export_start, write_start
    from diskexplorer.sample import demo_scene

    k_file, big_file = wide_files(folder)
    for path in (k_file, big_file):
        times = []
        for _ in range(repeat):
            t0 = time.perf_counter()
            obs = read_oifits(path)
            times.append(time.perf_counter() - t0)
        print(f"read {path.name} ({sum(obs.n_points().values()):,} points, {len(obs.instruments)} INSNAMEs): "
              f"best {min(times):.3f} s")
    explore([], scheduler=ManualScheduler())   # imports and first-use caches, as in a notebook's second run
    for path, goal in ((k_file, "goal < 1 s"), (big_file, "no goal")):
        times = []
        for _ in range(repeat):
            t0 = time.perf_counter()
            app = explore([str(path)], scheduler=ManualScheduler())
            times.append(time.perf_counter() - t0)
        print(f"explorer build on {path.name}: best {min(times):.3f} s, median {statistics.median(times):.3f} s ({goal})")
        sched = app.debouncer.scheduler
        for label, change in filter_clicks(app):
            clicks = []
            for k in range(8):
                t0 = time.perf_counter()
                change(k)
                sched.advance(1.0)
                clicks.append(time.perf_counter() - t0)
            q = [x * 1e3 for x in statistics.quantiles(clicks, n=4)]
            print(f"  {label:<26} median {q[1]:6.0f} ms (IQR {q[0]:.0f}–{q[2]:.0f}, max {max(clicks) * 1e3:.0f})"
                  + ("  goal < 300 ms" if path == k_file else ""))
    start = Path(folder) / "wide_200k_start.json"
    write_start(start, export_start(demo_scene(), data={"oifits": [str(big_file)]}), overwrite=True)
    out = Path(folder) / "wide_200k_evaluation"
    cmd = [sys.executable, "-m", "diskexplorer.cli", "evaluate", str(start), "--out", str(out), "--force"]
    # Run from the files' folder: from the checkout, ``-m diskexplorer`` would import the
    # checkout's package whatever PYTHONPATH names.
    wall, rss, code = subprocess.run([sys.executable, "-c", _CHILD, *cmd], capture_output=True, text=True,
                                     check=True, cwd=folder).stdout.split()
    print(f"evaluate on {big_file.name}: {float(wall):.1f} s, peak memory {float(rss):.0f} MB, exit code {code} "
          f"(goal < 10 s, < 800 MB)")


if __name__ == "__main__":
    main()
