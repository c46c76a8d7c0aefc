"""The library's wavelength grid and the grain sizes it tabulates."""
from __future__ import annotations

import numpy as np

__all__ = ["library_wavelength_grid", "LIBRARY_SIZES", "GRID_DESCRIPTION"]

#: Grain radii (µm) tabulated for the Mie and DHS methods (CDE is size-independent).
LIBRARY_SIZES = (0.1, 0.3, 1.0, 1.5, 3.0, 5.0)

_R = 240.0  # λ/Δλ of the logarithmic parts
GRID_DESCRIPTION = ("0.3–100 µm: logarithmic (λ/Δλ ≈ 240) over 0.3–8 and 13–100 µm, "
                    "uniform 0.02 µm steps over 8–13 µm (the silicate band)")


def library_wavelength_grid():
    """Wavelengths in µm of the κ library (strictly increasing, ~1400 points).

    0.3–8 µm and 13–100 µm logarithmic with d ln λ = 1/240; 8–13 µm in steps of
    0.02 µm, where the silicate bands need the resolution.
    """
    lo = np.exp(np.arange(np.log(0.3), np.log(8.0), 1.0 / _R))
    band = np.round(np.arange(8.0, 13.0 + 1e-9, 0.02), 10)
    hi = np.exp(np.arange(np.log(13.0), np.log(100.0), 1.0 / _R))[1:]
    hi = hi[hi < 100.0 * np.exp(-0.5 / _R)]  # no sliver interval before the end point
    grid = np.concatenate([lo[lo < 8.0 - 1e-9], band, hi, [100.0]])
    grid = grid[np.concatenate([[True], np.diff(grid) > 1e-9])]
    return grid
