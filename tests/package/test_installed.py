"""The package as a pip user gets it: a wheel installed into a new venv, used from an empty folder.

Builds a wheel of this checkout, installs it (not editable) into a fresh virtual
environment with pip (its cache makes the dependencies quick after ``make test`` has set up
``.venv``) and, from an empty folder with nothing of the project beside it: reads the
sample, copies it, evaluates it with the command line, serves the demo, saves a starting
point from the app in headless Chromium, and stops the demo with SIGTERM.
"""
import json
import os
import signal
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import psutil
import pytest
from _browser import ARGS, CHROMIUM, require_browser
from _processes import alive, free_port, port_open, served_address, stop_tree

pytestmark = [pytest.mark.slow]

ROOT = Path(__file__).resolve().parents[2]


def _run(cmd, cwd, timeout=600, env=None):
    proc = subprocess.run(cmd, cwd=str(cwd), capture_output=True, text=True, timeout=timeout, env=env)
    assert proc.returncode == 0, f"{' '.join(map(str, cmd))} failed ({proc.returncode}):\n{proc.stdout}\n{proc.stderr}"
    return proc.stdout


def _clean_env():
    # Nothing of the checkout may leak into the installed package's runs.
    env = {k: v for k, v in os.environ.items() if not k.startswith(("PYTHON", "DISKEXPLORER_", "VIRTUAL_ENV"))}
    env["PATH"] = os.defpath
    return env


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """(venv bin folder, empty working folder, wheel path)."""
    base = tmp_path_factory.mktemp("installed")
    dist = base / "dist"
    _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w", str(dist), str(ROOT)], cwd=base)
    wheel = next(dist.glob("diskexplorer-*.whl"))
    venv = base / "venv"
    _run([sys.executable, "-m", "venv", str(venv)], cwd=base)
    _run([str(venv / "bin" / "python"), "-m", "pip", "install", "--quiet", str(wheel)], cwd=base)
    empty = base / "work"
    empty.mkdir()
    return venv / "bin", empty, wheel


def test_the_wheel_carries_its_data_and_not_the_tests(installed):
    _, _, wheel = installed
    names = zipfile.ZipFile(wheel).namelist()
    for needed in ("diskexplorer/sample_data/aurelis_QT-HK.fits", "diskexplorer/sample_data/aurelis_start.json",
                   "diskexplorer/app/serving/explorer.ipynb", "diskexplorer/dust/kappa_library.npz"):
        assert needed in names, needed
    assert any(n.startswith("diskexplorer/dust/lab_constants/") and n.endswith(".txt") for n in names)
    assert not any(n.startswith("tests/") or "/reference/oifits" in n for n in names)


def test_sample_and_evaluate_from_an_empty_folder(installed):
    bin_dir, empty, _ = installed
    env = _clean_env()
    out = _run([str(bin_dir / "python"), "-c",
                "import diskexplorer, diskexplorer.sample as s; d = s.load_sample_data(); "
                "print(diskexplorer.__file__); print(d['observations'].n_points('vis2'))"], cwd=empty, env=env)
    location, n_vis2 = out.split()
    assert "site-packages" in location and str(ROOT) not in location
    assert int(n_vis2) > 0
    _run([str(bin_dir / "diskexplorer"), "sample-data", "--out", "sample"], cwd=empty, env=env)
    text = _run([str(bin_dir / "diskexplorer"), "evaluate", "sample/aurelis_start.json", "--out", "report",
                 "--npix", "32", "--image-wavelengths", "2.2,10"], cwd=empty, env=env)
    assert "total" in text
    for name in ("chi2.csv", "model.nc", "sed.png", "vis2.png"):
        assert (empty / "report" / name).stat().st_size > 0, name





@pytest.mark.browser
def test_served_demo_saves_into_the_folder_and_stops_on_sigterm(installed):
    require_browser()
    from playwright.sync_api import sync_playwright

    bin_dir, empty, _ = installed
    folder = empty / "demo"
    folder.mkdir()
    port = free_port()
    proc = subprocess.Popen([str(bin_dir / "diskexplorer"), "demo", "--port", str(port)], cwd=str(folder),
                            env=_clean_env(), stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
    try:
        url, _ = served_address(proc)   # with its token: the page is refused without it
        assert proc.poll() is None and port_open(port)
        target = folder / "diskexplorer-start.json"
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
            try:
                page = browser.new_page(viewport={"width": 1500, "height": 1100})
                page.goto(url, timeout=120_000)
                page.wait_for_selector(".dx-fig-vis2 svg path.line", timeout=120_000)
                page.get_by_text("starting point", exact=True).first.click()
                page.locator(".dx-start-save").first.click()
                page.wait_for_function(
                    "(want) => (document.querySelector('.dx-message') || {}).textContent?.includes(want)",
                    arg=str(target), timeout=30_000)
                assert target.is_file()
                assert json.loads(target.read_text())["scene"]
                site = Path(next(bin_dir.parent.glob("lib/python*/site-packages")))
                assert not list((site / "diskexplorer").rglob("diskexplorer-start.json"))
            finally:
                browser.close()
        family = psutil.Process(proc.pid).children(recursive=True)
        assert any("ipykernel" in " ".join(p.cmdline()) for p in family)
        t0 = time.monotonic()
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=10)
        while alive(family) and time.monotonic() - t0 < 10:
            time.sleep(0.2)
        assert not alive(family), [p.cmdline() for p in alive(family)]
        assert not port_open(port)
    finally:
        stop_tree(proc)
