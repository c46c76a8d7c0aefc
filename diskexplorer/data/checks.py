"""What every reader checks at the door: plausible values, and one kind of error.

Every reader of :mod:`diskexplorer.data` hands on only values the model and χ² can use:

* interferometric wavelengths finite and inside :data:`WAVELENGTH_RANGE_M`, those of
  photometry and spectra inside :data:`SED_WAVELENGTH_RANGE_UM`;
* projected baselines (u, v) finite and no longer than :data:`MAX_BASELINE_M`;
* measured values finite with ``|value| <= MAX_ABS_VALUE``, and their errors finite with
  ``MIN_ERROR <= error <= MAX_ABS_VALUE`` (see :func:`usable_values`).

Whatever else goes wrong inside astropy, numpy or the text parser leaves a reader as a
:class:`~diskexplorer.errors.DataError` naming the file (:func:`reader_door`); the
messages never quote a text file's content (a typed path may name any readable file).
"""
from __future__ import annotations

import contextlib
import os
import warnings

import numpy as np

from ..errors import DataError, DiskExplorerError

__all__ = ["MAX_ABS_VALUE", "MIN_ERROR", "MAX_BASELINE_M", "WAVELENGTH_RANGE_M", "SED_WAVELENGTH_RANGE_UM",
           "usable_values", "plausible_wavelength_m", "plausible_sed_wavelength_um", "plausible_uv", "reader_door",
           "VALUE_RULE"]

#: Largest magnitude of a measured value or error (any unit). Together with
#: :data:`MIN_ERROR` it keeps every residual (d − m)/σ below 1e100 and its square, summed
#: over any number of points, below the float64 maximum (≈ 1.8e308): a value of 1e300
#: would otherwise make χ² infinite. No measurement comes near either bound.
MAX_ABS_VALUE = 1e50
#: Smallest error bar (any unit); see :data:`MAX_ABS_VALUE`.
MIN_ERROR = 1e-50
#: Longest projected baseline component |u|, |v| in m: Earth's diameter (2 × 6371 km, the
#: mean radius of the IUGG). A longer ground baseline is a damaged value, not a measurement.
MAX_BASELINE_M = 1.2742e7
#: Plausible effective wavelengths in m (10 nm … 1 cm): optical and infrared interferometry
#: with a wide margin on both sides. OIFITS stores EFF_WAVE in metres (Pauls et al. 2005,
#: Duvert et al. 2017), so a value in µm (2.2 instead of 2.2e-6) falls outside, as do
#: values whose exponent was damaged.
WAVELENGTH_RANGE_M = (1e-8, 1e-2)
#: Plausible wavelengths of photometry and spectra in µm: 10 nm (far UV) to 1 m (radio),
#: wider than :data:`WAVELENGTH_RANGE_M` because an SED may reach centimetre radio
#: points. Outside it the Planck function and the dust opacities over- or underflow and
#: the model is NaN there (a wavelength of 1e-300 µm is damage, not a measurement).
SED_WAVELENGTH_RANGE_UM = (1e-2, 1e6)
#: The rule of :func:`usable_values`, in words for messages.
VALUE_RULE = (f"value and error finite, |value| <= {MAX_ABS_VALUE:.0e}, "
              f"{MIN_ERROR:.0e} <= error <= {MAX_ABS_VALUE:.0e}")


def usable_values(value, error):
    """Which values can enter a χ²: finite, not absurdly large, with a usable error bar.

    Parameters
    ----------
    value, error : array_like
        Measured values and their 1σ errors, same unit, broadcastable.

    Returns
    -------
    ndarray of bool
        True where the value is finite with ``|value| <= MAX_ABS_VALUE`` and the error finite
        with ``MIN_ERROR <= error <= MAX_ABS_VALUE`` (an error of 0 would make the residual
        infinite).
    """
    v = np.asarray(value, dtype=float)
    e = np.asarray(error, dtype=float)
    with np.errstate(invalid="ignore"):
        # NaN compares False, so these comparisons also reject NaN and ±inf.
        return (np.abs(v) <= MAX_ABS_VALUE) & (e >= MIN_ERROR) & (e <= MAX_ABS_VALUE)


def plausible_wavelength_m(wavelength_m):
    """True where a wavelength (m) is finite and inside :data:`WAVELENGTH_RANGE_M`."""
    w = np.asarray(wavelength_m, dtype=float)
    lo, hi = WAVELENGTH_RANGE_M
    with np.errstate(invalid="ignore"):
        return (w >= lo) & (w <= hi)


def plausible_sed_wavelength_um(wavelength_um):
    """True where a photometry or spectrum wavelength (µm) is inside :data:`SED_WAVELENGTH_RANGE_UM`."""
    w = np.asarray(wavelength_um, dtype=float)
    lo, hi = SED_WAVELENGTH_RANGE_UM
    with np.errstate(invalid="ignore"):
        return (w >= lo) & (w <= hi)


def plausible_uv(*components):
    """True where every (u, v) component (m) is finite and within :data:`MAX_BASELINE_M`."""
    ok = None
    with np.errstate(invalid="ignore"):
        for c in components:
            good = np.abs(np.asarray(c, dtype=float)) <= MAX_BASELINE_M
            ok = good if ok is None else ok & good
    return ok


@contextlib.contextmanager
def reader_door(path, what):
    """Turn any failure inside a reader into a :class:`DataError` that names the file.

    The project's own errors pass unchanged (they name file, table or line and the
    defect). Anything else (an astropy, numpy or parser error that a check before it did
    not foresee) becomes "``<path>: cannot be read as <what>: …``" with the exception's
    type only: its text may quote the file's content. astropy's own warnings about a
    file's header are silenced here; they would print the damaged header cards, and the
    readers report what matters in their own words.

    Parameters
    ----------
    path : str or os.PathLike or None
        The file named in the message.
    what : str
        What the file was read as ("OIFITS", "photometry", "a spectrum" …).
    """
    name = os.fspath(path) if path is not None else "data file"
    try:
        with warnings.catch_warnings():
            _silence_astropy()
            yield
    except DiskExplorerError:
        raise
    except MemoryError:
        raise DataError(f"{name}: cannot be read as {what}: it needs more memory than is available "
                        "(its header announces more data than it plausibly holds)") from None
    except RecursionError:
        raise DataError(f"{name}: cannot be read as {what}: its structure is nested too deeply") from None
    except Exception as exc:  # the one door: nothing else leaves a reader
        raise DataError(f"{name}: cannot be read as {what}: a damaged or unusual file (the reader failed "
                        f"with {type(exc).__name__}; the file's content is not shown)") from exc


def _silence_astropy():
    try:
        from astropy.utils.exceptions import AstropyWarning
    except ImportError:  # pragma: no cover - astropy is a dependency
        return
    warnings.filterwarnings("ignore", category=AstropyWarning)
