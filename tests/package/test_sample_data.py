"""The committed demo data: the true scene reproduces them within the noise."""
import numpy as np
import pytest

from diskexplorer.fitting import Comparison
from diskexplorer.sample import demo_scene, load_sample_data, write_sample_data


@pytest.fixture(scope="module")
def sample():
    return load_sample_data()


def test_sample_data_fit_the_true_scene_within_the_noise(sample):
    result = Comparison(sample["observations"], sample["photometry"], sample["spectrum"]).compare(demo_scene())
    for kind in ("vis2", "t3phi", "corrflux", "diffphi", "photometry", "spectrum"):
        n = result.npoints[kind]
        # χ²/N of Gaussian noise: 1 ± sqrt(2/N); allow 5σ
        assert abs(result.chi2[kind] / n - 1.0) < 5 * np.sqrt(2.0 / n) + 0.05, (kind, result.chi2[kind] / n)


def test_sample_data_shape(sample):
    obs = sample["observations"]
    assert obs.instruments == ("QT-HK", "QT-LM", "QT-N")
    assert obs.target_names == ("Aurelis",)
    base = np.hypot(obs.vis2["u"], obs.vis2["v"])
    assert 8 < float(base.min()) and float(base.max()) < 135
    assert obs.n_points("vis2") == 7920 and obs.n_points("t3") == 5280
    # N and L/M carry correlated fluxes and differential phases against all channels of a row
    vis = obs.vis
    assert obs.n_points("vis") == 7200
    assert set(vis["amptyp"].values) == {"correlated flux"} and set(vis["phityp"].values) == {"differential"}
    assert sorted(set(vis["insname"].values)) == ["QT-LM", "QT-N"]
    assert np.isfinite(vis["ref_wavelength"].values).sum(axis=1).max() == 60
    # channels of resolving power 30-35 (EFF_BAND = λ/R)
    resolution = obs.vis2["wavelength"].values / obs.vis2["bandwidth"].values
    assert 29.9 < resolution.min() and resolution.max() < 35.1
    n_band = obs.select_instrument("QT-N").vis2["wavelength"]
    assert 7.9 < float(n_band.min()) and float(n_band.max()) < 13.1


def test_regeneration_is_deterministic_and_refuses_to_overwrite(tmp_path, sample):
    write_sample_data(tmp_path / "a", progress=lambda s: None)
    write_sample_data(tmp_path / "b", progress=lambda s: None)
    a, b = load_sample_data(tmp_path / "a"), load_sample_data(tmp_path / "b")
    pairs = [(a["observations"].vis2["vis2"].values, b["observations"].vis2["vis2"].values,
              sample["observations"].vis2["vis2"].values),
             (a["observations"].t3["t3phi"].values, b["observations"].t3["t3phi"].values,
              sample["observations"].t3["t3phi"].values),
             (a["observations"].vis["visphi"].values, b["observations"].vis["visphi"].values,
              sample["observations"].vis["visphi"].values),
             (a["spectrum"]["flux"].values, b["spectrum"]["flux"].values, sample["spectrum"]["flux"].values)]
    for first, second, committed in pairs:
        # the same machine regenerates bit for bit ...
        np.testing.assert_array_equal(first, second)
        # ... and any machine the committed files up to rounding (CPUs differ in the last
        # bits of their vectorised exp and Bessel functions)
        np.testing.assert_allclose(first, committed, rtol=1e-11, atol=1e-13)
    with pytest.raises(FileExistsError, match="refusing to overwrite"):
        write_sample_data(tmp_path / "a", progress=lambda s: None)


def test_phase_errors_follow_the_coherent_flux(sample):
    # Real pipelines give phases of a weak coherent flux large errors (σ_φ ≈ σ_F/|F| rad);
    # the sample's differential phases do so, as its closure phases do.
    from scipy.stats import spearmanr

    obs = sample["observations"]
    for insname in ("QT-LM", "QT-N"):
        vis = obs.select_instrument(insname).vis
        amp, phi_err = vis["visamp"].values.ravel(), vis["visphi_err"].values.ravel()
        ok = np.isfinite(amp) & np.isfinite(phi_err)
        amp, phi_err = amp[ok], phi_err[ok]
        # the weaker the correlated flux, the larger the phase error (σ_φ falls as |F| rises)
        assert spearmanr(amp, phi_err).statistic < -0.9, insname
        weak, strong = amp < np.percentile(amp, 5), amp > np.percentile(amp, 50)
        assert np.median(phi_err[weak]) > np.median(phi_err[strong]), insname
    # L/M has correlated fluxes near nulls: their phases are nearly unknown there
    lm = obs.select_instrument("QT-LM").vis
    assert np.nanmax(lm["visphi_err"].values) > 30.0
    phi_err = obs.vis["visphi_err"].values
    phi_err = phi_err[np.isfinite(phi_err)]
    assert phi_err.min() >= 0.7 - 1e-9 and phi_err.max() <= 90.0


def test_a_small_temperature_step_moves_every_reduced_chi2_by_little(sample):
    # A 5 K step of the inner rim is well inside what the data allow; with phase errors
    # that ignored the coherent flux, four phases near nulls flipped by ~180° and the
    # differential-phase χ²/N jumped from 1.0 to 15.9.
    comparison = Comparison(sample["observations"], sample["photometry"], sample["spectrum"])
    scene = demo_scene()
    base = comparison.compare(scene)
    for step in (-5.0, 5.0):
        moved = comparison.compare(scene.with_ring(0, t_in=scene.rings[0].t_in + step))
        for kind, n in base.npoints.items():
            if n:
                change = abs(moved.chi2[kind] - base.chi2[kind]) / n
                assert change < 0.3, (kind, step, change)
