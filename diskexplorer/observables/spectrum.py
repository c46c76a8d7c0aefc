"""Spectral diagnostics: the normalised 10 µm silicate band, of a spectrum and of a model.

A model without any dust opacity (a photosphere, opaque black-body rings, the resolved
component) has no silicate band; its normalised spectrum is not flat all the same,
because the linear continuum through the two windows is a chord of curved Planck
spectra (a Rayleigh-Jeans photosphere, F ∝ λ⁻², lies ~16 % below the chord at
10.5 µm). :func:`model_silicate_band` therefore answers ``None`` for such a model, with
:data:`NO_DUST_BAND` saying why, instead of showing that curvature as an absorption band.
For models with dust the definition F_norm = 1 + (F − F_c)/⟨F_c⟩ applies unchanged.
"""
from __future__ import annotations

import numpy as np

__all__ = ["silicate_continuum", "normalized_silicate_band", "SILICATE_WINDOWS", "has_dust_opacity",
           "model_silicate_band", "NO_DUST_BAND"]

#: What figures and reports say instead of drawing the band of a model without dust.
NO_DUST_BAND = "no dust opacity in the model: no silicate band"

# Continuum windows either side of the band (µm): where silicate emission is weakest
# and the band edges start (common practice: anchor points near 8 and 13 µm).
SILICATE_WINDOWS = ((7.8, 8.2), (12.8, 13.2))


def silicate_continuum(wavelength, flux, windows=SILICATE_WINDOWS):
    """Linear continuum through the mean flux of two windows.

    Parameters
    ----------
    wavelength : array_like
        Wavelengths in µm (any order).
    flux : array_like
        Flux density (any unit), same shape.
    windows : ((float, float), (float, float))
        Short- and long-wavelength continuum windows in µm.

    Returns
    -------
    ndarray
        Continuum F_c at ``wavelength``.

    Raises
    ------
    ValueError
        If a window holds no sample.
    """
    lam = np.asarray(wavelength, float)
    f = np.asarray(flux, float)
    anchors = []
    for lo, hi in windows:
        sel = (lam >= lo) & (lam <= hi) & np.isfinite(f)
        if not np.any(sel):
            raise ValueError(f"no spectrum sample in the continuum window {lo}–{hi} µm")
        anchors.append((lam[sel].mean(), f[sel].mean()))
    (x0, y0), (x1, y1) = anchors
    return y0 + (y1 - y0) * (lam - x0) / (x1 - x0)


def normalized_silicate_band(wavelength, flux, windows=SILICATE_WINDOWS):
    """Normalised band F_norm = 1 + (F − F_c)/⟨F_c⟩.

    Notes
    -----
    F_c is the linear continuum of :func:`silicate_continuum`; ⟨F_c⟩ is its mean over
    the input samples between the two windows' centres (on the input's own λ grid).
    For a constant continuum this is F/F_c (van Boekel et al. 2005, A&A 437, 189).
    """
    lam = np.asarray(wavelength, float)
    f = np.asarray(flux, float)
    fc = silicate_continuum(lam, f, windows)
    lo = 0.5 * sum(windows[0])
    hi = 0.5 * sum(windows[1])
    band = (lam >= lo) & (lam <= hi)
    mean_c = fc[band].mean() if np.any(band) else fc.mean()
    return 1.0 + (f - fc) / mean_c


def has_dust_opacity(scene):
    """Whether any enabled ring of ``scene`` has a dust opacity (``dust`` not ``None``).

    Opaque rings (``dust=None``), the star and the resolved component emit Planck-like
    spectra without features; only a ring with an opacity can make a silicate band.
    """
    return any(ring.enabled and ring.dust is not None for ring in scene.rings)


def model_silicate_band(scene, wavelength, flux=None, windows=SILICATE_WINDOWS):
    """Normalised silicate band of a model scene, or ``None`` if it has no dust opacity.

    Parameters
    ----------
    scene : Scene
        The model.
    wavelength : array_like
        Wavelengths in µm; must sample both continuum windows.
    flux : array_like, optional
        The scene's total flux density at ``wavelength`` (any unit) if already
        computed; otherwise ``scene.sed(wavelength)`` (Jy).
    windows : ((float, float), (float, float))
        Continuum windows in µm.

    Returns
    -------
    ndarray or None
        :func:`normalized_silicate_band` of the model's total flux; ``None`` when
        :func:`has_dust_opacity` is false (see the module notes and :data:`NO_DUST_BAND`).

    Raises
    ------
    ValueError
        If a continuum window holds no sample (dusty models only).
    """
    if not has_dust_opacity(scene):
        return None
    lam = np.asarray(wavelength, float)
    f = scene.sed(lam) if flux is None else np.asarray(flux, float)
    return normalized_silicate_band(lam, f, windows)
