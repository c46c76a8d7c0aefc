"""Take the README's screenshots: the explorer served by voila, in headless Chromium.

Run from the project root: ``.venv/bin/python docs/take_screenshots.py [NAME.png ...]``
(names: retake only those). Each picture
shows the app at its opening state on the sample data (the true scene, χ²/N ≈ 1), with
one tab selected. Needs Debian's /usr/bin/chromium and the playwright package.
"""
import shutil
import socket
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "diskexplorer" / "app" / "serving" / "explorer.ipynb"
SHOTS = ROOT / "docs" / "screenshots"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]
# (file name, tab labels to click in order)
VIEWS = [
    ("interferometry.png", ["interferometry"]),
    ("sed_spectrum.png", ["SED & spectrum"]),
    ("structure.png", ["disk structure"]),
    ("data_panel.png", ["data"]),
    ("pins_session.png", ["pins & session"]),
    ("export.png", ["starting point"]),
    ("scan.png", ["χ² grid", "start scan"]),
    ("derived.png", ["derived quantities"]),
    # The inner ring's composition solved from the sample's start (one press: the solve,
    # then iron against carbon), and each species' share on the spectrum page.
    ("composition.png", ["solve composition", "css=.dx-composition button:has-text('solve composition')"]),
    ("species.png", ["SED & spectrum", "each dust species' share of its ring (dash-dotted)"]),
]
# Extra waiting after the last click (a scan on the local cluster takes a while).
WAIT_MS = {"scan.png": 45_000, "composition.png": 40_000}


def main(extra_views=(), only=None):
    from playwright.sync_api import sync_playwright

    SHOTS.mkdir(parents=True, exist_ok=True)
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    voila = shutil.which("voila", path=str(Path(sys.executable).parent)) or "voila"
    proc = subprocess.Popen([voila, str(NOTEBOOK), "--no-browser", f"--port={port}", "--Voila.ip=127.0.0.1"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=str(ROOT))
    try:
        for _ in range(300):
            with socket.socket() as s:
                if s.connect_ex(("127.0.0.1", port)) == 0:
                    break
            time.sleep(0.2)
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path="/usr/bin/chromium", headless=True, args=ARGS)
            for name, tabs in list(VIEWS) + list(extra_views):
                if only and name not in only:
                    continue
                page = browser.new_page(viewport={"width": 1500, "height": 1100})
                page.goto(f"http://127.0.0.1:{port}/", timeout=120_000)
                page.wait_for_selector(".dx-fig-vis2 svg path.line", timeout=120_000)
                page.wait_for_timeout(1500)
                for label in tabs:
                    if label.startswith("css="):
                        page.locator(label[4:]).first.click()
                    else:
                        page.get_by_text(label, exact=True).first.click()
                    page.wait_for_timeout(2500)
                page.wait_for_timeout(WAIT_MS.get(name, 0))
                page.screenshot(path=str(SHOTS / name), full_page=False)
                print(f"wrote {SHOTS / name}")
                page.close()
            browser.close()
    finally:
        proc.terminate()
        proc.wait(timeout=20)


if __name__ == "__main__":
    main(only=sys.argv[1:] or None)   # file names to retake only those
