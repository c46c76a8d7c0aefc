"""In a real browser, every V² and closure-phase point is drawn in the colour of its own
wavelength after any sequence of loads and removals of files with other wavelengths.

The app is served as ``diskexplorer demo --data FILE`` serves it (the data handed over in
DISKEXPLORER_DATA), so it opens on the user's file and nothing of the sample. The files are
written by the project's OIFITS writer for invented arrays and instruments: a first file
in the N band, and a second one with 8 channels at 2.0–2.35 µm and 6 in the L band.
The colours drawn in the SVG (one path of dots per wavelength) are counted against the
wavelength colour key: each wavelength's points in its own colour.
"""
import re
from pathlib import Path

import numpy as np
import pytest

from _browser import ARGS, CHROMIUM, OUT, require_browser, served_app

pytestmark = pytest.mark.browser

K_WAVES = np.linspace(2.0, 2.35, 8)
L_WAVES = np.linspace(3.45, 3.95, 6)
FIGURES = ("dx-fig-vis2", "dx-fig-t3")
# Largest difference per RGB channel (0–255) between a drawn colour and the key: each
# path's colour is sent as the key's hex colour, so none (neighbouring wavelengths' colours
# can differ by 1–2 units).
TOLERANCE = 0


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    from diskexplorer.data.observations import ObservationSet
    from diskexplorer.data.oifits_write import write_oifits
    from diskexplorer.testing import make_observations, make_oifits

    folder = tmp_path_factory.mktemp("browser_data")
    first = make_oifits(folder, "first_n.fits", n_telescopes=4, n_exposures=4, n_channels=10, band="N",
                        insname="ARRAY1_N", arrname="ARRAY1", target="SIM-DISK-4", diameter_mas=12.0, seed=7)
    k = make_observations(n_telescopes=6, n_exposures=5, wavelengths=K_WAVES, insname="ARRAY2_K", arrname="ARRAY2",
                          target="SIM-DISK-4", diameter_mas=1.5, seed=8)
    lb = make_observations(n_telescopes=4, n_exposures=3, wavelengths=L_WAVES, insname="ARRAY2_L",
                           arrname="ARRAY2_L", target="SIM-DISK-4", diameter_mas=3.0, seed=9)
    second = folder / "second_kl.fits"
    write_oifits(second, ObservationSet.concat([k, lb]), date="2024-01-01T00:00:00")
    return folder, first, second


@pytest.fixture(scope="module")
def served(files):
    require_browser()
    folder, first, _ = files
    env = {"DISKEXPLORER_DATA": str(first), "DISKEXPLORER_WORKDIR": str(folder), "OPENBLAS_NUM_THREADS": "1"}
    with served_app(env=env, log=folder / "voila.log") as url:
        yield url


def _expected(paths):
    """Per figure: the wavelength of each point (in the order drawn) and its colour on the key."""
    from diskexplorer.app.figures.interferometry import wavelength_colours
    from diskexplorer.data.oifits import read_oifits

    sets = [read_oifits(str(p)) for p in paths]
    wl = {"dx-fig-vis2": np.concatenate([s.vis2["wavelength"].values for s in sets]),
          "dx-fig-t3": np.concatenate([s.t3["wavelength"].values for s in sets])}
    lo = min(float(w.min()) for w in wl.values())
    hi = max(float(w.max()) for w in wl.values())
    out = {}
    for css, w in wl.items():
        rgb = np.array([[int(c[i:i + 2], 16) for i in (1, 3, 5)] for c in wavelength_colours(w, lo, hi)])
        out[css] = (w, rgb)
    return out


# The points are dots in one SVG path per colour (the figure's second mark; see
# diskexplorer.app.figures.base.dot_segments): per path, its stroke colour, its line caps
# and how many dots (subpaths) it draws.
_DRAWN = """(css) => {
  const fig = document.querySelector('.' + css);
  const first = fig.querySelector('g.curve');
  if (!first) return [];
  const mark = first.parentNode.parentNode.children[1];
  return Array.from(mark.querySelectorAll('path.line')).map(p => {
    const st = getComputedStyle(p);
    return {rgb: (st.stroke.match(/\\d+(\\.\\d+)?/g) || []).slice(0, 3).map(Number), cap: st.strokeLinecap,
            dots: ((p.getAttribute('d') || '').match(/M/g) || []).length};
  }).filter(r => r.dots > 0);
}"""


