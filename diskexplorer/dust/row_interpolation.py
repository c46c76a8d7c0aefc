"""κ at any wavelength from a row on the library grid.

Inside the grid κ is linear in log λ between nodes; outside it continues as a power law
whose slope is taken over the first or last 10% (in λ) of the grid. Used by mixtures
(:class:`diskexplorer.dust.DustMix`) and by :func:`diskexplorer.dust.species_kappa`, so
that both read a row the same way without importing each other.
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import DustError

__all__ = ["SLOPE_SPAN", "end_slopes", "interpolate_row"]

#: Span in ln λ over which the end slopes are measured: the last 10% of the grid, not
#: its last interval, so grid-scale noise (or a close pair of nodes) does not set them.
SLOPE_SPAN = math.log(1.1)


def end_slopes(loglam, row):
    """d ln κ / d ln λ over the first and last 10% of the grid (0 where undefined).

    Parameters
    ----------
    loglam : ndarray
        ln of the grid wavelengths (µm), strictly increasing.
    row : ndarray
        κ_abs (cm² g⁻¹) at the grid wavelengths.

    Returns
    -------
    (float, float)
        Slopes at the short and the long end.
    """
    i_lo = int(np.searchsorted(loglam, loglam[0] + SLOPE_SPAN))
    i_hi = int(np.searchsorted(loglam, loglam[-1] - SLOPE_SPAN))
    with np.errstate(divide="ignore", invalid="ignore"):
        s_lo = math.log(row[i_lo] / row[0]) / (loglam[i_lo] - loglam[0]) if row[i_lo] > 0 < row[0] else 0.0
        s_hi = math.log(row[-1] / row[i_hi]) / (loglam[-1] - loglam[i_hi]) if row[-1] > 0 < row[i_hi] else 0.0
    return (s_lo if math.isfinite(s_lo) else 0.0, s_hi if math.isfinite(s_hi) else 0.0)


def interpolate_row(row, loglam, slopes, wavelength, label):
    """κ_abs (cm² g⁻¹) at ``wavelength`` (µm) from a row on the grid.

    Parameters
    ----------
    row : ndarray
        κ_abs on the grid; NaN where a user species' data do not reach.
    loglam : ndarray
        ln of the grid wavelengths (µm).
    slopes : (float, float)
        :func:`end_slopes` of ``row``.
    wavelength : array_like
        Wavelengths in µm.
    label : str
        Names the opacity in error messages.

    Raises
    ------
    DustError
        Non-positive or non-finite wavelengths, or wavelengths where the row is NaN.
    """
    s_lo, s_hi = slopes
    lam = np.asarray(wavelength, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log(lam)
    if not np.all(np.isfinite(x)):
        raise DustError(f"{label}: wavelengths must be finite and > 0 µm")
    k = np.interp(x, loglam, row)
    lo = x < loglam[0]
    hi = x > loglam[-1]
    if lo.any():
        k = np.where(lo, row[0] * np.exp(s_lo * (x - loglam[0])), k)
    if hi.any():
        k = np.where(hi, row[-1] * np.exp(s_hi * (x - loglam[-1])), k)
    if np.isnan(k).any():
        raise DustError(f"{label}: a user species' optical constants do not cover the "
                        "requested wavelengths (κ undefined there)")
    return k
