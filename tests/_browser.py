"""Helpers of the browser tests: serve the explorer with voila, open it in headless Chromium.

Browser tests are marked ``@pytest.mark.browser``; they skip when Chromium is missing,
except under ``DISKEXPLORER_REQUIRE_BROWSER=1`` (CI), where they fail.
"""
import contextlib
import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
from _processes import free_port

__all__ = ["CHROMIUM", "ROOT", "NOTEBOOK", "OUT", "ARGS", "PAGES", "CURVES_JS", "FIRST_CURVE_JS", "README_CELL",
           "require_browser", "served_app", "open_app", "jupyter_server", "open_notebook", "run_first_cell",
           "drawn_control_count", "first_page_timeline", "press_timings"]

CHROMIUM = "/usr/bin/chromium"
ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "diskexplorer" / "app" / "serving" / "explorer.ipynb"
OUT = ROOT / "test-output"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def require_browser():
    """Skip (or fail under DISKEXPLORER_REQUIRE_BROWSER=1) without Chromium or playwright."""
    required = os.environ.get("DISKEXPLORER_REQUIRE_BROWSER") == "1"
    if not os.path.exists(CHROMIUM):
        if required:
            pytest.fail(f"{CHROMIUM} is missing and DISKEXPLORER_REQUIRE_BROWSER=1")
        pytest.skip(f"{CHROMIUM} is missing")
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        if required:
            pytest.fail("playwright is missing and DISKEXPLORER_REQUIRE_BROWSER=1")
        pytest.skip("playwright is missing")


def _wait_port(port, proc, timeout=60.0):
    end = time.time() + timeout
    while time.time() < end:
        if proc.poll() is not None:
            raise RuntimeError(f"the server exited with code {proc.returncode} before listening on port {port}")
        with socket.socket() as s:
            if s.connect_ex(("127.0.0.1", port)) == 0:
                return
        time.sleep(0.2)
    raise TimeoutError(f"the server did not listen on port {port}")


@contextlib.contextmanager
def served_app(notebook=NOTEBOOK, env=None, log=None, preheat=True):
    """Serve ``notebook`` with voila on a free loopback port; yields its URL.

    ``env`` adds environment variables (e.g. the ones ``diskexplorer demo`` hands to the
    app); ``log`` is a file voila's output goes to (default: discarded). As ``diskexplorer
    demo`` does, the kernels get :data:`diskexplorer.app.serving.server.KERNEL_ENVIRONMENT` and, with
    ``preheat``, one is kept preheated (:func:`diskexplorer.app.serving.server.voila_options`).
    """
    from diskexplorer.app.serving.server import KERNEL_ENVIRONMENT, voila_options

    port = free_port()
    out = open(log, "wb") if log is not None else subprocess.DEVNULL
    proc = subprocess.Popen([sys.executable, "-m", "voila", str(notebook), "--no-browser", f"--port={port}",
                             "--Voila.ip=127.0.0.1"] + (voila_options() if preheat else []),
                            stdout=out, stderr=subprocess.STDOUT, cwd=str(ROOT),
                            env={**KERNEL_ENVIRONMENT, **os.environ, **(env or {})})
    try:
        _wait_port(port, proc)
        yield f"http://127.0.0.1:{port}/"
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()
        if log is not None:
            out.close()


