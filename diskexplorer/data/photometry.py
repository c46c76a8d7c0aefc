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
from .bands import _AMBIGUOUS, AB_ZERO_POINT_JY, PHOTOMETRIC_BANDS, photometric_band
from .checks import (MAX_ABS_VALUE, MIN_ERROR, SED_WAVELENGTH_RANGE_UM, VALUE_RULE, plausible_sed_wavelength_um,
                     reader_door, usable_values)
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
        Missing columns, unknown bands or units, non-numeric values, a wavelength that is
        not finite and inside :data:`~diskexplorer.data.checks.SED_WAVELENGTH_RANGE_UM`, a value that is not finite, an error that is not finite and
        > 0 (empty is allowed for an upper limit), or a measurement whose value or error
        in Jy is not usable (:func:`~diskexplorer.data.checks.usable_values`), each
        naming file, line and field. Messages never quote the file's content.

    Examples
    --------
    A file with the line ``Ks,5.0,0.02,mag`` gives 6.667 Jy (2MASS zero point 666.7 Jy,
    Cohen et al. 2003).
    """
    with reader_door(path, "photometry"):
        ds = _read_photometry(path)
    if a_v is not None:
        ds = _dereddened(ds, a_v, r_v)
    return ds


def _dereddened(ds, a_v, r_v):
    """``deredden`` with the file named in its refusal (the A_V or the curve's range)."""
    from .extinction import deredden

    try:
        return deredden(ds, a_v, r_v=r_v)
    except DataError as exc:
        raise DataError(f"{ds.attrs.get('source_file', 'data')}: extinction correction: {exc}") from None


def _band_refusal(name):
    """Why a band name is refused, without repeating the name (it is the file's content)."""
    key = " ".join(str(name).split()).lower()
    if key in _AMBIGUOUS:
        return f"the band name is ambiguous: {_AMBIGUOUS[key]}"
    return (f"not a known photometric band; known bands: {', '.join(PHOTOMETRIC_BANDS)} (and AB magnitudes "
            "with unit 'ABmag')")


def _read_photometry(path):
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
                        f"{', '.join(missing)} (it names {len(table.header)} column(s))")
    wave_unit = u.um
    if icol["wavelength"] is not None and table.units[icol["wavelength"]]:
        try:
            wave_unit = u.Unit(table.units[icol["wavelength"]])
            (1 * wave_unit).to(u.um)
        except (ValueError, TypeError, u.UnitsError):
            raise DataError(f"{p}: header: field 'wavelength': its unit is not a length unit") from None
    waves, fluxes, errs, uls, bands, zps = [], [], [], [], [], []
    for line, f in table.rows:
        band_name = f[icol["band"]] if icol["band"] is not None else ""
        band = None
        if band_name:
            try:
                band = photometric_band(band_name)
            except DataError:
                raise DataError(f"{p}: line {line}: field 'band': {_band_refusal(band_name)}") from None
        w = parse_float(f[icol["wavelength"]], p, line, "wavelength") if icol["wavelength"] is not None else math.nan
        if not math.isnan(w):
            with np.errstate(all="ignore"):
                w = float((w * wave_unit).to_value(u.um))
            if not plausible_sed_wavelength_um(w):
                lo, hi = SED_WAVELENGTH_RANGE_UM
                raise DataError(f"{p}: line {line}: field 'wavelength': must be finite, between {lo:g} and "
                                f"{hi:g} um")
        elif band is not None:
            w = band.wavelength
        else:
            raise DataError(f"{p}: line {line}: field 'wavelength': empty, and no band given")
        value = parse_float(f[icol["value"]], p, line, "value")
        if math.isnan(value):
            raise DataError(f"{p}: line {line}: field 'value': empty")
        if not abs(value) <= MAX_ABS_VALUE:
            raise DataError(f"{p}: line {line}: field 'value': must be finite, of magnitude at most "
                            f"{MAX_ABS_VALUE:.0e}")
        err = parse_float(f[icol["error"]], p, line, "error")
        if err < 0:
            raise DataError(f"{p}: line {line}: field 'error': is negative")
        if err == 0 or err > MAX_ABS_VALUE:
            raise DataError(f"{p}: line {line}: field 'error': must be finite and > 0 (empty only for an upper "
                            "limit)")
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
        # In Jy, the measurement must still be one a χ² can use (a magnitude of 200 is
        # 1e-77 Jy, a flux of 1e45 W m-2 um-1 overflows).
        usable = usable_values(flux, flux_err) if not (ul and math.isnan(flux_err)) else abs(flux) <= MAX_ABS_VALUE
        if not usable:
            raise DataError(f"{p}: line {line}: the measurement in Jy is not usable ({VALUE_RULE}, with the "
                            f"error >= {MIN_ERROR:.0e} Jy)")
        waves.append(w)
        fluxes.append(flux)
        errs.append(flux_err)
        uls.append(ul)
        bands.append(band.name if band else "")
        zps.append(zp)
    return photometry_dataset(waves, fluxes, errs, uls, bands,
                              attrs={"source_file": p, "zero_points": "; ".join(z for z in zps if z)})


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
        except (ValueError, TypeError):
            raise DataError(f"{p}: line {line}: field 'unit': not a unit (expected Jy, mJy, mag, ABmag or a "
                            "flux-density unit such as 'W m-2 um-1')") from None
        try:
            eq = u.spectral_density(wave_um * u.um)
            with np.errstate(all="ignore"):   # an overflow is caught by the value check after
                flux = float((value * unit).to_value(u.Jy, equivalencies=eq))
                ferr = float((err * unit).to_value(u.Jy, equivalencies=eq))
        except (u.UnitsError, TypeError, ValueError):
            raise DataError(f"{p}: line {line}: field 'unit': not a flux-density unit convertible to Jy "
                            "(expected Jy, mJy, mag, ABmag or a unit such as 'W m-2 um-1')") from None
        return flux, ferr, ""
    if not abs(value) <= 100.0:
        # 10**(-0.4 m) overflows for m < -1770; no source is brighter than -30 mag or
        # measured fainter than +40 mag, so 100 leaves room and refuses what is damage.
        raise DataError(f"{p}: line {line}: field 'value': a magnitude must lie within -100 … 100")
    flux = f0 * 10.0 ** (-0.4 * value)
    # First-order propagation: dF/dm = -0.4 ln(10) F.
    ferr = 0.4 * math.log(10.0) * flux * err if not math.isnan(err) else math.nan
    return flux, ferr, note
