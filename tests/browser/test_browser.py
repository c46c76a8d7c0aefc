"""One real-browser test: the explorer served by voila, driven in headless Chromium.

It prints the two figures of the live feel (no timed assertion; the goals live in
``benchmarks/bench_browser.py``): the time from navigation to every control and every
figure of the first page drawn, and the time from a key press on a slider handle to the
redrawn V² model curve (median and quartiles over 24 presses). The page is the first one
after voila starts: cold browser caches, and a preheated kernel possibly still running the
notebook, so its first-page time is longer than the benchmark's (which waits for both).
"""
import statistics

import pytest

from _browser import (ARGS, CHROMIUM, CURVES_JS, OUT, PAGES, first_page_timeline, press_timings, require_browser,
                      served_app)

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def voila_url():
    require_browser()
    with served_app() as url:
        yield url


def _assert_figures_drawn(page, classes):
    for css in classes:
        page.wait_for_function(
            f"() => {{ const f = document.querySelector('.{css}'); return f && f.querySelector('svg') && "
            f"Array.from(f.querySelectorAll('svg path, svg image, svg rect.heatmap, svg circle'))"
            f".some(e => (e.getAttribute('d') || 'x').length > 1); }}", timeout=30_000)


def test_slider_moves_model_curve(voila_url, capsys):
    from playwright.sync_api import sync_playwright

    OUT.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            marks = first_page_timeline(page, voila_url)
            assert marks["page_ready"] >= marks["first_curve"] > 0
            page.wait_for_timeout(800)
            page.screenshot(path=str(OUT / "first_render.png"), full_page=True)
            _assert_figures_drawn(page, PAGES["interferometry"])
            before = page.evaluate(CURVES_JS)
            times = press_timings(page, "dx-inclination", 24)
            # An even number of presses, right and left: the curve is the first one again.
            page.wait_for_function(f"(c) => ({CURVES_JS})() === c", arg=before, timeout=30_000)
            q1, med, q3 = statistics.quantiles(times, n=4)
            with capsys.disabled():   # shown in the `make test` output, not only on failure
                print("\nfirst page: " + ", ".join(f"{k} {v:.2f} s" for k, v in marks.items()))
                print(f"key press to redrawn V² curve: median {med:.0f} ms (quartiles {q1:.0f}–{q3:.0f} ms, "
                      f"{len(times)} presses)")
            page.screenshot(path=str(OUT / "after_slider.png"), full_page=True)
            for label in ("SED & spectrum", "disk structure"):
                page.get_by_text(label, exact=True).first.click()
                page.wait_for_timeout(2500)
                _assert_figures_drawn(page, PAGES[label])
                page.screenshot(path=str(OUT / f"page_{label.split()[0].lower()}.png"), full_page=True)
        finally:
            browser.close()
