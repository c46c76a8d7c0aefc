"""Wide night files for the benchmarks, written once by the project's own writer.

``bench_load.py`` and ``bench_app.py`` time the explorer on two files made by
:func:`diskexplorer.testing.make_wide_night` (the invented demo star and array, a
four-INSNAME K-band instrument: two fringe-tracker tables of 5 channels and two science
tables of 210 channels, split polarisations, decreasing wavelengths, VISREFMAP, OI_FLUX):

* ``wide_night_K.fits``: 8 exposures, about 57 000 points (the 210-channel case);
* ``wide_200k.fits``: 29 exposures, about 200 000 points.

Pass ``--wide-dir DIR`` to keep them between runs, and to time an older checkout on the
very same files (``PYTHONPATH=old_checkout python benchmarks/bench_load.py --wide-dir DIR``
after one run of the current code has written them).
"""
from pathlib import Path

#: File name → exposures.
WIDE_FILES = {"wide_night_K.fits": 8, "wide_200k.fits": 29}


def wide_files(folder):
    """The two files in ``folder`` (written if missing): (210-channel file, 200 000-point file)."""
    folder = Path(folder)
    paths = [folder / name for name in WIDE_FILES]
    if not all(p.exists() for p in paths):
        from diskexplorer.testing import make_wide_night   # the current code's writer

        for name, n in WIDE_FILES.items():
            make_wide_night(folder, name, n_exposures=n)
    return tuple(paths)


def filter_clicks(app, n=6):
    """Yield (label, change) for the data tab's filters: instruments, bands, baseline range."""
    page = app.data_page
    names = list(page.instruments.options)
    bands = list(page.bands.options)
    top = page.baselines.max
    yield "instrument filter click", lambda k: setattr(page.instruments, "value",
                                                      (names[(k // 2) % len(names)],) if k % 2 == 0 else ())
    if bands:
        yield "band filter click", lambda k: setattr(page.bands, "value", (bands[0],) if k % 2 == 0 else ())
    yield "baseline range drag end", lambda k: setattr(page.baselines, "value",
                                                      (0.0, top) if k % 2 else (0.0, top * (0.5 + 0.03 * k)))
