"""Time loading 50 demo-sized OIFITS files.

Each file: 4 telescopes (6 baselines) × 10 exposures × 150 channels of V², 4 closure
triangles × 10 exposures, written by diskexplorer's own writer into a temporary
directory. Goal: all 50 load in under 2 s. Run:

    python benchmarks/bench_load.py [--files 50] [--repeat 3]
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
    args = parser.parse_args(argv)
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


if __name__ == "__main__":
    main()
