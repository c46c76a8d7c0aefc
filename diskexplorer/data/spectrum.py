"""Read spectra (CSV/ASCII text or FITS tables) into an xarray Dataset in µm and Jy.

Text files: a header line naming the columns with their units, e.g.
``wavelength [um], flux [Jy], error [Jy]`` (comma, tab, semicolon or whitespace
separated; ``#`` comment lines), or no header and the units passed as arguments.
FITS files: the first binary table with a wavelength column (WAVELENGTH, WAVE, LAMBDA)
and a flux column (FLUX, FLUX_DENSITY, FLUXDATA); units from TUNIT or the arguments.
One-row tables with array columns (a common layout) are flattened.
"""

from __future__ import annotations

import io

import os

import numpy as np
import xarray as xr
from astropy import units as u
from astropy.io import fits

from ..errors import DataError
from .oifits_validate import looks_like_fits
from .text_tables import parse_float, read_text_table

__all__ = ["read_spectrum", "spectrum_dataset"]

_WAVE_NAMES = ("wavelength", "wave", "lambda", "wavelength_um", "wl")
_FLUX_NAMES = ("flux", "flux_density", "fluxdata", "fnu", "f_nu", "flambda", "f_lambda")
_ERR_NAMES = ("error", "err", "flux_err", "flux_error", "uncertainty", "sigma", "fluxerr")


def spectrum_dataset(wavelength, flux, flux_err=None, *, attrs=None) -> xr.Dataset:
    """Assemble a spectrum dataset, sorted by wavelength.

    Parameters
    ----------
    wavelength : array_like
        µm, all distinct.
    flux, flux_err : array_like
        Jy (``flux_err`` NaN when unknown).

    Returns
    -------
    xarray.Dataset
        Dimension and coordinate ``wavelength`` (µm, ascending); variables ``flux`` and
        ``flux_err`` (Jy).
    """
    w = np.asarray(wavelength, dtype=float)
    f = np.asarray(flux, dtype=float)
    e = np.full(w.shape, np.nan) if flux_err is None else np.asarray(flux_err, dtype=float)
    order = np.argsort(w, kind="stable")
    w, f, e = w[order], f[order], e[order]
    return xr.Dataset({"flux": ("wavelength", f, {"units": "Jy"}),
                       "flux_err": ("wavelength", e, {"units": "Jy"})},
                      coords={"wavelength": ("wavelength", w, {"units": "um"})}, attrs=dict(attrs or {}))


def read_spectrum(path, *, wavelength_unit=None, flux_unit=None, hdu=None,
                  a_v: float | None = None, r_v: float = 3.1) -> xr.Dataset:
    """Read a spectrum from a text or FITS table.

    Parameters
    ----------
    path : str or os.PathLike
        The format is recognised from the content (FITS signature), not the suffix.
    wavelength_unit, flux_unit : str or astropy unit, optional
        Units to use when the file does not give them (they override the file's).
    hdu : int or str, optional
        FITS extension to read (default: the first table with suitable columns).
    a_v : float, optional
        Correct for interstellar extinction of this A_V (mag) with
        :func:`diskexplorer.data.extinction.deredden`.
    r_v : float
        R_V of the extinction curve.

    Returns
    -------
    xarray.Dataset
        See :func:`spectrum_dataset`.

    Raises
    ------
    DataError
        Missing columns or units, non-numeric values (with line and field), duplicate or
        non-positive wavelengths, units that do not convert.
    """
    spath = os.fspath(path)
    if not os.path.exists(spath):
        raise DataError(f"{spath}: file not found")
    if looks_like_fits(spath):
        w, f, e, wu, fu, where = _read_fits(spath, hdu)
    else:
        w, f, e, wu, fu, where = _read_text(spath)
    wu = wavelength_unit or wu
    fu = flux_unit or fu
    if not wu:
        raise DataError(f"{spath}: {where}: no wavelength unit (give it in the header, e.g. "
                        "'wavelength [um]', or pass wavelength_unit=)")
    if not fu:
        raise DataError(f"{spath}: {where}: no flux unit (give it in the header, e.g. 'flux [Jy]', "
                        "or pass flux_unit=)")
    try:
        wq = (w * u.Unit(wu)).to(u.um, equivalencies=u.spectral())
    except (ValueError, u.UnitsError):
        raise DataError(f"{spath}: {where}: wavelength unit {str(wu)!r} does not convert to um") from None
    try:
        fu_ = u.Unit(fu)
        eq = u.spectral_density(wq)
        fj = (f * fu_).to_value(u.Jy, equivalencies=eq)
        ej = (e * fu_).to_value(u.Jy, equivalencies=eq)
    except (ValueError, u.UnitsError):
        raise DataError(f"{spath}: {where}: flux unit {str(fu)!r} is not a flux density convertible "
                        "to Jy") from None
    wum = wq.value
    if np.any(~np.isfinite(wum)) or np.any(wum <= 0):
        raise DataError(f"{spath}: {where}: wavelengths must be finite and > 0")
    uniq, counts = np.unique(wum, return_counts=True)
    if (counts > 1).any():
        raise DataError(f"{spath}: {where}: duplicate wavelength(s) {uniq[counts > 1][:5].tolist()} um")
    ds = spectrum_dataset(wum, fj, ej, attrs={"source_file": spath, "original_wavelength_unit": str(wu),
                                             "original_flux_unit": str(fu)})
    if a_v is not None:
        from .extinction import deredden

        ds = deredden(ds, a_v, r_v=r_v)
    return ds


