"""A wide-band night file (four INSNAMEs, split polarisations, a fringe-tracker table,
VISREFMAP, per-telescope OI_FLUX), written by the project's own
writer (diskexplorer.testing.make_wide_night), read and judged as a user would.

Counts are checked against astropy reading the same file directly (the OIFITS tables and
their FLAG columns, Duvert, Young & Hummel 2017, A&A 597, A8); the model that made the
data must give χ²/N ≈ 1 for every kind (noise drawn with the errors the file states).
The speed of such files is measured by benchmarks/bench_load.py and bench_app.py.
"""
import numpy as np
import pytest
from astropy.io import fits

from diskexplorer.data import read_oifits
from diskexplorer.fitting.comparison import Comparison
from diskexplorer.sample import demo_scene
from diskexplorer.testing import make_wide_night
from explorer_helpers import build_app, settle

TABLE_OF_KIND = {"vis2": ("OI_VIS2", "VIS2DATA"), "vis": ("OI_VIS", "VISAMP"), "t3": ("OI_T3", "T3PHI"),
                 "flux": ("OI_FLUX", "FLUXDATA")}


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    return make_wide_night(tmp_path_factory.mktemp("wide"), n_exposures=2, n_channels=60)


def astropy_counts(path, insname=None):
    """Unflagged cells per kind, straight from the FITS tables."""
    counts = dict.fromkeys(TABLE_OF_KIND, 0)
    with fits.open(path) as hdul:
        for hdu in hdul[1:]:
            for kind, (table, column) in TABLE_OF_KIND.items():
                if hdu.name == table and (insname is None or hdu.header["INSNAME"] == insname):
                    counts[kind] += int(np.sum(~np.asarray(hdu.data["FLAG"], bool)))
    return counts


def test_the_file_has_the_shape_of_today_s_products(night):
    with fits.open(night) as hdul:
        names = sorted({h.header.get("INSNAME") for h in hdul[1:] if h.name == "OI_WAVELENGTH"})
        assert names == ["SIMK-FT-P1", "SIMK-FT-P2", "SIMK-SC-P1", "SIMK-SC-P2"]
        science = next(h for h in hdul[1:] if h.name == "OI_WAVELENGTH" and h.header["INSNAME"] == "SIMK-SC-P1")
        assert len(science.data) == 60
        vis = next(h for h in hdul[1:] if h.name == "OI_VIS" and h.header["INSNAME"] == "SIMK-SC-P1")
        assert "VISREFMAP" in vis.columns.names and vis.header["PHITYP"].strip() == "differential"


def test_counts_equal_astropy_s(night):
    obs = read_oifits(night)
    assert obs.n_points() == astropy_counts(night)


def test_the_model_that_made_the_data_gives_chi2_per_point_near_one(night):
    result = Comparison(read_oifits(night)).compare(demo_scene())
    for kind in ("vis2", "t3phi", "t3amp", "visamp", "diffphi", "flux"):
        assert result.npoints[kind] > 500, kind
        # 1 ± 5σ of a χ² with N degrees of freedom (σ = sqrt(2/N)); common practice for a
        # consistency check, not a fit statistic.
        assert abs(result.chi2[kind] / result.npoints[kind] - 1.0) < 5.0 * np.sqrt(2.0 / result.npoints[kind]), kind


def test_the_explorer_judges_one_polarisation_when_asked(night):
    app = build_app([str(night)], demo_scene())
    settle(app)
    page = app.data_page
    assert list(page.instruments.options) == ["SIMK-FT-P1", "SIMK-FT-P2", "SIMK-SC-P1", "SIMK-SC-P2"]
    page.instruments.value = ("SIMK-SC-P1",)
    settle(app)
    judged = app.judgement()
    want = astropy_counts(night, "SIMK-SC-P1")
    assert judged.npoints["vis2"] == want["vis2"]
    assert judged.npoints["diffphi"] == want["vis"]
    assert judged.npoints["flux"] == want["flux"]
