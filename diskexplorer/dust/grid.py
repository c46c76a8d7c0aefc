"""The library's wavelength grid and the grain sizes it tabulates."""
from __future__ import annotations

import numpy as np

__all__ = ["library_wavelength_grid", "regular_wavelength_grid", "laboratory_nodes", "LIBRARY_SIZES",
           "LAB_NODE_RANGE", "GRID_DESCRIPTION"]

#: Grain radii (µm) tabulated for the Mie and DHS methods (CDE is size-independent).
LIBRARY_SIZES = (0.1, 0.3, 1.0, 1.5, 3.0, 5.0)

#: Wavelength range (µm) over which every tabulated wavelength of the species' optical
#: constants is a node of the library grid: κ is then exact there (to float32), peaks of
#: narrow laboratory bands included, where linear interpolation between regular nodes
#: flattened them by up to 19%.
LAB_NODE_RANGE = (2.0, 40.0)

_R = 240.0  # λ/Δλ of the logarithmic parts
_MIN_SEPARATION = 1e-5  # in ln λ: regular nodes closer than this to a laboratory node are left out
GRID_DESCRIPTION = ("0.3–100 µm: logarithmic (λ/Δλ ≈ 240) over 0.3–8 and 13–100 µm, "
                    "uniform 0.02 µm steps over 8–13 µm (the silicate band), joined over "
                    f"{LAB_NODE_RANGE[0]:g}–{LAB_NODE_RANGE[1]:g} µm by every wavelength tabulated "
                    "in the optical constants of the species built")


def regular_wavelength_grid():
    """The regular part of the library grid, in µm (strictly increasing, ~1500 points).

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


def laboratory_nodes(constants):
    """Tabulated wavelengths (µm) of optical constants inside :data:`LAB_NODE_RANGE`.

    Parameters
    ----------
    constants : iterable of OpticalConstants
        Every crystal axis of every species built.

    Returns
    -------
    ndarray
        Sorted unique wavelengths in µm.
    """
    lo, hi = LAB_NODE_RANGE
    parts = [np.asarray(oc.wavelength, dtype=float) for oc in constants]
    lam = np.unique(np.concatenate(parts)) if parts else np.empty(0)
    return lam[(lam >= lo) & (lam <= hi)]


def library_wavelength_grid(lab_wavelengths=()):
    """Wavelengths in µm of the κ library (strictly increasing).

    Parameters
    ----------
    lab_wavelengths : array_like, optional
        Laboratory wavelengths in µm (:func:`laboratory_nodes`) to add to the regular
        grid (:func:`regular_wavelength_grid`), exactly as tabulated. With the built-in
        species the union has about 5200 points.

    Notes
    -----
    κ is computed at each node from n, k interpolated in log λ, so at a tabulated
    wavelength it is κ of the measured n, k; linear interpolation of κ between nodes
    then never crosses a measured point (a band's peak or a kink of the data).
    """
    grid = regular_wavelength_grid()
    lab = np.unique(np.asarray(lab_wavelengths, dtype=float).ravel())
    if lab.size == 0:
        return grid
    # A regular node a hair from a laboratory one gives way to it: the laboratory value
    # stays exact, and the grid written with 7 significant digits (a κ table of
    # `diskexplorer species --add`) keeps strictly increasing wavelengths.
    i = np.clip(np.searchsorted(lab, grid), 1, lab.size - 1)
    near = np.minimum(np.abs(np.log(grid / lab[i - 1])), np.abs(np.log(grid / lab[i])))
    return np.union1d(grid[near >= _MIN_SEPARATION], lab)
