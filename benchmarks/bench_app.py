"""Control change → all marks updated (Python side), on the demo data.

Run: ``python benchmarks/bench_app.py``. Prints the median and quartiles per kind of
change for the visible page (interferometry) and with the hidden disk-structure views
computed too. The browser's redraw time is printed by ``tests/browser/test_browser.py``.
"""
import statistics
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


def main():
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
        run(app, "curve position angle (one curve)",
            lambda k: setattr(app.curve_pa.slider, "value", 10.0 + 2.3 * k))
        run(app, "log V² toggle (style only)", lambda k: setattr(app.toggles["log_vis2"], "value", k % 2 == 0))


if __name__ == "__main__":
    main()
