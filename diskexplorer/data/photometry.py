"""Read photometry tables (CSV) into an xarray Dataset of flux densities in Jy.

File format
-----------
A header line, then one measurement per line; ``#`` starts a comment line. Columns
(case-insensitive; order free):

``band`` and/or ``wavelength``
    A photometric band name (see :data:`diskexplorer.data.bands.PHOTOMETRIC_BANDS`;
    e.g. ``2MASS.Ks``, ``Ks``, ``W1``, ``V``) and/or a wavelength in µm (a unit may be
    given in the header, ``wavelength [nm]``). With a band and no wavelength, the band's
    effective wavelength is used.
``value``
    The measurement.
``error``
    Its 1σ uncertainty in the same unit (may be empty for an upper limit).
``unit``
    ``Jy``, ``mJy`` or any flux-density unit astropy understands (``W m-2 um-1``,
    ``erg s-1 cm-2 AA-1`` …; per-wavelength units are converted at the row's wavelength),
    ``mag`` (Vega-type magnitudes in the band's own system: needs a known band) or
    ``ABmag`` (AB magnitudes: needs a wavelength or a band).
``upper_limit`` (optional)
    ``1/0``, ``true/false``, ``yes/no``, ``y/n``; a true value marks ``value`` as an
    upper limit.
"""

from __future__ import annotations

import math

import numpy as np
import xarray as xr
from astropy import units as u

from ..errors import DataError
from .bands import AB_ZERO_POINT_JY, photometric_band
from .text_tables import parse_float, read_text_table

__all__ = ["read_photometry", "photometry_dataset"]

_TRUE = {"1", "true", "t", "yes", "y", "<"}
_FALSE = {"0", "false", "f", "no", "n", ""}


def photometry_dataset(wavelength, flux, flux_err, upper_limit=None, band=None, *, attrs=None) -> xr.Dataset:
    """Assemble a photometry dataset from arrays.

    Parameters
    ----------
    wavelength : array_like
        µm.
    flux, flux_err : array_like
        Jy.
    upper_limit : array_like of bool, optional
    band : array_like of str, optional

    Returns
    -------
    xarray.Dataset
        Dimension ``point``; coordinates ``wavelength`` (µm) and ``band`` (str, "" when
        none); variables ``flux``, ``flux_err`` (Jy) and ``upper_limit`` (bool).
    """
    wavelength = np.asarray(wavelength, dtype=float)
    n = wavelength.size
    ds = xr.Dataset(
        {"flux": ("point", np.asarray(flux, dtype=float), {"units": "Jy"}),
         "flux_err": ("point", np.asarray(flux_err, dtype=float), {"units": "Jy"}),
         "upper_limit": ("point", np.zeros(n, bool) if upper_limit is None else np.asarray(upper_limit, bool))},
        coords={"wavelength": ("point", wavelength, {"units": "um"}),
                "band": ("point", np.array([""] * n if band is None else list(band), dtype=object))},
        attrs=dict(attrs or {}))
    return ds


