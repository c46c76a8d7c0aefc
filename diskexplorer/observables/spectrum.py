"""Spectral diagnostics: the normalised 10 µm silicate band."""
from __future__ import annotations

import numpy as np

__all__ = ["silicate_continuum", "normalized_silicate_band", "SILICATE_WINDOWS"]

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