@contextlib.contextmanager
def open_app(url, viewport=(1500, 1100), on_page=None):
    """A playwright page showing the served app once its first V² curve is drawn.

    ``on_page(page)`` runs before the page navigates (e.g. to collect its console).
    """
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": viewport[0], "height": viewport[1]})
            if on_page is not None:
                on_page(page)
            page.goto(url, timeout=120_000)
            page.wait_for_function(
                "() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                ".some(p => (p.getAttribute('d') || '').length > 200)", timeout=120_000)
            yield page
        finally:
            browser.close()


#: The README's notebook cell.
README_CELL = "import diskexplorer\napp = diskexplorer.explore()\napp"

#: True once the V² figure has drawn a model curve.
FIRST_CURVE_JS = ("() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                  ".some(p => (p.getAttribute('d') || '').length > 200)")


@contextlib.contextmanager
def jupyter_server(front_end, folder, cells=(README_CELL,), log=None):
    """A real JupyterLab or Notebook 7 server on a free loopback port, serving ``folder``.

    ``folder`` gets ``explorer.ipynb`` holding ``cells`` (code). The token reaches the server
    in ``JUPYTER_TOKEN`` (never on the command line, which other users can read); the
    server's configuration, runtime and workspace folders are inside ``folder``, so nothing
    of the user's Jupyter set-up is read or written. Yields the notebook's URL with the
    token; on exit the server is stopped with everything it started.

    Parameters
    ----------
    front_end : {"lab", "notebook"}
    """
    import secrets

    import nbformat
    from _processes import stop_tree

    from diskexplorer.app.serving.server import KERNEL_ENVIRONMENT

    folder = Path(folder)
    nb = nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell(c) for c in cells])
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    nbformat.write(nb, folder / "explorer.ipynb")
    home = folder / ".jupyter-home"
    for sub in ("config", "data", "runtime", "workspaces", "settings"):
        (home / sub).mkdir(parents=True, exist_ok=True)
    token = secrets.token_urlsafe(24)
    port = free_port()
    env = {**KERNEL_ENVIRONMENT, **os.environ, "JUPYTER_TOKEN": token,
           "JUPYTER_CONFIG_DIR": str(home / "config"), "JUPYTER_RUNTIME_DIR": str(home / "runtime"),
           "JUPYTERLAB_WORKSPACES_DIR": str(home / "workspaces"), "JUPYTERLAB_SETTINGS_DIR": str(home / "settings")}
    app = {"lab": "jupyterlab", "notebook": "notebook"}[front_end]
    out = open(log, "wb") if log is not None else subprocess.DEVNULL
    proc = subprocess.Popen([sys.executable, "-m", app, "--no-browser", f"--port={port}", "--ServerApp.ip=127.0.0.1",
                             "--ServerApp.port_retries=0", f"--ServerApp.root_dir={folder}",
                             # No look-ups on the network: no news, update checks or extension index.
                             "--LabApp.news_url=", "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
                             "--LabApp.extension_manager=readonly"]
                            + (["--allow-root"] if hasattr(os, "geteuid") and os.geteuid() == 0 else []),
                            stdout=out, stderr=subprocess.STDOUT, cwd=str(folder), env=env)
    try:
        _wait_port(port, proc)
        path = "lab/tree/explorer.ipynb" if front_end == "lab" else "notebooks/explorer.ipynb"
        yield f"http://127.0.0.1:{port}/{path}?token={token}"
    finally:
        stop_tree(proc)
        if log is not None:
            out.close()


def open_notebook(page, url, timeout=120_000):
    """Open the notebook at ``url`` in ``page`` and wait until its kernel is idle."""
    page.goto(url, timeout=timeout)
    page.wait_for_selector(".jp-Notebook .jp-Cell", timeout=timeout)
    # The kernel status reads "Idle" in both front ends once the kernel has started.
    page.wait_for_function("() => !!document.querySelector('.jp-Notebook') && "
                           "!document.querySelector('.jp-Dialog')", timeout=timeout)


def run_first_cell(page, timeout=120_000):
    """Run the notebook's first cell as a user does (click it, Shift+Enter); returns the time
    (``performance.now()``, ms) of the key press. Waits for the first V² curve."""
    cell = page.locator(".jp-Notebook .jp-Cell").first
    prompt = "() => (document.querySelector('.jp-Notebook .jp-Cell .jp-InputArea-prompt') || {}).textContent || ''"
    for attempt in range(3):
        # A key press before the kernel is connected is lost: run again until the prompt says
        # the cell is queued or done ("[*]:", "[1]:").
        cell.locator(".cm-content").click()
        t0 = page.evaluate("() => performance.now()")
        page.keyboard.press("Shift+Enter")
        try:
            page.wait_for_function(f"() => /\\[(\\*|\\d+)\\]/.test(({prompt})())", timeout=15_000)
            break
        except Exception:  # noqa: BLE001 - try again, then let the wait below fail
            continue
    page.wait_for_function(FIRST_CURVE_JS, timeout=timeout)
    return t0


#: Figures (by CSS class) of each page of the figure tabs; each must draw at least one SVG
#: path (or image). The first page is the one a new page opens on.
PAGES = {
    "interferometry": ("dx-fig-vis2", "dx-fig-vis2-residuals", "dx-fig-t3", "dx-fig-t3-residuals", "dx-fig-corrflux"),
    "SED & spectrum": ("dx-fig-sed", "dx-fig-spectrum", "dx-fig-silicate"),
    "disk structure": ("dx-fig-image", "dx-fig-profile-temperature", "dx-fig-profile-tau",
                       "dx-fig-profile-intensity"),
}

#: The V² figure's line paths joined: changes when the model curve is redrawn.
CURVES_JS = ("() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
             ".map(p => p.getAttribute('d') || '').join('|')")


def drawn_control_count(app):
    """How many slider controls of ``app`` a new browser page draws (shown or not).

    Walks the widget tree as the page builds it: every child of a Box, Tab or Accordion
    (collapsed or hidden ones too), so the pages the explorer builds on first opening
    count only once built.
    """
    import ipywidgets as w

    from diskexplorer.app.controls.param_control import ParamControl

    def walk(widget):
        if isinstance(widget, ParamControl):
            return 1
        children = getattr(widget, "children", ()) or ()
        return sum(walk(c) for c in children if isinstance(c, w.Widget))

    return walk(app)


