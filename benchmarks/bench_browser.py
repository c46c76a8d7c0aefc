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

``--front-end lab`` or ``notebook`` measures in a real JupyterLab or Notebook 7 instead
(a server on a free loopback port in a temporary folder, the README's cell): **first curve**
from Shift+Enter to the first V² curve, in a new kernel ("cold") and then ``--pages`` times
re-running the cell in the same, warm kernel (goal < 3 s), and the same key-press timing.

With voila, each page is opened as soon as the preheated kernel it will get has built the
explorer (as ``diskexplorer demo`` prints its address only then; no fixed wait), and a
second page ``--second-after`` s after each first one measures a collaborator who follows.

Run: ``python benchmarks/bench_browser.py [--front-end voila|lab|notebook] [--pages 3]
[--presses 40]``. Not a test: the browser tests print the same figures without asserting
on them.
"""
import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from _browser import (ARGS, CHROMIUM, FIRST_CURVE_JS, first_page_timeline, jupyter_server, open_notebook,  # noqa: E402
                      press_timings, run_first_cell, served_app)

FIRST_PAGE_GOAL_S = 3.0
KEY_GOAL_MS = 50.0


def _quartiles(values):
    q = statistics.quantiles(values, n=4)
    return q[0], statistics.median(values), q[2]


def _report_presses(page, presses, front_end):
    page.wait_for_timeout(1000)
    times = press_timings(page, "dx-inclination", presses)
    q1, med, q3 = _quartiles(times)
    print(f"[{front_end}] key press -> V² curve redrawn: median {med:.1f} ms (IQR {q1:.1f}–{q3:.1f}, "
          f"min {min(times):.1f}, max {max(times):.1f}) over {len(times)} presses "
          f"(goal < {KEY_GOAL_MS:g} ms: {'met' if med < KEY_GOAL_MS else 'NOT met'})")


def _wait_for_marks(folder, count, timeout=120.0):
    """Until ``count`` kernels have built the served explorer (server.mark_ready)."""
    end = time.monotonic() + timeout
    while len(os.listdir(folder)) < count and time.monotonic() < end:
        time.sleep(0.05)


def _bench_voila(args, p):
    from diskexplorer.app.serving.server import READY_VARIABLE

    with tempfile.TemporaryDirectory() as marks_dir, \
            served_app(preheat=not args.no_preheat, env={READY_VARIABLE: marks_dir}) as url:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            ready, second = [], []
            used = 0
            for k in range(args.pages + 1):
                if args.wait is not None:
                    time.sleep(args.wait)
                elif not args.no_preheat:
                    # As a user told "ready" by the demo: the kernel this page takes has built the app.
                    _wait_for_marks(marks_dir, used + 1)
                page = browser.new_page(viewport={"width": 1500, "height": 1100})
                t_first = time.monotonic()
                marks = first_page_timeline(page, url)
                used += 1
                # The first page after voila starts also pays for cold caches (disk,
                # bytecode, the browser's own): shown, not counted.
                tag = "cold" if k == 0 else f"#{k}"
                print(f"first page {tag:>4}: " + ", ".join(f"{name} {t:.2f} s" for name, t in marks.items()))
                if k:
                    ready.append(marks["page_ready"])
                if k and args.second_after is not None:
                    # A collaborator opens the page a few seconds after the first one.
                    time.sleep(max(0.0, args.second_after - (time.monotonic() - t_first)))
                    other = browser.new_page(viewport={"width": 1500, "height": 1100})
                    m2 = first_page_timeline(other, url)
                    used += 1
                    second.append(m2["first_curve"])
                    print(f"second page {args.second_after:g} s later: first curve {m2['first_curve']:.2f} s, "
                          f"page ready {m2['page_ready']:.2f} s")
                    other.close()
                if k < args.pages:
                    page.close()
            med = statistics.median(ready)
            print(f"[voila] first page: median {med:.2f} s over {len(ready)} pages "
                  f"(goal < {FIRST_PAGE_GOAL_S:g} s: {'met' if med < FIRST_PAGE_GOAL_S else 'NOT met'})")
            if second:
                med2 = statistics.median(second)
                print(f"[voila] second page's first curve: median {med2:.2f} s "
                      f"(goal < {FIRST_PAGE_GOAL_S:g} s: {'met' if med2 < FIRST_PAGE_GOAL_S else 'NOT met'})")
            _report_presses(page, args.presses, "voila")
        finally:
            browser.close()


# Marks the explorer on the page as the old one, so the re-run's new explorer can be told apart.
_MARK_OLD = "() => document.querySelectorAll('.dx-root').forEach(e => e.dataset.old = '1')"
_NEW_CURVE = FIRST_CURVE_JS.replace(".dx-fig-vis2", ".dx-root:not([data-old]) .dx-fig-vis2")


def _bench_notebook(args, p):
    with tempfile.TemporaryDirectory() as folder, jupyter_server(args.front_end, folder) as url:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            open_notebook(page, url)
            t0 = run_first_cell(page)
            cold = (page.evaluate("() => performance.now()") - t0) / 1e3
            print(f"[{args.front_end}] first curve after running the cell, new kernel: {cold:.2f} s")
            warm = []
            for _ in range(args.pages):
                page.wait_for_timeout(2000)
                page.evaluate(_MARK_OLD)
                page.locator(".jp-Notebook .jp-Cell").first.locator(".cm-content").click()
                t0 = page.evaluate("() => performance.now()")
                page.keyboard.press("Shift+Enter")
                page.wait_for_function(_NEW_CURVE, timeout=120_000, polling="raf")
                warm.append((page.evaluate("() => performance.now()") - t0) / 1e3)
                print(f"[{args.front_end}] first curve after re-running the cell, warm kernel: {warm[-1]:.2f} s")
            med = statistics.median(warm)
            print(f"[{args.front_end}] first curve, warm kernel: median {med:.2f} s over {len(warm)} runs "
                  f"(goal < {FIRST_PAGE_GOAL_S:g} s: {'met' if med < FIRST_PAGE_GOAL_S else 'NOT met'})")
            _report_presses(page, args.presses, args.front_end)
        finally:
            browser.close()


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--front-end", choices=("voila", "lab", "notebook"), default="voila",
                    help="where the explorer runs: served by voila, or in JupyterLab or Notebook 7")
    ap.add_argument("--pages", type=int, default=3,
                    help="first-page measurements (voila: each a new kernel; lab/notebook: warm re-runs)")
    ap.add_argument("--presses", type=int, default=40, help="key presses timed")
    ap.add_argument("--wait", type=float, default=None,
                    help="voila: fixed s before each page (default: until its preheated kernel is ready)")
    ap.add_argument("--second-after", type=float, default=5.0,
                    help="voila: open a second page this many s after each first one")
    ap.add_argument("--no-preheat", action="store_true", help="voila: serve without preheated kernels")
    args = ap.parse_args(argv)
    if not os.path.exists(CHROMIUM):
        sys.exit(f"{CHROMIUM} is missing")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        if args.front_end == "voila":
            _bench_voila(args, p)
        else:
            _bench_notebook(args, p)


if __name__ == "__main__":
    main()
