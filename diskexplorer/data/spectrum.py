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
from .checks import (MAX_ABS_VALUE, SED_WAVELENGTH_RANGE_UM, VALUE_RULE, plausible_sed_wavelength_um, reader_door,
                     usable_values)
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
        Missing columns or units, non-numeric values (with line and field), duplicate
        wavelengths or ones outside :data:`~diskexplorer.data.checks.SED_WAVELENGTH_RANGE_UM`, fluxes that are not finite, errors that
        are not finite and > 0 (an empty error means "none": a 5 % error is then used by
        the comparison), values beyond :data:`~diskexplorer.data.checks.MAX_ABS_VALUE`
        in Jy, units that do not convert. Messages name the file and the line (text) or
        table and row (FITS), and never quote the file's content.
    """
    spath = os.fspath(path)
    if not os.path.exists(spath):
        raise DataError(f"{spath}: file not found")
    with reader_door(spath, "a spectrum"):
        ds = _read_spectrum(spath, wavelength_unit, flux_unit, hdu)
    if a_v is not None:
        from .photometry import _dereddened

        ds = _dereddened(ds, a_v, r_v)
    return ds


def _read_spectrum(spath, wavelength_unit, flux_unit, hdu):
    if looks_like_fits(spath):
        w, f, e, wu, fu, where, rows = _read_fits(spath, hdu)
        row_word = "row"
    else:
        w, f, e, wu, fu, where, rows = _read_text(spath)
        row_word = "line"
    # Units the caller gives may be quoted back; the file's own are its content.
    wq_text = f" {str(wavelength_unit)!r}" if wavelength_unit else " (from the file)"
    fu_text = f" {str(flux_unit)!r}" if flux_unit else " (from the file)"
    wu = wavelength_unit or wu
    fu = flux_unit or fu
    if not wu:
        raise DataError(f"{spath}: {where}: no wavelength unit (give it in the header, e.g. "
                        "'wavelength [um]', or pass wavelength_unit=)")
    if not fu:
        raise DataError(f"{spath}: {where}: no flux unit (give it in the header, e.g. 'flux [Jy]', "
                        "or pass flux_unit=)")
    try:
        with np.errstate(all="ignore"):
            wq = (w * u.Unit(wu)).to(u.um, equivalencies=u.spectral())
    except (ValueError, TypeError, u.UnitsError):
        raise DataError(f"{spath}: {where}: wavelength unit{wq_text} does not convert to um") from None
    try:
        fu_ = u.Unit(fu)
        eq = u.spectral_density(wq)
        with np.errstate(all="ignore"):   # overflows are caught by the checks below
            fj = (f * fu_).to_value(u.Jy, equivalencies=eq)
            ej = (e * fu_).to_value(u.Jy, equivalencies=eq)
    except (ValueError, TypeError, u.UnitsError):
        raise DataError(f"{spath}: {where}: flux unit{fu_text} is not a flux density convertible "
                        "to Jy") from None
    wum = np.asarray(wq.value, dtype=float)
    with np.errstate(invalid="ignore"):
        bad_w = ~plausible_sed_wavelength_um(wum)
        # An empty error (NaN) means "none given"; any other error must be usable.
        bad_f = ~((np.abs(fj) <= MAX_ABS_VALUE) & (np.isnan(ej) | usable_values(fj, ej)))
    lo, hi = SED_WAVELENGTH_RANGE_UM
    for bad, what in ((bad_w, f"wavelength must be finite, between {lo:g} and {hi:g} um"),
                      (bad_f, f"flux and error in Jy are not usable ({VALUE_RULE}; the error may be empty)")):
        if bad.any():
            k = int(np.flatnonzero(bad)[0])
            raise DataError(f"{spath}: {where}: {row_word} {rows[k]}: {what} ({int(bad.sum())} {row_word}(s) in all)")
    uniq, counts = np.unique(wum, return_counts=True)
    if (counts > 1).any():
        raise DataError(f"{spath}: {where}: {int((counts > 1).sum())} duplicate wavelength(s), first "
                        f"{uniq[counts > 1][0]:.6g} um")
    return spectrum_dataset(wum, fj, ej, attrs={"source_file": spath, "original_wavelength_unit": str(wu),
                                                "original_flux_unit": str(fu)})


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
                            f"(it names {len(table.header)} column(s); accepted names: wavelength: "
                            f"{', '.join(_WAVE_NAMES)}; flux: {', '.join(_FLUX_NAMES)})")
        wu, fu = table.units[iw], table.units[iflux]
        if ierr is not None and table.units[ierr] and fu:
            try:
                same = u.Unit(table.units[ierr]) == u.Unit(fu)
            except (ValueError, TypeError):
                raise DataError(f"{path}: header: the units of the flux and error columns must be "
                                "flux-density units that astropy knows") from None
            if not same:
                raise DataError(f"{path}: header: the error column's unit differs from the flux column's")
    names = table.header or ["wavelength", "flux", "error"]
    n = len(table.rows)
    w, f, e = np.empty(n), np.empty(n), np.full(n, np.nan)
    lines = np.empty(n, dtype=int)
    for k, (line, fields) in enumerate(table.rows):
        lines[k] = line
        w[k] = parse_float(fields[iw], path, line, names[iw])
        f[k] = parse_float(fields[iflux], path, line, names[iflux])
        if np.isnan(w[k]):
            raise DataError(f"{path}: line {line}: field {names[iw]!r}: empty")
        if np.isnan(f[k]):
            raise DataError(f"{path}: line {line}: field {names[iflux]!r}: empty")
        if ierr is not None:
            e[k] = parse_float(fields[ierr], path, line, names[ierr])
            if e[k] < 0:
                raise DataError(f"{path}: line {line}: field {names[ierr]!r}: is negative")
            if e[k] == 0:
                raise DataError(f"{path}: line {line}: field {names[ierr]!r}: must be > 0 (leave it empty "
                                "when unknown)")
    return w, f, e, wu, fu, "text table", lines


def _read_fits(path, hdu):
    from .fits_tables import fits_layout, read_fits_bytes

    # Check the layout first: astropy reads a file cut short as far as it goes and then
    # fails with a reshape error that names neither the file nor the defect; and no size
    # in a header is trusted before it is checked against the file.
    buf = read_fits_bytes(path)
    layout = fits_layout(buf, path)
    for h in layout:
        if h.bad_cards:
            _, num, key, why = h.bad_cards[0]
            raise DataError(f"{path}: damaged FITS file: {h.name or 'HDU ' + str(h.index)} (HDU {h.index}): "
                            f"header card {num}{f' ({key})' if key else ''} {why}")
    try:
        hdul = fits.open(io.BytesIO(buf), memmap=False, lazy_load_hdus=False)
    except Exception as exc:  # astropy's many error types; its text may quote the header
        raise DataError(f"{path}: damaged FITS file: astropy cannot read it ({type(exc).__name__})") from exc
    with hdul:
        if hdu is not None:
            try:
                candidates = [(hdul.index_of(hdu), hdul[hdu])]
            except (KeyError, IndexError, TypeError):
                raise DataError(f"{path}: no HDU {hdu!r} (the file has {len(hdul)})") from None
        else:
            candidates = [(i, h) for i, h in enumerate(hdul)
                          if isinstance(h, (fits.BinTableHDU, fits.TableHDU))]
        for i, h in candidates:
            label = f"{h.name or 'HDU'} (HDU {i})"
            if not hasattr(h, "columns"):
                raise DataError(f"{path}: HDU {hdu!r} is not a table")
            try:
                found = _spectrum_columns(h)
            except Exception as exc:  # astropy or numpy on content that does not match the header
                raise DataError(f"{path}: damaged FITS file: {label}: its content does not match its header "
                                f"({type(exc).__name__})") from exc
            if found is None:
                continue
            w, f, e, wu, fu, ename = found
            where = f"table {h.name or 'HDU'}"
            if not (w.shape == f.shape == e.shape):
                raise DataError(f"{path}: {where}: wavelength, flux and error columns differ in length")
            with np.errstate(invalid="ignore"):
                if np.any(e < 0):
                    raise DataError(f"{path}: {where}: column {ename}: negative error(s)")
            return w, f, e, wu, fu, where, np.arange(1, w.size + 1)
    raise DataError(f"{path}: no FITS table with a wavelength column ({', '.join(_WAVE_NAMES)}) and a "
                    f"flux column ({', '.join(_FLUX_NAMES)})")


def _spectrum_columns(h):
    """(λ, flux, error, λ unit, flux unit, error column name) of a table, or None."""
    lower = {c.name.lower(): c for c in h.columns}
    cw = next((lower[n] for n in _WAVE_NAMES if n in lower), None)
    cf = next((lower[n] for n in _FLUX_NAMES if n in lower), None)
    ce = next((lower[n] for n in _ERR_NAMES if n in lower), None)
    if cw is None or cf is None:
        return None
    w = np.asarray(h.data[cw.name], dtype=float).ravel()
    f = np.asarray(h.data[cf.name], dtype=float).ravel()
    e = np.asarray(h.data[ce.name], dtype=float).ravel() if ce is not None else np.full(w.shape, np.nan)
    return w, f, e, (cw.unit or "").strip(), (cf.unit or "").strip(), ce.name if ce is not None else ""
