"""One real-browser test: the explorer served by voila, driven in headless Chromium."""
import os
import shutil
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "diskexplorer" / "app" / "explorer.ipynb"
OUT = ROOT / "test-output"
# Figures (by CSS class) on each page of the figure tabs; each must draw at least one SVG path.
PAGES = {
    "interferometry": ("dx-fig-vis2", "dx-fig-vis2-residuals", "dx-fig-t3", "dx-fig-t3-residuals", "dx-fig-corrflux"),
    "SED & spectrum": ("dx-fig-sed", "dx-fig-spectrum", "dx-fig-silicate"),
    "disk structure": ("dx-fig-image", "dx-fig-profile-temperature", "dx-fig-profile-tau",
                       "dx-fig-profile-intensity"),
}
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait_port(port, timeout=60.0):
    end = time.time() + timeout
    while time.time() < end:
        with socket.socket() as s:
            if s.connect_ex(("127.0.0.1", port)) == 0:
                return
        time.sleep(0.2)
    raise TimeoutError(f"voila did not listen on port {port}")


@pytest.fixture(scope="module")
def voila_url():
    if not os.path.exists(CHROMIUM):
        if os.environ.get("DISKEXPLORER_REQUIRE_BROWSER") == "1":
            pytest.fail(f"{CHROMIUM} is missing and DISKEXPLORER_REQUIRE_BROWSER=1")
        pytest.skip(f"{CHROMIUM} is missing")
    pytest.importorskip("playwright")
    voila = shutil.which("voila", path=str(Path(sys.executable).parent)) or "voila"
    port = _free_port()
    proc = subprocess.Popen([voila, str(NOTEBOOK), "--no-browser", f"--port={port}", "--Voila.ip=127.0.0.1"],
                            stdout=subprocess.PIPE, stderr=subprocess.STDOUT, cwd=str(ROOT))
    try:
        _wait_port(port)
        yield f"http://127.0.0.1:{port}/"
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()


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
