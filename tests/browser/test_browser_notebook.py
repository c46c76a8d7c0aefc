"""The explorer in a real Notebook 7: the README's cell renders it, its slider keys reach
the slider (Notebook 7's command mode binds ArrowRight), its tabs switch, and the page's
console holds no error of ours.

The server is a real ``jupyter notebook`` on a free loopback port with a token, in a
temporary folder (tests/_browser.jupyter_server), stopped with everything it started.
"""
import json

import pytest

from _browser import OUT, jupyter_server, open_notebook, require_browser, run_first_cell

pytestmark = pytest.mark.browser

_TITLE = "() => document.querySelector('.dx-ring-t_in .dx-param-label').getAttribute('title').split(' — ')[0]"
_ACTIVE = ("() => Array.from(document.querySelectorAll('.jp-Notebook .jp-Cell'))"
           ".findIndex(c => c.classList.contains('jp-mod-active'))")
_BOX = "() => document.querySelector('.dx-ring-t_in input').value"
# The kernel has written the number box for the slider's position (see test_browser_controls).
_SETTLED = f"""() => {{ const exact = parseFloat(({_TITLE})().split(' = ')[1]);
  return Math.abs(parseFloat(({_BOX})()) - exact) <= 2e-3 * Math.abs(exact); }}"""


def _ours(kind, text):
    # Not ours: Notebook 7 warns about duplicated menu entries and its collaborative
    # documents, and one of its own plugins throws reading a settings schema at start-up
    # (an exception raised inside notebook_core, with or without the explorer).
    if kind == "pageerror" and "reading 'schema'" in text and "/static/notebook/notebook_core." in text:
        return False
    return kind in ("error", "pageerror") or (kind == "warning" and ("bqplot" in text or "attribute" in text
                                                                    or "dx-" in text))


def test_keys_reach_the_slider_in_notebook7(tmp_path):
    require_browser()
    from playwright.sync_api import sync_playwright

    from _browser import ARGS, CHROMIUM

    log = []
    with jupyter_server("notebook", tmp_path) as url, sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1300, "height": 1000})
            page.on("console", lambda m: log.append((m.type, m.text)))
            page.on("pageerror", lambda e: log.append(("pageerror", str(e) + " " + (e.stack or "")[:600])))
            open_notebook(page, url)
            run_first_cell(page)
            page.wait_for_function("() => document.querySelectorAll('.dx-ring-t_in .noUi-handle').length > 0",
                                   timeout=30_000)
            assert page.evaluate(_TITLE) == "T_in = 1480 K"
            handle = page.locator(".dx-ring-t_in .noUi-handle").first
            handle.focus()
            page.wait_for_timeout(300)
            cell = page.evaluate(_ACTIVE)
            # Command mode, where Notebook 7 binds the arrows to moving between cells.
            assert "jp-mod-commandMode" in page.evaluate("() => document.querySelector('.jp-Notebook').className")
            page.keyboard.press("ArrowRight")
            page.wait_for_function(f"() => ({_TITLE})() === 'T_in = 1490 K'", timeout=30_000)
            page.wait_for_function(f"() => ({_BOX})() === '1490'", timeout=30_000)
            assert page.evaluate(_ACTIVE) == cell
            assert page.evaluate("() => document.activeElement.classList.contains('noUi-handle')")
            for key, value in (("ArrowLeft", "1480"), ("PageUp", None), ("Home", None), ("End", None)):
                before = page.evaluate(_TITLE)
                page.keyboard.press(key)
                page.wait_for_function(f"(b) => ({_TITLE})() !== b", arg=before, timeout=30_000)
                if value is not None:
                    page.wait_for_function(f"(v) => ({_BOX})() === v", arg=value, timeout=30_000)
                page.wait_for_function(_SETTLED, timeout=30_000)
                assert page.evaluate(_ACTIVE) == cell, key
            # The number box: the arrows step the number, and stay in the box.
            box = page.locator(".dx-ring-t_in input").first
            box.fill("1500")
            box.press("Enter")
            page.wait_for_function(f"() => ({_TITLE})() === 'T_in = 1500 K'", timeout=30_000)
            box.press("ArrowUp")
            page.wait_for_function(f"() => ({_BOX})() !== '1500'", timeout=30_000)
            assert page.evaluate(_ACTIVE) == cell
            for label in ("SED & spectrum", "disk structure", "interferometry"):
                page.locator(".dx-root .lm-TabBar-tab", has_text=label).first.click()
                page.wait_for_timeout(1500)
            assert page.locator(".dx-fig-profile-intensity svg path.line").count() > 0
            OUT.mkdir(exist_ok=True)
            page.screenshot(path=str(OUT / "notebook7.png"))
            # The picture for the saved notebook: drawn once the changes settled, hidden while
            # the live explorer shows, and saved with the notebook beside the widget view.
            page.wait_for_function("() => !!document.querySelector('.dx-snapshot img')", timeout=30_000)
            assert page.evaluate("() => document.querySelector('.dx-snapshot').offsetParent === null")
            page.locator(".jp-Notebook .jp-Cell").first.locator(".cm-content").click()
            page.keyboard.press("Escape")
            page.keyboard.press("Control+s")
            saved = tmp_path / "explorer.ipynb"
            for _ in range(100):
                if "data:image/png;base64," in saved.read_text():
                    break
                page.wait_for_timeout(100)
            outputs = json.loads(saved.read_text())["cells"][0]["outputs"]
            kinds = [sorted(o.get("data", {})) for o in outputs]
            assert any("application/vnd.jupyter.widget-view+json" in k for k in kinds), kinds
            assert any("dx-snapshot" in "".join(o.get("data", {}).get("text/html", "")) and
                       "data:image/png;base64," in "".join(o["data"]["text/html"]) for o in outputs), kinds
            # Reopened without its kernel, the notebook shows the picture.
            token = url.split("token=")[1]
            page.evaluate("""async (token) => {
                const head = {Authorization: 'token ' + token};
                const kernels = await (await fetch('/api/kernels', {headers: head})).json();
                for (const k of kernels) await fetch('/api/kernels/' + k.id, {method: 'DELETE', headers: head}); }""",
                          token)
            reopened = browser.new_page(viewport={"width": 1300, "height": 1000})
            reopened.goto(url.replace("explorer.ipynb", "explorer.ipynb") + "&reset", timeout=60_000)
            reopened.wait_for_selector(".dx-snapshot img", state="visible", timeout=60_000)
            reopened.screenshot(path=str(OUT / "notebook7_reopened.png"))
        finally:
            browser.close()
    ours = [(k, t[:200]) for k, t in log if _ours(k, t)]
    assert not ours, ours
