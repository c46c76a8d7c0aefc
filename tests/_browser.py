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

__all__ = ["CHROMIUM", "ROOT", "NOTEBOOK", "OUT", "ARGS", "require_browser", "served_app", "open_app"]

CHROMIUM = "/usr/bin/chromium"
ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "diskexplorer" / "app" / "explorer.ipynb"
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
            raise RuntimeError(f"voila exited with code {proc.returncode} before listening on port {port}")
        with socket.socket() as s:
            if s.connect_ex(("127.0.0.1", port)) == 0:
                return
        time.sleep(0.2)
    raise TimeoutError(f"voila did not listen on port {port}")


@contextlib.contextmanager
def served_app(notebook=NOTEBOOK, env=None, log=None):
    """Serve ``notebook`` with voila on a free loopback port; yields its URL.

    ``env`` adds environment variables (e.g. the ones ``diskexplorer demo`` hands to the
    app); ``log`` is a file voila's output goes to (default: discarded).
    """
    port = free_port()
    out = open(log, "wb") if log is not None else subprocess.DEVNULL
    proc = subprocess.Popen([sys.executable, "-m", "voila", str(notebook), "--no-browser", f"--port={port}",
                             "--Voila.ip=127.0.0.1"], stdout=out, stderr=subprocess.STDOUT, cwd=str(ROOT),
                            env=dict(os.environ, **(env or {})))
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
def open_app(url, viewport=(1500, 1100)):
    """A playwright page showing the served app once its first V² curve is drawn."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": viewport[0], "height": viewport[1]})
            page.goto(url, timeout=120_000)
            page.wait_for_function(
                "() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
                ".some(p => (p.getAttribute('d') || '').length > 200)", timeout=120_000)
            yield page
        finally:
            browser.close()