def _drawn(page, css):
    """(colour per dot as RGB rows, the line caps seen) of the points ``css`` draws."""
    paths = page.evaluate(_DRAWN, css)
    rgb = [r["rgb"] for r in paths for _ in range(r["dots"])]
    return np.array(rgb, float).reshape(-1, 3), {r["cap"] for r in paths}


def _matches(page, css, rgb):
    drawn, _ = _drawn(page, css)
    if drawn.shape != rgb.shape:
        return False
    key = lambda a: sorted(map(tuple, np.asarray(a).round()))  # noqa: E731
    return bool(np.all(np.abs(np.array(key(drawn)) - np.array(key(rgb))) <= TOLERANCE))


def _check_colours(page, paths, step):
    expected = _expected(paths)
    for css, (wl, rgb) in expected.items():
        deadline = 30.0
        while deadline > 0 and not _matches(page, css, rgb):
            page.wait_for_timeout(250)
            deadline -= 0.25
        # A late redraw must not repaint older colours over the right ones.
        page.wait_for_timeout(600)
        drawn, caps = _drawn(page, css)
        assert drawn.shape[0] == wl.size, f"{step}: {css} draws {drawn.shape[0]} points, the data hold {wl.size}"
        assert caps == {"round"}, f"{step}: {css}: dots drawn with line caps {caps} (zero-length: invisible unless round)"
        waves = np.unique(wl)
        distinct = {tuple(int(v) for v in c) for c in drawn.round()}
        assert len(distinct) == waves.size, \
            f"{step}: {css}: {len(distinct)} distinct colours drawn for {waves.size} distinct wavelengths"
        # Each wavelength's points in its own colour: as many dots of each key colour as
        # the data hold points of that wavelength (colours within TOLERANCE of the key).
        for w in waves:
            want = rgb[wl == w][0]
            near = int((np.abs(drawn - want).max(axis=1) <= TOLERANCE).sum())
            assert near == int((wl == w).sum()), (f"{step}: {css}: λ = {w:.4f} µm: {near} dots in its key colour "
                                                  f"{want.tolist()}, the data hold {(wl == w).sum()} points")


def _open_data_tab(page):
    page.locator(".lm-TabBar-tab", has_text=re.compile(r"^\s*data\s*$")).first.click()
    page.wait_for_selector(".dx-path input", state="visible", timeout=30_000)


def _labels(page):
    return page.evaluate("() => Array.from(document.querySelectorAll('.dx-data-set b')).map(b => b.textContent)")


def _load(page, path):
    page.fill(".dx-path input", str(path))
    page.locator("button.dx-load-data").click()
    page.wait_for_function("(name) => Array.from(document.querySelectorAll('.dx-data-set b'))"
                           ".some(b => b.textContent === name)", arg=Path(path).name, timeout=30_000)


def _remove(page, name):
    page.locator(".dx-data-set", has_text=name).locator("button.dx-remove-data").click()
    page.wait_for_function("(name) => !Array.from(document.querySelectorAll('.dx-data-set b'))"
                           ".some(b => b.textContent === name)", arg=name, timeout=30_000)


def test_point_colours_follow_loads_and_removals(served, files):
    from playwright.sync_api import sync_playwright

    folder, first, second = files
    OUT.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            page.goto(served, timeout=120_000)
            page.wait_for_function("() => document.querySelectorAll('.dx-fig-vis2 g.curve path.line').length > 2",
                                   timeout=120_000)
            _check_colours(page, [first], "opened on the first file")
            # The page got the kernel voila preheated before the request, and that kernel
            # read the data handed over in DISKEXPLORER_DATA (the colours above are theirs).
            assert "Using pre-heated kernel" in (folder / "voila.log").read_text(errors="replace")
            # the data given on the command line, nothing of the sample
            chi2 = page.inner_text(".dx-chi2")
            assert "photometry" not in chi2 and "spectrum" not in chi2
            _open_data_tab(page)
            assert _labels(page) == [first.name]

            _load(page, second)
            _check_colours(page, [first, second], "second file added")
            page.screenshot(path=str(OUT / "data_two_files.png"), full_page=True)

            _remove(page, first.name)
            _check_colours(page, [second], "first file removed")
            page.screenshot(path=str(OUT / "data_second_only.png"), full_page=True)

            _load(page, first)
            _check_colours(page, [second, first], "first file loaded again")

            _remove(page, second.name)
            _check_colours(page, [first], "second file removed")
            assert _labels(page) == [first.name]
        finally:
            browser.close()
