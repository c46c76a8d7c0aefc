"""Correction of fluxes for interstellar extinction with the ``dust_extinction`` package.

The package is imported only when a correction is asked for, so the rest of the data
layer works without it.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from ..errors import DataError

__all__ = ["deredden"]


def deredden(ds: xr.Dataset, a_v: float, *, r_v: float = 3.1, model: str = "G23") -> xr.Dataset:
    """Return a copy of a flux dataset corrected for interstellar extinction.

    Parameters
    ----------
    ds : xarray.Dataset
        With ``wavelength`` (µm), ``flux`` and optionally ``flux_err`` (Jy).
    a_v : float
        Visual extinction A_V, mag (>= 0).
    r_v : float
        Total-to-selective extinction ratio R_V.
    model : str
        Name of an R_V-dependent average curve in ``dust_extinction.parameter_averages``
        (default ``G23``: Gordon et al. 2023, valid 0.0912–32 µm).

    Returns
    -------
    xarray.Dataset
        ``flux`` and ``flux_err`` divided by the fractional transmission
        10**(-0.4 A_λ); attributes ``a_v``, ``r_v`` and ``extinction_model`` record the
        correction.

    Raises
    ------
    DataError
        Negative A_V, an unknown model, or wavelengths outside the model's range.
    ImportError
        If ``dust_extinction`` is not installed.
    """
    if not np.isfinite(a_v) or a_v < 0:
        raise DataError(f"A_V must be finite and >= 0, got {a_v!r}")
    if a_v == 0:
        return ds.copy()
    try:
        # Deferred: dust_extinction pulls in astropy.modeling, only needed here.
        from dust_extinction import parameter_averages
    except ImportError as exc:  # pragma: no cover - depends on the environment
        raise ImportError("extinction correction needs the 'dust_extinction' package "
                          "(pip install dust-extinction)") from exc
    import astropy.units as u

    cls = getattr(parameter_averages, model, None)
    if cls is None:
        raise DataError(f"unknown extinction model {model!r} in dust_extinction.parameter_averages")
    curve = cls(Rv=r_v)
    wave = np.asarray(ds["wavelength"].values, dtype=float)
    x = 1.0 / wave
    lo, hi = curve.x_range
    outside = (x < lo) | (x > hi)
    if outside.any():
        raise DataError(f"extinction model {model} covers {1 / hi:.4g}-{1 / lo:.4g} um; wavelengths "
                        f"{wave[outside][:5].tolist()} um are outside it")
    transmission = np.asarray(curve.extinguish(wave * u.um, Av=a_v), dtype=float)
    out = ds.copy()
    out["flux"] = ds["flux"] / transmission
    if "flux_err" in ds:
        out["flux_err"] = ds["flux_err"] / transmission
    for name in ("flux", "flux_err"):
        if name in out:
            out[name].attrs = dict(ds[name].attrs)
    out.attrs.update(a_v=float(a_v), r_v=float(r_v), extinction_model=model)
    return out
