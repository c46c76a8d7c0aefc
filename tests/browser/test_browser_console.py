"""A clean console: the served explorer, every tab opened, a slider stepped by key and
dragged, logs no error and no warning of its own in Chromium.

bqplot turns bad mark data into attribute errors the page logs at every redraw (rows ending
in NaN, rows of NaN only, axes without a domain, figures drawn while hidden); a
headless test of the marks (tests/app/test_marks.py) covers the data, this one the page.
"""
import pytest

from _browser import open_app, require_browser, served_app

pytestmark = pytest.mark.browser

# Not ours: voila's template links an icon font from a public CDN (unreachable offline), and
# its bundles warn about the versions of the JupyterLab modules they share (and fail to load
# the extensions of other front ends installed beside it, such as Notebook 7's).
_FOREIGN = ("Unsatisfied version", "No satisfying version", "[ Federation Runtime ]")
_OURS = ("bqplot", "anywidget", "jupyter-widgets", "dx-")


def _ours(message):
    kind, text, url = message
    if kind not in ("error", "warning", "pageerror"):
        return False
    if text.startswith("Failed to load resource") and not url.startswith("http://127.0.0.1"):
        return False
    if text.startswith("Failed to create module") and not any(k in text for k in _OURS):
        return False
    return not any(text.startswith(f) for f in _FOREIGN)


def test_console_stays_clean(capsys):
    require_browser()
    log = []
    with served_app() as url, open_app(url, on_page=lambda page: (
            page.on("console", lambda m: log.append((m.type, m.text, (m.location or {}).get("url", "")))),
            page.on("pageerror", lambda e: log.append(("pageerror", str(e), ""))))) as page:
        page.wait_for_timeout(800)
        handle = page.locator(".dx-ring-t_in .noUi-handle").first
        handle.focus()
        for key in ("ArrowRight", "ArrowLeft", "PageUp", "PageDown"):
            page.keyboard.press(key)
            page.wait_for_timeout(250)
        box = handle.bounding_box()
        page.mouse.move(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)
        page.mouse.down()
        page.mouse.move(box["x"] + 60, box["y"] + box["height"] / 2, steps=10)
        page.mouse.up()
        page.wait_for_timeout(800)
        labels = page.evaluate("() => Array.from(document.querySelectorAll('.dx-root .lm-TabBar-tabLabel'))"
                               ".map(e => e.textContent)")
        assert {"interferometry", "SED & spectrum", "disk structure"} <= set(labels)
        for label in labels:
            page.locator(".dx-root .lm-TabBar-tab", has_text=label).first.click()
            page.wait_for_timeout(1500 if label in ("SED & spectrum", "disk structure") else 500)
        page.wait_for_function("() => document.querySelectorAll('.dx-fig-profile-intensity svg path.line').length > 0",
                               timeout=30_000)
        # A step while a figure page with several figures shows.
        page.locator(".dx-root .lm-TabBar-tab", has_text="SED & spectrum").first.click()
        page.locator(".dx-root .lm-TabBar-tab", has_text="model").first.click()
        handle.focus()
        page.keyboard.press("ArrowRight")
        page.wait_for_timeout(1200)
    ours = [m for m in log if _ours(m)]
    with capsys.disabled():
        print(f"\nconsole: {len(log)} messages, {len(ours)} from the explorer")
    assert not ours, "\n".join(f"{k}: {t[:200]}" for k, t, _ in ours[:20])
