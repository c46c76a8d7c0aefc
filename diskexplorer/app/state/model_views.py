"""Model quantities the figures draw beyond the comparison: curves, profiles, images.

Headless (no widget imports): the explorer calls these from its recomputation and the
benchmark times them directly.
"""
from __future__ import annotations

import math

import numpy as np

from ...observables.image import model_image
from ...observables.profiles import radial_profiles
from ...observables.spectrum import normalized_silicate_band

__all__ = ["SED_WAVELENGTHS", "DEFAULT_SPECTRUM_WAVELENGTHS", "spectrum_wavelengths", "sed_curves", "vis2_curve", "profiles", "image", "silicate_band",
           "ring_outline"]

#: Wavelength grid of the model SED curves, µm (optical to far infrared).
SED_WAVELENGTHS = np.geomspace(0.3, 200.0, 180)


def sed_curves(scene, wavelength=SED_WAVELENGTHS):
    """SED components (Jy) of ``scene`` on ``wavelength`` (µm), as :meth:`Scene.sed_components`."""
    return scene.sed_components(wavelength)


def vis2_curve(scene, position_angle, freq_max, wavelengths, n=160):
    """V² along baselines at one position angle.

    Parameters
    ----------
    scene : Scene
    position_angle : float
        Baseline position angle, degrees east of north.
    freq_max : float
        Largest spatial frequency, Mλ.
    wavelengths : array_like
        One curve per wavelength, µm.
    n : int
        Samples per curve.

    Returns
    -------
    freq : ndarray (n,)
        Spatial frequency B/λ in Mλ.
    vis2 : ndarray (len(wavelengths), n)
    """
    freq = np.linspace(0.0, 1.05 * freq_max, n)
    lam = np.asarray(wavelengths, float)[:, None]
    baseline = freq[None, :] * lam          # m, since Mλ × µm = m
    pa = math.radians(position_angle)
    u, v = baseline * math.sin(pa), baseline * math.cos(pa)
    return freq, scene.vis2(u, v, np.broadcast_to(lam, u.shape))


def profiles(scene, wavelength):
    """Radial temperature, 10 µm optical depth and brightness at ``wavelength`` (µm)."""
    return radial_profiles(scene, wavelength=wavelength, npoints=240)


def image(scene, wavelength, npix=96):
    """Model image at ``wavelength`` (µm), ``npix`` per side, as :func:`model_image`."""
    return model_image(scene, wavelength, npix=npix, supersample=2)


def silicate_band(wavelength, flux):
    """Normalised silicate band, or None when the spectrum misses a continuum window."""
    try:
        return normalized_silicate_band(wavelength, flux)
    except ValueError:
        return None


def ring_outline(radius_mas, inclination, position_angle, n=120):
    """Sky outline of a circle of ``radius_mas`` in the disk plane.

    Returns (x, y) in mas, x towards East and y towards North (the inverse of the disk-frame
    projection used by :func:`~diskexplorer.observables.image.model_image`).
    """
    phi = np.linspace(0.0, 2.0 * math.pi, n)
    along = radius_mas * np.cos(phi)
    across = radius_mas * np.sin(phi) * math.cos(math.radians(inclination))
    pa = math.radians(position_angle)
    return along * math.sin(pa) + across * math.cos(pa), along * math.cos(pa) - across * math.sin(pa)


#: Wavelengths (µm) of the model spectrum without a loaded spectrum: the N band.
DEFAULT_SPECTRUM_WAVELENGTHS = np.linspace(7.6, 13.4, 120)


def spectrum_wavelengths(view):
    """Wavelengths (µm) at which the model spectrum is drawn: the loaded spectrum's, else the default."""
    sp = view.spectrum if view is not None else None
    if sp is None or sp["wavelength"].size == 0:
        return DEFAULT_SPECTRUM_WAVELENGTHS
    return sp["wavelength"].values