def read_photometry(path, *, a_v: float | None = None, r_v: float = 3.1) -> xr.Dataset:
    """Read a photometry CSV file (format in the module docstring).

    Parameters
    ----------
    path : str or os.PathLike
    a_v : float, optional
        If given, correct for interstellar extinction of this A_V (mag) with
        :func:`diskexplorer.data.extinction.deredden`.
    r_v : float
        R_V of the extinction curve.

    Returns
    -------
    xarray.Dataset
        See :func:`photometry_dataset`; rows in file order. ``attrs["zero_points"]`` lists
        the zero point and source used for each magnitude row.

    Raises
    ------
    DataError
        Missing columns, unknown bands or units, non-numeric values or negative errors,
        each naming file, line and field.

    Examples
    --------
    A file with the line ``Ks,5.0,0.02,mag`` gives 6.667 Jy (2MASS zero point 666.7 Jy,
    Cohen et al. 2003).
    """
    table = read_text_table(path, require_header=True)
    p = table.path
    icol = {
        "band": table.column("band", "filter"),
        "wavelength": table.column("wavelength", "wavelength_um", "lambda", "wave"),
        "value": table.column("value", "flux", "mag", "magnitude"),
        "error": table.column("error", "err", "uncertainty", "sigma"),
        "unit": table.column("unit", "units"),
        "upper_limit": table.column("upper_limit", "upper", "ul", "limit", "is_upper_limit"),
    }
    missing = [k for k in ("value", "error", "unit") if icol[k] is None]
    if icol["band"] is None and icol["wavelength"] is None:
        missing.insert(0, "band or wavelength")
    if missing:
        raise DataError(f"{p}: line {table.rows[0][0] - 1 if table.rows else 1}: header lacks column(s) "
                        f"{', '.join(missing)} (found: {', '.join(table.header)})")
    wave_unit = u.um
    if icol["wavelength"] is not None and table.units[icol["wavelength"]]:
        try:
            wave_unit = u.Unit(table.units[icol["wavelength"]])
            (1 * wave_unit).to(u.um)
        except (ValueError, u.UnitsError):
            raise DataError(f"{p}: header: field 'wavelength': unit {table.units[icol['wavelength']]!r} "
                            "is not a length unit") from None
    waves, fluxes, errs, uls, bands, zps = [], [], [], [], [], []
    for line, f in table.rows:
        band_name = f[icol["band"]] if icol["band"] is not None else ""
        band = None
        if band_name:
            try:
                band = photometric_band(band_name)
            except DataError as exc:
                raise DataError(f"{p}: line {line}: field 'band': {exc}") from None
        w = parse_float(f[icol["wavelength"]], p, line, "wavelength") if icol["wavelength"] is not None else math.nan
        if not math.isnan(w):
            w = (w * wave_unit).to_value(u.um)
            if w <= 0:
                raise DataError(f"{p}: line {line}: field 'wavelength': {w} must be > 0")
        elif band is not None:
            w = band.wavelength
        else:
            raise DataError(f"{p}: line {line}: field 'wavelength': empty, and no band given")
        value = parse_float(f[icol["value"]], p, line, "value")
        if math.isnan(value):
            raise DataError(f"{p}: line {line}: field 'value': empty")
        err = parse_float(f[icol["error"]], p, line, "error")
        if err < 0:
            raise DataError(f"{p}: line {line}: field 'error': {err} is negative")
        ul = False
        if icol["upper_limit"] is not None:
            flag = f[icol["upper_limit"]].strip().lower()
            if flag in _TRUE:
                ul = True
            elif flag not in _FALSE:
                raise DataError(f"{p}: line {line}: field 'upper_limit': {f[icol['upper_limit']]!r} is "
                                "not a yes/no value (1/0, true/false, yes/no)")
        if math.isnan(err) and not ul:
            raise DataError(f"{p}: line {line}: field 'error': empty (allowed only for upper limits)")
        unit_text = f[icol["unit"]].strip()
        flux, flux_err, zp = _to_jy(value, err, unit_text, band, w, p, line)
        waves.append(w)
        fluxes.append(flux)
        errs.append(flux_err)
        uls.append(ul)
        bands.append(band.name if band else "")
        zps.append(zp)
    ds = photometry_dataset(waves, fluxes, errs, uls, bands,
                            attrs={"source_file": p, "zero_points": "; ".join(z for z in zps if z)})
    if a_v is not None:
        from .extinction import deredden

        ds = deredden(ds, a_v, r_v=r_v)
    return ds


def _to_jy(value, err, unit_text, band, wave_um, p, line):
    """Convert one measurement to Jy; returns (flux, error, zero-point note)."""
    key = unit_text.lower().replace(" ", "")
    if key in ("mag", "vegamag", "mag_vega"):
        if band is None:
            raise DataError(f"{p}: line {line}: field 'unit': magnitudes need a known band name "
                            "(or use 'ABmag' with a wavelength)")
        f0 = band.zero_point
        note = f"{band.name}: {f0} Jy ({band.source})"
    elif key in ("abmag", "mag_ab", "ab"):
        f0 = AB_ZERO_POINT_JY
        note = f"AB: {f0:.2f} Jy (Oke & Gunn 1983 form)"
    else:
        try:
            unit = u.Unit(unit_text)
        except ValueError:
            raise DataError(f"{p}: line {line}: field 'unit': unknown unit {unit_text!r} (expected Jy, "
                            "mJy, mag, ABmag or a flux-density unit such as 'W m-2 um-1')") from None
        try:
            eq = u.spectral_density(wave_um * u.um)
            flux = (value * unit).to_value(u.Jy, equivalencies=eq)
            ferr = (err * unit).to_value(u.Jy, equivalencies=eq)
        except u.UnitsError:
            raise DataError(f"{p}: line {line}: field 'unit': {unit_text!r} is not a flux-density unit "
                            "convertible to Jy") from None
        return flux, ferr, ""
    flux = f0 * 10.0 ** (-0.4 * value)
    # First-order propagation: dF/dm = -0.4 ln(10) F.
    ferr = 0.4 * math.log(10.0) * flux * err if not math.isnan(err) else math.nan
    return flux, ferr, note
