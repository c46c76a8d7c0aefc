"""The normalised silicate band, van Boekel et al. 2005 (A&A 437, 189): F_norm = 1 + (F − F_c)/⟨F_c⟩."""
import numpy as np
import pytest

from diskexplorer import normalized_silicate_band
from diskexplorer.observables.spectrum import silicate_continuum


def test_constant_continuum_gives_ratio():
    # "For a constant continuum level it is identical to F/F_c" (CONFIRMED, CHECK_VALUES §9).
    lam = np.linspace(7.5, 13.5, 301)
    # a bump that vanishes in both continuum windows
    bump = np.where((lam > 8.3) & (lam < 12.7), np.sin(np.pi * (lam - 8.3) / 4.4) ** 2, 0.0)
    flux = 2.5 * (1.0 + 0.8 * bump)
    np.testing.assert_allclose(normalized_silicate_band(lam, flux), flux / 2.5, rtol=1e-12, atol=1e-12)


def test_linear_continuum_is_removed():
    lam = np.linspace(7.5, 13.5, 301)
    cont = 1.0 + 0.2 * (lam - 8.0)
    fnorm = normalized_silicate_band(lam, cont)
    np.testing.assert_allclose(fnorm, 1.0, atol=1e-12)
    np.testing.assert_allclose(silicate_continuum(lam, cont), cont, rtol=1e-12)


def test_band_peak_and_strength():
    lam = np.linspace(7.5, 13.5, 601)
    cont = 1.0 + 0.1 * (lam - 8.0)
    flux = cont + 1.5 * np.exp(-0.5 * ((lam - 9.7) / 0.95) ** 2)
    fnorm = normalized_silicate_band(lam, flux)
    assert lam[np.argmax(fnorm)] == pytest.approx(9.7, abs=0.05)


def test_missing_window_is_an_error():
    with pytest.raises(ValueError, match="continuum window 12.8–13.2"):
        normalized_silicate_band(np.linspace(7.5, 12.0, 50), np.ones(50))


# --- the band of a model -------------------------------------------------------------------

def _scenes():
    from diskexplorer.sample import demo_scene
    dusty = demo_scene()
    opaque = dusty.replace(rings=tuple(r.__class__(**{**r.__dict__, "dust": None}) for r in dusty.rings))
    return dusty, opaque


def test_dust_free_model_has_no_band():
    from diskexplorer.observables.spectrum import has_dust_opacity, model_silicate_band
    dusty, opaque = _scenes()
    lam = np.linspace(7.5, 13.5, 121)
    assert has_dust_opacity(dusty) and not has_dust_opacity(opaque)
    assert model_silicate_band(opaque, lam) is None
    assert model_silicate_band(dusty.replace(rings=()), lam) is None          # a bare photosphere
    # Why: the chord through the windows lies above a curved photosphere, which the
    # definition would show as an "absorption" of ~15 % (the issue saw ~13 %).
    star_only = dusty.replace(rings=())
    assert np.min(normalized_silicate_band(lam, star_only.sed(lam))) < 0.9


def test_disabled_dusty_rings_make_no_band():
    from diskexplorer.observables.spectrum import model_silicate_band
    dusty, _ = _scenes()
    off = dusty.replace(rings=tuple(r.__class__(**{**r.__dict__, "enabled": False}) for r in dusty.rings))
    assert model_silicate_band(off, np.linspace(7.5, 13.5, 61)) is None


def test_dusty_model_band_is_the_documented_definition():
    from diskexplorer.observables.spectrum import model_silicate_band
    dusty, _ = _scenes()
    lam = np.linspace(7.5, 13.5, 121)
    flux = dusty.sed(lam)
    np.testing.assert_array_equal(model_silicate_band(dusty, lam), normalized_silicate_band(lam, flux))
    np.testing.assert_array_equal(model_silicate_band(dusty, lam, flux=flux), normalized_silicate_band(lam, flux))
    assert np.max(model_silicate_band(dusty, lam)) > 1.1
    with pytest.raises(ValueError, match="continuum window"):
        model_silicate_band(dusty, np.linspace(7.5, 12.0, 40))
