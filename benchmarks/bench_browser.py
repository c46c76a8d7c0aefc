"""The served app in headless Chromium: first page, and key press to redrawn V² curve.

Serves the explorer with voila (as ``diskexplorer demo`` does, on a free 127.0.0.1 port)
and drives Debian's ``/usr/bin/chromium`` through playwright. Prints:

* **first page**: from navigation to every control of the visible model page and every
  figure of the interferometry page drawn (``page_ready`` below), with the milestones on
  the way (the page's HTML received, the first widget drawn, the first V² curve); goal
  < 3 s. Repeated ``--pages`` times in new browser pages, each with its own kernel.
* **key press → pixels**: ArrowRight/ArrowLeft alternately on the inclination slider's
  handle, each timed in the page from ``keydown`` to the V² model curve's SVG path
  changing; median and quartiles over ``--presses`` presses; goal median < 50 ms.

Run: ``python benchmarks/bench_browser.py [--pages 3] [--presses 40]``. Not a test: the
browser tests print the same figures without asserting on them.
"""
import argparse
import os
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from _browser import (ARGS, CHROMIUM, first_page_timeline, press_timings, served_app)  # noqa: E402

FIRST_PAGE_GOAL_S = 3.0
KEY_GOAL_MS = 50.0


def _quartiles(values):
    q = statistics.quantiles(values, n=4)
    return q[0], statistics.median(values), q[2]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pages", type=int, default=3, help="first-page measurements (each a new kernel)")
    ap.add_argument("--presses", type=int, default=40, help="key presses timed")
    ap.add_argument("--wait", type=float, default=12.0,
                    help="s before each page, for voila to preheat the next kernel (fill delay + start-up)")
    ap.add_argument("--no-preheat", action="store_true", help="serve without preheated kernels")
    args = ap.parse_args(argv)
    if not os.path.exists(CHROMIUM):
        sys.exit(f"{CHROMIUM} is missing")
    from playwright.sync_api import sync_playwright

    with served_app(preheat=not args.no_preheat) as url, sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            ready = []
            for k in range(args.pages + 1):
                time.sleep(args.wait)
                page = browser.new_page(viewport={"width": 1500, "height": 1100})
                marks = first_page_timeline(page, url)
                # The first page after voila starts also pays for cold caches (disk,
                # bytecode, the browser's own): shown, not counted.
                tag = "cold" if k == 0 else f"#{k}"
                print(f"first page {tag:>4}: " + ", ".join(f"{name} {t:.2f} s" for name, t in marks.items()))
                if k:
                    ready.append(marks["page_ready"])
                if k < args.pages:
                    page.close()
            print(f"first page: median {statistics.median(ready):.2f} s over {len(ready)} pages "
                  f"(goal < {FIRST_PAGE_GOAL_S:g} s: {'met' if statistics.median(ready) < FIRST_PAGE_GOAL_S else 'NOT met'})")
            page.wait_for_timeout(1000)
            times = press_timings(page, "dx-inclination", args.presses)
            q1, med, q3 = _quartiles(times)
            print(f"key press -> V² curve redrawn: median {med:.1f} ms (IQR {q1:.1f}–{q3:.1f}, "
                  f"min {min(times):.1f}, max {max(times):.1f}) over {len(times)} presses "
                  f"(goal < {KEY_GOAL_MS:g} ms: {'met' if med < KEY_GOAL_MS else 'NOT met'})")
        finally:
            browser.close()


if __name__ == "__main__":
    main()