# Installed before the page's own scripts: watches every animation frame and notes when
# each milestone of the first page is first reached (ms since navigation started).
_TIMELINE_JS = """
(() => {
  const want = %(controls)d, figures = %(figures)s;
  const marks = window.__dxMarks = {};
  // Cheap checks only: reading layout (offsetParent...) every frame slowed the page down.
  const drawn = (css) => { const f = document.querySelector('.' + css);
    return !!(f && Array.from(f.querySelectorAll('svg path, svg image'))
      .some(e => (e.getAttribute('d') || e.getAttribute('href') || 'x').length > 1)); };
  const tick = () => {
    const now = performance.now();
    if (!marks.first_widget && document.querySelector('.dx-root')) marks.first_widget = now;
    if (!marks.first_curve && Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))
          .some(p => (p.getAttribute('d') || '').length > 200)) marks.first_curve = now;
    const controls = document.querySelectorAll('.dx-param .noUi-handle').length;
    if (!marks.controls && controls >= want) marks.controls = now;
    if (!marks.figures && figures.every(drawn)) marks.figures = now;
    if (marks.controls && marks.figures && marks.first_curve) {
      marks.page_ready = Math.max(marks.controls, marks.figures, marks.first_curve); return; }
    requestAnimationFrame(tick);
  };
  requestAnimationFrame(tick);
})();
"""


def first_page_timeline(page, url, controls=None, figures=PAGES["interferometry"], timeout=120_000):
    """Open ``url`` in ``page`` and time the first page's milestones.

    Parameters
    ----------
    controls : int, optional
        Slider controls the first page draws when complete (default: counted on a
        headless build of the sample app, :func:`drawn_control_count`).
    figures : sequence of str
        CSS classes of the figures that must be drawn.

    Returns
    -------
    dict of str to float
        Seconds since navigation started: ``html`` (the page's HTML received),
        ``first_widget``, ``first_curve`` (the first V² curve), ``controls`` (every slider
        control drawn, the collapsed dust mixtures' too), ``figures`` (every figure drawn), ``page_ready`` (both).
    """
    import json

    if controls is None:
        controls = _sample_control_count()
    page.add_init_script(_TIMELINE_JS % {"controls": controls, "figures": json.dumps(list(figures))})
    page.goto(url, timeout=timeout)
    page.wait_for_function("() => window.__dxMarks && window.__dxMarks.page_ready", timeout=timeout)
    marks = page.evaluate("() => window.__dxMarks")
    marks["html"] = page.evaluate("() => performance.getEntriesByType('navigation')[0].responseEnd")
    order = ("html", "first_widget", "first_curve", "controls", "figures", "page_ready")
    return {k: marks[k] / 1e3 for k in order}


_COUNT = {}


def _sample_control_count():
    if "sample" not in _COUNT:
        from diskexplorer.app import explore
        from diskexplorer.app.state.debounce import ManualScheduler

        _COUNT["sample"] = drawn_control_count(explore(scheduler=ManualScheduler(), jobs="sync"))
    return _COUNT["sample"]


# A keydown listener (capture phase, before the slider's own) notes the time; an observer
# of the V² figure notes when its line paths differ from the ones before the press. The
# promise travels inside an object so that arming does not wait for it.
_PRESS_JS = """
(before) => ({done: new Promise((resolve) => {
  const fig = document.querySelector('.dx-fig-vis2');
  const curves = () => Array.from(fig.querySelectorAll('svg path.line')).map(p => p.getAttribute('d') || '').join('|');
  let t0 = null;
  const obs = new MutationObserver(() => {
    if (t0 !== null && curves() !== before) {
      const t = performance.now() - t0; obs.disconnect(); resolve(t); }
  });
  obs.observe(fig, {subtree: true, attributes: true, attributeFilter: ['d'], childList: true});
  window.addEventListener('keydown', () => { t0 = performance.now(); }, {capture: true, once: true});
  window.__dxPressArmed = true;
})})
"""


def press_timings(page, css, n, pause_ms=300):
    """Press ArrowRight and ArrowLeft alternately on a slider handle; ms from keydown to the curve's change.

    Each press is its own burst (``pause_ms`` apart): the figure is the first recompute of a
    burst, as a user stepping a slider sees it.
    """
    handle = page.locator(f".{css} .noUi-handle").first
    handle.focus()
    times = []
    for k in range(n):
        before = page.evaluate(CURVES_JS)
        page.evaluate("() => { window.__dxPressArmed = false; }")
        pending = page.evaluate_handle(_PRESS_JS, before)
        page.wait_for_function("() => window.__dxPressArmed")
        page.keyboard.press("ArrowRight" if k % 2 == 0 else "ArrowLeft")
        times.append(float(page.evaluate("(p) => p.done", pending)))
        page.wait_for_timeout(pause_ms)
    return times
