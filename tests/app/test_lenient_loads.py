"""One file that does not conform neither blocks a folder nor stays unreadable by choice.

The non-conforming file is written with the project's writer (the invented sample's H/K
instrument plus a calibrated OI_FLUX in Jy) and then given two common defects: its OI_FLUX
data column carries the pre-standard name FLUX instead of FLUXDATA (OIFITS v2, Duvert et al.
2017, names it FLUXDATA) and an extra binary table that is not an OI table.
"""
import subprocess
import sys

import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.app.state.data_sets import read_data_sets
from diskexplorer.data import ObservationSet, write_oifits
from diskexplorer.errors import DataError
from diskexplorer.fitting import export_start, write_start
from diskexplorer.sample import STATIONS, demo_scene, simulate_observations
from explorer_helpers import make_app, settle


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("night_folder")
    scene = demo_scene()
    hk = simulate_observations(scene)["QT-HK"]
    wl = np.unique(hk.vis2["wavelength"].values)
    flux = ObservationSet.from_arrays(
        flux=dict(wavelength=wl, bandwidth=wl / 35.0, mjd=np.array([61000.2]), int_time=60.0,
                  flux=scene.sed(wl)[None, :], flux_err=0.05 * scene.sed(wl)[None, :], sta_index=np.array([1])),
        insname="QT-HK", arrname="QUARTET", target="Aurelis", stations=dict(STATIONS), diameter=1.8)
    good = d / "a_good_night.fits"
    write_oifits(good, hk)
    written = d / "b_old_pipeline.fits"
    write_oifits(written, ObservationSet.concat([hk, flux]))
    with fits.open(written) as hdul:
        for h in hdul:
            if h.name == "OI_FLUX":
                h.columns.change_name("FLUXDATA", "FLUX")
        extra = fits.BinTableHDU.from_columns([fits.Column(name="NOTE", format="20A", array=["seeing 0.8"])],
                                              name="PIPELINE_LOG")
        fits.HDUList([*hdul, extra]).writeto(d / "b_old_pipeline.fits", overwrite=True, checksum=True)
    return d


def test_a_folder_loads_every_readable_file_and_lists_the_refused_one(folder):
    sets, notes = read_data_sets([folder])
    assert [s.label for s in sets] == ["a_good_night.fits"]
    refused = [n for n in notes if n.startswith("refused: ")]
    assert len(refused) == 1 and "b_old_pipeline.fits" in refused[0] and "FLUXDATA" in refused[0]
    assert "lenient" in refused[0]


def test_lenient_reading_reads_what_conforms_and_lists_each_defect(folder):
    sets, notes = read_data_sets([folder], lenient=True)
    assert [s.label for s in sets] == ["a_good_night.fits", "b_old_pipeline.fits"]
    old = sets[1]
    assert old.data.n_points("flux") == np.unique(old.data.vis2["wavelength"].values).size
    assert np.all(old.data.flux["flux_unit"].values == "Jy")
    text = " | ".join(old.warnings)
    assert "pre-standard column FLUX" in text and "loaded anyway" in text
    assert not [n for n in notes if n.startswith("refused")]


def test_nothing_readable_is_refused_naming_each_file(folder):
    with pytest.raises(DataError, match="b_old_pipeline.fits"):
        read_data_sets([folder / "b_old_pipeline.fits"])


def test_the_explorer_opens_a_folder_with_a_bad_file_and_loads_it_leniently_by_choice(folder, tmp_path):
    app = make_app((demo_scene(), [str(folder)]), workdir=tmp_path)
    settle(app)
    assert [d.label for d in app.state.data_sets] == ["a_good_night.fits"]
    assert "refused: " in app.state.message and "b_old_pipeline.fits" in app.state.message
    page = app.data_page
    page.lenient.value = True
    page.path.value = str(folder / "b_old_pipeline.fits")
    page.load_button.click()
    settle(app)
    assert [d.label for d in app.state.data_sets] == ["a_good_night.fits", "b_old_pipeline.fits"]
    assert "flux" in app.judgement().chi2
    row = page.rows.children[1]
    assert "pre-standard column FLUX" in row.warnings.value


def test_evaluate_lenient(folder, tmp_path):
    start = write_start(tmp_path / "start.json",
                        export_start(demo_scene(), data={"oifits": [str(folder / "b_old_pipeline.fits")]}))
    run = [sys.executable, "-m", "diskexplorer.cli", "evaluate", str(start), "--formats", "png",
           "--image-wavelengths", "2.2", "--npix", "64"]
    strict = subprocess.run(run + ["--out", str(tmp_path / "strict")], capture_output=True, text=True, timeout=600)
    assert strict.returncode == 1 and "b_old_pipeline.fits" in strict.stderr
    lenient = subprocess.run(run + ["--out", str(tmp_path / "lenient"), "--lenient"], capture_output=True, text=True,
                             timeout=600)
    assert lenient.returncode == 0, lenient.stderr
    assert "pre-standard column FLUX" in lenient.stderr and ".py:" not in lenient.stderr
    assert "flux" in lenient.stdout
