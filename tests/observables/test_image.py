"""Model images: their 2-D FFT agrees with the engine; profiles and outlines make sense."""

import numpy as np
import pytest

from diskexplorer import PowerLawOpacity, Ring, Scene, Star, model_image, radial_profiles
from diskexplorer.observables import image_visibility
from diskexplorer.physics.constants import RAD_PER_MAS


def scene_for_image():
    opacity = PowerLawOpacity(kappa_ref=2000.0, wavelength_ref=10.0, beta=1.0)
    rings = [Ring(r_in=0.35, r_out=0.9, t_in=1450.0, q=0.5, sigma_in=3e-3, dust=opacity),
             Ring(r_in=2.5, r_out=5.0, t_in=380.0, q=0.45, sigma_in=1e-2, p=0.5, dust=opacity,
                  c1=0.4, s1=-0.25)]
    # A point-like star: its 0.2 mas disk is not resolved by the image's pixels.
    return Scene(distance=100.0, star=Star(t_eff=7000.0, radius=2.0, uniform_disk=False), rings=rings,
                 inclination=35.0, position_angle=60.0)


def test_image_fft_agrees_with_engine():
    scene = scene_for_image()
    lam = 3.5
    img = model_image(scene, lam, npix=256, supersample=8)
    n = img.sizes["x"]
    pix = img.attrs["pixel_size_mas"] * RAD_PER_MAS
    # numpy's FFT of the centred image: exp(-2πi k j / N) with pixel npix//2 at the origin.
    ft = np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(img.values)))
    freqs = np.fft.fftshift(np.fft.fftfreq(n, d=pix))   # rad^-1; axis 1 is u (x East), axis 0 is v
    fu, fv = np.meshgrid(freqs, freqs)
    # Pixels hold flux integrated over their area, so the rings' transform is multiplied by the
    # pixel's box response sinc(u p) sinc(v p); the point-like star sits in one pixel and is not.
    f_star = float(scene.star.flux(lam, scene.distance))
    box = np.sinc(fu * pix) * np.sinc(fv * pix)
    vis_img = ((ft - f_star) / box + f_star) / img.values.sum()
    # resolvable frequencies: well inside the Nyquist limit, where the ring edges are resolved
    keep = np.hypot(fu, fv) < 0.15 / pix   # at least ~7 pixels per fringe period
    lam_m = lam * 1e-6
    vis_eng = scene.visibility(fu[keep] * lam_m, fv[keep] * lam_m, lam)
    assert np.max(np.abs(np.abs(vis_img[keep]) - np.abs(vis_eng))) < 1e-3
    # the phases agree too, which checks the orientation of x (East) and y (North)
    assert np.max(np.abs(vis_img[keep] - vis_eng)) < 1e-3
    # and the direct Fourier sum equals the FFT
    some = np.flatnonzero(keep.ravel())[:20]
    direct = image_visibility(img, fu.ravel()[some], fv.ravel()[some])
    np.testing.assert_allclose(direct, (ft / img.values.sum()).ravel()[some], atol=1e-10)


def test_image_total_flux_equals_sed():
    scene = scene_for_image()
    img = model_image(scene, 10.0, npix=200, supersample=8)
    assert float(img.sum()) == pytest.approx(float(scene.sed(10.0)), rel=2e-3)
    assert img.attrs["x_axis"] == "mas towards East"
    assert len(img.attrs["ring_edges_mas"]) == 2


def test_modulated_ring_is_brighter_on_the_side_of_its_angle():
    ring = Ring(r_in=1.0, r_out=1.5, t_in=800.0, q=0.0, dust=None, c1=0.9, s1=0.0)
    scene = Scene(distance=100.0, rings=[ring], inclination=0.0, position_angle=90.0)
    img = model_image(scene, 10.0, npix=101, supersample=2)
    # PA = 90°: the major axis points East; φ = 0 lies East, so the East side is brighter.
    east = float(img.where(img.x > 5).sum())
    west = float(img.where(img.x < -5).sum())
    assert east > 5 * west


def test_radial_profiles():
    scene = scene_for_image()
    prof = radial_profiles(scene, wavelength=10.0)
    t = prof.temperature.sel(ring=prof.ring[0]).values
    r = prof.radius.values
    inside = np.isfinite(t)
    np.testing.assert_allclose(t[inside], 1450.0 * (r[inside] / 0.35) ** -0.5)
    tau = prof.tau.isel(ring=1).values
    ok = np.isfinite(tau)
    np.testing.assert_allclose(tau[ok], 1e-2 * (r[ok] / 2.5) ** -0.5 * 2000.0)
    assert np.all(np.isnan(prof.intensity.isel(ring=0).values[r > 0.95]))
