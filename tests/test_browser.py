"""One real-browser test: the explorer served by voila, driven in headless Chromium."""
import time

import pytest

from _browser import ARGS, CHROMIUM, OUT, require_browser, served_app

pytestmark = pytest.mark.browser

# Figures (by CSS class) on each page of the figure tabs; each must draw at least one SVG path.
PAGES = {
    "interferometry": ("dx-fig-vis2", "dx-fig-vis2-residuals", "dx-fig-t3", "dx-fig-t3-residuals", "dx-fig-corrflux"),
    "SED & spectrum": ("dx-fig-sed", "dx-fig-spectrum", "dx-fig-silicate"),
    "disk structure": ("dx-fig-image", "dx-fig-profile-temperature", "dx-fig-profile-tau",
                       "dx-fig-profile-intensity"),
}


@pytest.fixture(scope="module")
def voila_url():
    require_browser()
    with served_app() as url:
        yield url


def _curve_paths(page):
    return page.evaluate("() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                         ".map(p => p.getAttribute('d') || '').join('|')")


def _assert_figures_drawn(page, classes):
    for css in classes:
        page.wait_for_function(
            f"() => {{ const f = document.querySelector('.{css}'); return f && f.querySelector('svg') && "
            f"Array.from(f.querySelectorAll('svg path, svg image, svg rect.heatmap, svg circle'))"
            f".some(e => (e.getAttribute('d') || 'x').length > 1); }}", timeout=30_000)


def test_slider_moves_model_curve(voila_url):
    from playwright.sync_api import sync_playwright

    OUT.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            t0 = time.time()
            page.goto(voila_url, timeout=120_000)
            page.wait_for_selector(".dx-fig-vis2 svg path.line", timeout=120_000)
            page.wait_for_function(
                "() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                ".some(p => (p.getAttribute('d') || '').length > 200)", timeout=60_000)
            first_render = time.time() - t0
            page.wait_for_timeout(800)
            page.screenshot(path=str(OUT / "first_render.png"), full_page=True)
            _assert_figures_drawn(page, PAGES["interferometry"])
            before = _curve_paths(page)
            handle = page.locator(".dx-inclination .noUi-handle").first
            handle.focus()
            page.evaluate("() => { window.__dxT0 = performance.now(); }")
            for _ in range(5):
                page.keyboard.press("ArrowRight")
            page.wait_for_function(
                "(before) => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                ".map(p => p.getAttribute('d') || '').join('|') !== before",
                arg=before, timeout=30_000)
            redraw_ms = page.evaluate("() => performance.now() - window.__dxT0")
            after = _curve_paths(page)
            assert after != before
            print(f"\nfirst render {first_render:.1f} s; key press to redrawn V² curve {redraw_ms:.0f} ms")
            page.wait_for_timeout(500)
            page.screenshot(path=str(OUT / "after_slider.png"), full_page=True)
            for label in ("SED & spectrum", "disk structure"):
                page.get_by_text(label, exact=True).first.click()
                page.wait_for_timeout(2500)
                _assert_figures_drawn(page, PAGES[label])
                page.screenshot(path=str(OUT / f"page_{label.split()[0].lower()}.png"), full_page=True)
        finally:
            browser.close()