def _read_text(path):
    table = read_text_table(path, require_header=False)
    if table.header is None:
        ncol = len(table.rows[0][1])
        if ncol not in (2, 3):
            raise DataError(f"{path}: line {table.rows[0][0]}: without a header the columns must be "
                            f"wavelength, flux[, error]; found {ncol}")
        iw, iflux, ierr = 0, 1, 2 if ncol == 3 else None
        wu = fu = ""
    else:
        iw = table.column(*_WAVE_NAMES)
        iflux = table.column(*_FLUX_NAMES)
        ierr = table.column(*_ERR_NAMES)
        missing = [n for n, i in (("wavelength", iw), ("flux", iflux)) if i is None]
        if missing:
            raise DataError(f"{path}: header: missing column(s) {', '.join(missing)} "
                            f"(found: {', '.join(table.header)})")
        wu, fu = table.units[iw], table.units[iflux]
        if ierr is not None and table.units[ierr] and fu and u.Unit(table.units[ierr]) != u.Unit(fu):
            raise DataError(f"{path}: header: error unit {table.units[ierr]!r} differs from flux unit {fu!r}")
    names = table.header or ["wavelength", "flux", "error"]
    n = len(table.rows)
    w, f, e = np.empty(n), np.empty(n), np.full(n, np.nan)
    for k, (line, fields) in enumerate(table.rows):
        w[k] = parse_float(fields[iw], path, line, names[iw])
        f[k] = parse_float(fields[iflux], path, line, names[iflux])
        if np.isnan(w[k]):
            raise DataError(f"{path}: line {line}: field {names[iw]!r}: empty")
        if ierr is not None:
            e[k] = parse_float(fields[ierr], path, line, names[ierr])
            if e[k] < 0:
                raise DataError(f"{path}: line {line}: field {names[ierr]!r}: {e[k]} is negative")
    return w, f, e, wu, fu, "text table"


def _read_fits(path, hdu):
    from .fits_tables import fits_layout, read_fits_bytes

    # Check the layout first: astropy reads a file cut short as far as it goes and then
    # fails with a reshape error that names neither the file nor the defect.
    buf = read_fits_bytes(path)
    fits_layout(buf, path)
    try:
        hdul = fits.open(io.BytesIO(buf), memmap=False)
    except Exception as exc:
        raise DataError(f"{path}: cannot be read as FITS: {exc}") from exc
    with hdul:
        candidates = [hdul[hdu]] if hdu is not None else [h for h in hdul if isinstance(h, fits.BinTableHDU)
                                                          or isinstance(h, fits.TableHDU)]
        for h in candidates:
            if not hasattr(h, "columns"):
                raise DataError(f"{path}: HDU {hdu!r} is not a table")
            lower = {c.name.lower(): c for c in h.columns}
            cw = next((lower[n] for n in _WAVE_NAMES if n in lower), None)
            cf = next((lower[n] for n in _FLUX_NAMES if n in lower), None)
            ce = next((lower[n] for n in _ERR_NAMES if n in lower), None)
            if cw is None or cf is None:
                continue
            where = f"table {h.name or 'HDU'}"
            w = np.asarray(h.data[cw.name], dtype=float).ravel()
            f = np.asarray(h.data[cf.name], dtype=float).ravel()
            e = np.asarray(h.data[ce.name], dtype=float).ravel() if ce is not None else np.full(w.shape, np.nan)
            if not (w.shape == f.shape == e.shape):
                raise DataError(f"{path}: {where}: wavelength, flux and error columns differ in length")
            if np.any(e < 0):
                raise DataError(f"{path}: {where}: column {ce.name}: negative error(s)")
            return w, f, e, (cw.unit or "").strip(), (cf.unit or "").strip(), where
    raise DataError(f"{path}: no FITS table with a wavelength column ({', '.join(_WAVE_NAMES)}) and a "
                    f"flux column ({', '.join(_FLUX_NAMES)})")
