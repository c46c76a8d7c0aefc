"""A calibrated night file with a calibrator beside the science target: one target is judged.

Written with the project's writer for the invented sample star (CATEGORY 'SCI') and an
invented calibrator (CATEGORY 'CAL'), plus an uncalibrated OI_FLUX of the science target;
OIFITS v2 (Duvert et al. 2017) defines OI_TARGET's CATEGORY values.
"""
import subprocess
import sys

import numpy as np
import pytest

from diskexplorer.data import ObservationSet, read_oifits, write_oifits
from diskexplorer.data.targets import choose_target, target_points
from diskexplorer.errors import DataError
from diskexplorer.fitting import Comparison, export_start, write_start
from diskexplorer.sample import STATIONS, demo_scene, simulate_observations
from diskexplorer.testing import make_uncalibrated_night
from explorer_helpers import make_app, settle


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    folder = tmp_path_factory.mktemp("calibrated_night")
    science_file, only_science, _ = make_uncalibrated_night(folder / "parts")
    science = read_oifits(science_file)
    science.targets["Aurelis"]["category"] = "SCI"
    # The calibrator: a 0.9 mas uniform disk, unresolved enough, observed like the target.
    hk = simulate_observations(demo_scene())["QT-HK"]
    u, v, wl = hk.vis2["u"].values, hk.vis2["v"].values, hk.vis2["wavelength"].values
    from scipy.special import j1
    x = np.pi * 0.9 * 4.848e-9 * np.hypot(u, v) / (wl * 1e-6)
    cal_v2 = (2 * j1(x) / x) ** 2
    cal = ObservationSet.from_arrays(
        vis2=dict(u=u, v=v, wavelength=wl, bandwidth=hk.vis2["bandwidth"].values, vis2=cal_v2,
                  vis2_err=np.full(cal_v2.shape, 0.01), mjd=hk.vis2["mjd"].values + 0.02,
                  sta_index1=hk.vis2["sta_index1"].values, sta_index2=hk.vis2["sta_index2"].values),
        insname="QT-HK", arrname="QUARTET", target="CAL-Vesper", stations=dict(STATIONS), diameter=1.8,
        target_info={"category": "CAL"})
    path = folder / "night_with_calibrator.fits"
    write_oifits(path, ObservationSet.concat([science, cal]))
    return path, only_science


def test_the_science_target_is_chosen_and_the_calibrator_named(night):
    obs = read_oifits(night[0])
    targets = {t["name"]: t for t in target_points(obs)}
    assert targets["Aurelis"]["category"] == "SCI" and targets["CAL-Vesper"]["category"] == "CAL"
    assert choose_target(obs) == ("Aurelis", "the science target (OI_TARGET CATEGORY 'SCI')")
    assert choose_target(obs, "cal-vesper") == ("CAL-Vesper", "chosen")
    with pytest.raises(DataError, match="'NOBODY' is not in the data; targets: Aurelis"):
        choose_target(obs, "NOBODY")


def test_the_explorer_judges_only_the_science_targets_calibrated_data_and_says_so(night, tmp_path):
    path, only_science = night
    app = make_app((demo_scene(), [str(path)]), workdir=tmp_path)
    settle(app)
    reference = Comparison(read_oifits(only_science)).compare(demo_scene())
    result = app.judgement()
    assert result.total == pytest.approx(reference.total, rel=1e-12)
    assert result.npoints == reference.npoints
    table = app.chi2.widget.value
    assert "CAL-Vesper" in table and "only &#x27;Aurelis&#x27; is judged" in table and "CALSTAT" in table
    page = app.data_page
    assert page.target.layout.display != "none" and page.target.value == ""
    assert "automatic: Aurelis (the science target" in page.target.options[0][0]
    # choosing the calibrator judges it instead, and a session keeps the choice
    page.target.value = "CAL-Vesper"
    settle(app)
    assert app.view.target == "CAL-Vesper" and app.judgement().npoints["vis2"] == reference.npoints["vis2"]
    box = app.session_box
    box.path.value = "night.json"
    assert box.save()
    again = make_app((demo_scene(), []), workdir=tmp_path)
    again.session_box.path.value = "night.json"
    assert again.session_box.restore(), again.state.message
    settle(again)
    assert again.state.target == "CAL-Vesper" and again.view.target == "CAL-Vesper"


def test_evaluate_chooses_the_science_target_or_the_one_named(night, tmp_path):
    start = write_start(tmp_path / "start.json", export_start(demo_scene(), data={"oifits": [str(night[0])]}))
    run = [sys.executable, "-m", "diskexplorer.cli", "evaluate", str(start), "--formats", "png",
           "--image-wavelengths", "2.2", "--npix", "64"]
    auto = subprocess.run(run + ["--out", str(tmp_path / "auto")], capture_output=True, text=True, timeout=600)
    assert auto.returncode == 0, auto.stderr
    assert "judging the target Aurelis (the science target" in auto.stdout
    assert "CAL-Vesper" in auto.stdout and "not judged" in auto.stdout
    named = subprocess.run(run + ["--out", str(tmp_path / "named"), "--target", "CAL-Vesper"], capture_output=True,
                           text=True, timeout=600)
    assert named.returncode == 0, named.stderr
    # the named target's 720 calibrator V² alone are judged, and the output says whose
    assert "judging the target CAL-Vesper (chosen)" in named.stdout and "not judged" not in named.stdout
    vis2_row = next(line for line in named.stdout.splitlines() if line.startswith("vis2"))
    assert " 720 " in f" {vis2_row} "
