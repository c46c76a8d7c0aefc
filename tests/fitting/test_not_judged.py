"""Night files: what cannot be compared in Jy is not compared in Jy, and every consumer says so.

The files are written with the project's own writer for an invented star and array (the
sample's): calibrated V² and closure phases, plus an OI_FLUX table left uncalibrated
(CALSTAT 'U', counts in ADU) as many pipelines deliver it, and OI_VIS amplitudes of
AMPTYP 'differential'. OIFITS v2 (Duvert et al. 2017, A&A 597, A8) defines CALSTAT 'C'
(calibrated) and 'U' (uncalibrated) and the AMPTYP values.
"""
import numpy as np
import pytest

from diskexplorer.data import ObservationSet, read_oifits
from diskexplorer.fitting import Comparison
from diskexplorer.fitting.not_judged import not_judged
from diskexplorer.sample import demo_scene
from diskexplorer.testing import make_uncalibrated_night


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    return make_uncalibrated_night(tmp_path_factory.mktemp("night"))


def test_an_uncalibrated_flux_is_read_in_its_own_unit_and_left_out_of_chi2(night):
    with_flux, without, n_flux = night
    obs = read_oifits(with_flux)
    assert set(obs.flux["flux_unit"].values) == {"adu"} and set(obs.flux["calstat"].values) == {"U"}
    comparison = Comparison(obs)
    assert "flux" not in comparison.kinds
    result = comparison.compare(demo_scene())
    reference = Comparison(read_oifits(without)).compare(demo_scene())
    # the total is exactly that of the interferometry alone: no ADU enters χ²
    assert result.total == pytest.approx(reference.total, rel=1e-12)
    assert result.n_total == reference.n_total
    (group,) = result.left_out
    assert (group.table, group.file, group.n) == ("OI_FLUX", "night_uncalibrated_flux.fits", n_flux)
    assert "CALSTAT 'U'" in group.reason and "'adu'" in group.reason and "not compared in Jy" in group.reason
    assert "not judged: night_uncalibrated_flux.fits" in result.summary()


def test_a_calibrated_flux_in_jy_is_judged(night):
    obs = read_oifits(night[0])
    flux = obs.flux.assign_coords(calstat=("point", np.full(obs.flux.sizes["point"], "C")),
                                  flux_unit=("point", np.full(obs.flux.sizes["point"], "Jy")))
    obs = ObservationSet(vis2=obs.vis2, t3=obs.t3, flux=flux, targets=obs.targets, arrays=obs.arrays,
                         files=obs.files)
    comparison = Comparison(obs)
    assert "flux" in comparison.kinds and comparison.left_out == ()


def test_visibility_amplitudes_of_another_amptyp_are_named():
    obs = ObservationSet.from_arrays(vis=dict(
        u=np.array([20.0, 40.0]), v=np.array([5.0, 0.0]), wavelength=np.array([3.5, 3.8]),
        visamp=np.full((2, 2), 1.02), visamp_err=np.full((2, 2), 0.01), visphi=np.zeros((2, 2)),
        visphi_err=np.ones((2, 2)), amptyp="differential", phityp="differential"), file="diffamp.fits")
    groups = not_judged(obs)
    assert [(g.table, g.file, g.n) for g in groups] == [("OI_VIS amplitudes", "diffamp.fits", 4)]
    assert "AMPTYP 'differential'" in groups[0].reason


def test_correlated_fluxes_in_counts_are_read_as_counts_and_not_judged(tmp_path):
    # An N-band file of the invented sample whose correlated fluxes are given in ADU.
    from astropy.io import fits

    from diskexplorer.sample import SAMPLE_FILES, sample_data_dir

    path = tmp_path / "counts.fits"
    with fits.open(sample_data_dir() / SAMPLE_FILES["oifits"][2]) as hdul:
        for h in hdul:
            if h.name == "OI_VIS":
                for k, name in enumerate(h.columns.names, start=1):
                    if name in ("VISAMP", "VISAMPERR"):
                        h.header[f"TUNIT{k}"] = "adu"
        hdul.writeto(path, checksum=True)   # a file written anew, with its own checksums
    with pytest.warns(UserWarning, match="not compared with the model"):
        obs = read_oifits(path)
    comparison = Comparison(obs)
    assert "corrflux" not in comparison.kinds and "diffphi" in comparison.kinds
    (group,) = comparison.left_out
    assert group.table == "OI_VIS amplitudes" and group.file == "counts.fits"
    assert "'adu'" in group.reason and "not compared in Jy" in group.reason


def test_flagged_points_kept_by_the_reader_are_shown_but_never_judged(tmp_path):
    # OIFITS: FLAG true marks a bad point (Duvert, Young & Hummel 2017, A&A 597, A8).
    from diskexplorer.data import read_oifits
    from diskexplorer.testing import make_oifits, synthetic_scene

    path = make_oifits(tmp_path, "flagged.fits", n_telescopes=4, n_exposures=2, n_channels=8,
                       flag_fraction=0.2, seed=3, diameter_mas=1.0)
    dropped = read_oifits(path)
    kept = read_oifits(path, keep_flagged=True)
    n_flagged = int(kept.vis2["flag"].values.sum())
    assert n_flagged > 0 and kept.n_points("vis2") == dropped.n_points("vis2") + n_flagged
    kept.vis2["vis2"].values[kept.vis2["flag"].values] = 1e300   # what a flagged point may hold
    scene = synthetic_scene()
    a, b = Comparison(dropped).compare(scene), Comparison(kept).compare(scene)
    assert b.chi2 == pytest.approx(a.chi2, rel=1e-12) and b.npoints == a.npoints
    groups = [g for g in Comparison(kept).left_out if "FLAG" in g.reason and g.table == "OI_VIS2"]
    assert sum(g.n for g in groups) == n_flagged


def test_baselines_beyond_the_engine_s_reach_are_refused_by_file_and_table(tmp_path):
    from diskexplorer.data import read_oifits
    from diskexplorer.errors import DataError
    from diskexplorer.fitting.comparison import MAX_SPATIAL_FREQUENCY
    from diskexplorer.testing import make_oifits

    path = make_oifits(tmp_path, "kilometre.fits", n_telescopes=3, n_exposures=1, n_channels=4, band="H")
    obs = read_oifits(path)
    Comparison(obs)   # metres-long baselines: fine
    far = obs.vis2.copy(deep=True)
    far["u"].values[:] = 5000.0   # 5 km at 1.6 µm: 3·10⁹ rad⁻¹
    assert np.max(far["u"].values / (far["wavelength"].values * 1e-6)) > MAX_SPATIAL_FREQUENCY
    with pytest.raises(DataError, match=r"kilometre\.fits: OI_VIS2: \d+ point\(s\) at a spatial frequency"):
        Comparison(ObservationSet(vis2=far, targets=obs.targets, arrays=obs.arrays))
