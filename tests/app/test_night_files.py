"""A night file with uncalibrated fluxes: the explorer judges only what is comparable, and says so."""
import subprocess
import sys

import pytest

from diskexplorer.fitting import export_start, write_start
from diskexplorer.sample import demo_scene
from diskexplorer.testing import make_uncalibrated_night
from explorer_helpers import make_app, settle


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    return make_uncalibrated_night(tmp_path_factory.mktemp("night"))


def test_the_explorer_leaves_the_uncalibrated_flux_out_and_says_so_everywhere(night, tmp_path):
    with_flux, without, n_flux = night
    app = make_app((demo_scene(), [str(with_flux)]), workdir=tmp_path)
    settle(app)
    only = make_app((demo_scene(), [str(without)]), workdir=tmp_path)
    settle(only)
    # χ² holds the calibrated interferometry only
    assert app.judgement().total == pytest.approx(only.judgement().total, rel=1e-12)
    assert "flux" not in app.judgement().chi2
    # the message after opening, the χ² table and the data tab's row name it
    assert "not judged" in app.state.message and "CALSTAT 'U'" in app.state.message
    assert "not judged" in app.chi2.widget.value and "night_uncalibrated_flux.fits" in app.chi2.widget.value
    (row,) = app.data_page.rows.children
    assert "not judged" in row.warnings.value and f"{n_flux}" in row.warnings.value
    # loading it from the data tab says it too
    fresh = make_app((demo_scene(), []), workdir=tmp_path)
    fresh.data_page.path.value = str(with_flux)
    fresh.data_page.load_button.click()
    assert "loaded OIFITS" in fresh.state.message and "not judged" in fresh.state.message


def test_evaluate_says_what_it_leaves_out(night, tmp_path):
    start = write_start(tmp_path / "start.json", export_start(demo_scene(), data={"oifits": [str(night[0])]}))
    proc = subprocess.run([sys.executable, "-m", "diskexplorer.cli", "evaluate", str(start), "--out",
                           str(tmp_path / "out"), "--formats", "png", "--image-wavelengths", "2.2", "--npix", "64"],
                          capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    lines = [line for line in proc.stdout.splitlines() if "not judged" in line]
    assert lines and all("night_uncalibrated_flux.fits" in line and "CALSTAT 'U'" in line for line in lines)
    # the χ² table has rows for the judged kinds and none for OI_FLUX
    kinds = [line.split()[0] for line in proc.stdout.splitlines()
             if line.split() and line.split()[0] in ("vis2", "t3phi", "t3amp", "flux", "total")]
    assert "vis2" in kinds and "total" in kinds and "flux" not in kinds
