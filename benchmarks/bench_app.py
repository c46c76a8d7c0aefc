"""Control change → all marks updated (Python side), on the demo data.

Run: ``python benchmarks/bench_app.py [--wide-dir DIR]``. Prints the median and quartiles
per kind of change for the visible page (interferometry) and with the hidden disk-structure
views computed too. The browser's redraw time is printed by ``tests/browser/test_browser.py``.

With ``--wide-dir`` it also times the live loop on the 200 000-point night file of
``wide_files.py`` (goals: a ring temperature < 100 ms, inclination < 300 ms), beside the
same changes on the demo data as the baseline.
"""
import time

import numpy as np

from diskexplorer.app import explore
from diskexplorer.app.state.debounce import ManualScheduler


def run(app, label, change, n=25):
    sched = app.debouncer.scheduler
    times = []
    for k in range(n):
        t0 = time.perf_counter()
        change(k)
        sched.advance(1.0)   # the debounced recompute runs here, pushing every changed mark
        times.append(time.perf_counter() - t0)
    q = np.percentile(times, [25, 50, 75]) * 1e3
    print(f"{label:<44} median {q[1]:6.1f} ms  (IQR {q[0]:.1f}–{q[2]:.1f})")
    return q[1]


def wide(folder):
    """The live loop on the 200 000-point night file."""
    from wide_files import wide_files

    _, big = wide_files(folder)
    t0 = time.perf_counter()
    app = explore([str(big)], scheduler=ManualScheduler())
    print(f"--- {big.name}: {sum(app.state.observations.n_points().values()):,} points "
          f"(explorer built in {time.perf_counter() - t0:.1f} s)")
    t_in = app.ring_deck.cards[0].controls["t_in"].slider
    inc = app.geometry_panel.controls["inclination"].slider
    run(app, "ring T_in (goal < 100 ms)", lambda k: setattr(t_in, "value", 1400.0 + 13.0 * k))
    run(app, "inclination (goal < 300 ms)", lambda k: setattr(inc, "value", 30.0 + 0.37 * k))


def main(argv=None):
    import argparse

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--wide-dir", help="folder of the wide night files (written there if missing)")
    args = parser.parse_args(argv)
    app = explore(scheduler=ManualScheduler())
    card = app.ring_deck.cards[0]
    t_in = card.controls["t_in"].slider
    inc = app.geometry_panel.controls["inclination"].slider
    for render_hidden in (False, True):
        app.render_hidden = render_hidden
        tag = "all pages" if render_hidden else "visible page"
        print(f"--- {tag}")
        run(app, "ring T_in (one ring's temperatures)", lambda k: setattr(t_in, "value", 1400.0 + 13.0 * k))
        run(app, "inclination (geometry: all rings)", lambda k: setattr(inc, "value", 30.0 + 0.37 * k))
        mix = card.mixture
        run(app, "dust fraction (one ring's mixture; goal < 30 ms)",
            lambda k: setattr(mix.fraction_controls["forsterite"].slider, "value", 0.10 + 0.01 * (k % 10)))
        run(app, "curve position angle (one curve)",
            lambda k: setattr(app.curve_pa.slider, "value", 10.0 + 2.3 * k))
        run(app, "log V² toggle (style only)", lambda k: setattr(app.toggles["log_vis2"], "value", k % 2 == 0))
    if args.wide_dir:
        wide(args.wide_dir)


if __name__ == "__main__":
    main()
