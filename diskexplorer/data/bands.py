"""Named wavelength bands: interferometric windows and photometric zero points.

Two different things share the word "band" in this field:

* the atmospheric windows in which interferometers work (H, K, L, M, N), used here only
  to *select* data by wavelength range (:data:`INTERFEROMETRIC_BANDS`);
* photometric filter bands with an effective wavelength and a published zero-magnitude
  flux density, used to convert magnitudes to Jy (:data:`PHOTOMETRIC_BANDS`).

Every zero point below names its source. Status marks follow the project's reference
notes: CONFIRMED (read in the source or a faithful quotation of it), COMPUTED (derived
here from a confirmed formula), FROM MEMORY (not verified).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import DataError

__all__ = [
    "INTERFEROMETRIC_BANDS",
    "PHOTOMETRIC_BANDS",
    "AB_ZERO_POINT_JY",
    "PhotometricBand",
    "band_range",
    "photometric_band",
    "magnitude_to_jy",
]

#: Wavelength ranges (µm, inclusive) of the near- and mid-infrared atmospheric windows
#: used to select interferometric data by band name. These are working conventions that
#: enclose the usual instrument coverage of each window (not a published standard):
#: J 1.10–1.40, H 1.45–1.85, K 1.95–2.55, L 2.80–4.20, M 4.40–5.30, N 7.50–13.50 µm.
INTERFEROMETRIC_BANDS: dict[str, tuple[float, float]] = {
    "J": (1.10, 1.40),
    "H": (1.45, 1.85),
    "K": (1.95, 2.55),
    "L": (2.80, 4.20),
    "M": (4.40, 5.30),
    "N": (7.50, 13.50),
}

#: Zero point of the AB system in Jy: m_AB = -2.5 log10(f_nu / erg s^-1 cm^-2 Hz^-1) - 48.60
#: (Oke & Gunn 1983 form, as given on Huchra's magnitude page; formula CONFIRMED), hence
#: F0 = 10**(-0.4 * 48.60) erg s^-1 cm^-2 Hz^-1 = 3630.78 Jy (COMPUTED).
AB_ZERO_POINT_JY: float = 10.0 ** (-0.4 * 48.60) * 1e23


@dataclass(frozen=True)
class PhotometricBand:
    """A photometric band with its zero-magnitude flux density.

    Attributes
    ----------
    name : str
        Canonical name, ``"<system>.<filter>"`` (e.g. ``"2MASS.Ks"``).
    wavelength : float
        Effective (isophotal or central) wavelength, µm.
    zero_point : float
        Flux density of a zero-magnitude source, Jy.
    source : str
        Where the numbers come from, with their status mark.
    """

    name: str
    wavelength: float
    zero_point: float
    source: str


_2MASS = ("Cohen, Wheaton & Megeath 2003, AJ 126, 1090; 2MASS All-Sky Explanatory "
          "Supplement sec. VI.4a Table 1 (isophotal wavelength, F_nu(0 mag)); CONFIRMED (secondary)")
_WISE = ("Wright et al. 2010, AJ 140, 1868; Jarrett et al. 2011, ApJ 735, 112; WISE All-Sky "
         "Explanatory Supplement sec. IV.4.h (F_nu*(0 mag), isophotal wavelength); CONFIRMED (secondary)")
_WISE4 = ("zero point as W1-W3 (WISE Explanatory Supplement sec. IV.4.h, CONFIRMED (secondary)); "
          "effective wavelength 22.8 µm from the revision by Brown, Jarrett & Cluver 2014 (CONFIRMED)")
_BESSELL = ("Bessell 1979, as tabulated on Huchra's magnitude page "
            "(lweb.cfa.harvard.edu/~dfabricant/huchra/ay145/mags.html): lambda_c and flux at m = 0; CONFIRMED")

#: Photometric bands by canonical name. Spitzer IRAC/MIPS are left out on purpose: their
#: zero points could not be confirmed in a primary or faithful secondary source.
PHOTOMETRIC_BANDS: dict[str, PhotometricBand] = {
    b.name: b
    for b in (
        PhotometricBand("2MASS.J", 1.235, 1594.0, _2MASS),
        PhotometricBand("2MASS.H", 1.662, 1024.0, _2MASS),
        PhotometricBand("2MASS.Ks", 2.159, 666.7, _2MASS),
        PhotometricBand("WISE.W1", 3.3526, 309.540, _WISE),
        PhotometricBand("WISE.W2", 4.6028, 171.787, _WISE),
        PhotometricBand("WISE.W3", 11.5608, 31.674, _WISE),
        PhotometricBand("WISE.W4", 22.8, 8.363, _WISE4),
        PhotometricBand("Bessell.U", 0.36, 1810.0, _BESSELL),
        PhotometricBand("Bessell.B", 0.44, 4260.0, _BESSELL),
        PhotometricBand("Bessell.V", 0.55, 3640.0, _BESSELL),
        PhotometricBand("Bessell.R", 0.64, 3080.0, _BESSELL),
        PhotometricBand("Bessell.I", 0.79, 2550.0, _BESSELL),
    )
}

# Short names most tables use. Plain J/H/Ks mean 2MASS (by far the commonest source of
# near-infrared photometry today); plain K is refused because Johnson K and 2MASS Ks
# differ by ~0.5 % in zero point and ~0.06 µm in wavelength.
_ALIASES: dict[str, str] = {}
for _canon in PHOTOMETRIC_BANDS:
    _system, _filt = _canon.split(".")
    for _sep in (".", "_", "-", " ", ""):
        _ALIASES[f"{_system}{_sep}{_filt}".lower()] = _canon
for _short, _canon in {"j": "2MASS.J", "h": "2MASS.H", "ks": "2MASS.Ks", "k_s": "2MASS.Ks",
                       "w1": "WISE.W1", "w2": "WISE.W2", "w3": "WISE.W3", "w4": "WISE.W4",
                       "u": "Bessell.U", "b": "Bessell.B", "v": "Bessell.V", "r": "Bessell.R",
                       "i": "Bessell.I", "johnson.v": "Bessell.V", "johnson.b": "Bessell.B",
                       "johnson.u": "Bessell.U"}.items():
    _ALIASES[_short] = _canon
_AMBIGUOUS = {"k": "use '2MASS.Ks' (or 'Ks') for 2MASS photometry"}


def band_range(name: str) -> tuple[float, float]:
    """Return the wavelength range of an interferometric band.

    Parameters
    ----------
    name : str
        One of ``J, H, K, L, M, N`` (case-insensitive).

    Returns
    -------
    (float, float)
        Inclusive range, µm.

    Raises
    ------
    DataError
        If the name is unknown.

    Examples
    --------
    >>> band_range("N")
    (7.5, 13.5)
    """
    key = str(name).strip().upper()
    if key not in INTERFEROMETRIC_BANDS:
        raise DataError(f"unknown interferometric band {name!r}; expected one of "
                        f"{', '.join(INTERFEROMETRIC_BANDS)}")
    return INTERFEROMETRIC_BANDS[key]


def photometric_band(name: str) -> PhotometricBand:
    """Look up a photometric band by canonical name or common alias.

    Parameters
    ----------
    name : str
        E.g. ``"2MASS.Ks"``, ``"Ks"``, ``"WISE W1"``, ``"W3"``, ``"V"``, ``"Bessell.V"``.

    Returns
    -------
    PhotometricBand

    Raises
    ------
    DataError
        If the name is unknown or ambiguous.
    """
    key = " ".join(str(name).split()).lower()
    if key in _AMBIGUOUS:
        raise DataError(f"band name {name!r} is ambiguous: {_AMBIGUOUS[key]}")
    if key not in _ALIASES:
        raise DataError(f"unknown photometric band {name!r}; known bands: "
                        f"{', '.join(PHOTOMETRIC_BANDS)} (and AB magnitudes with unit 'ABmag')")
    return PHOTOMETRIC_BANDS[_ALIASES[key]]


def magnitude_to_jy(magnitude, zero_point, magnitude_error=None):
    """Convert magnitudes to flux densities.

    Parameters
    ----------
    magnitude : float or array_like
        Magnitude in the system of ``zero_point``.
    zero_point : float or str
        Zero-magnitude flux density in Jy, or a band name for :func:`photometric_band`,
        or ``"AB"`` for :data:`AB_ZERO_POINT_JY`.
    magnitude_error : float or array_like, optional
        Magnitude uncertainty.

    Returns
    -------
    flux : ndarray
        F = F0 10**(-0.4 m), Jy.
    flux_error : ndarray or None
        First-order propagated error, 0.4 ln(10) F sigma_m, Jy (None if no error given).

    Examples
    --------
    >>> round(float(magnitude_to_jy(5.0, "Ks")[0]), 4)
    6.667
    """
    if isinstance(zero_point, str):
        f0 = AB_ZERO_POINT_JY if zero_point.strip().upper() == "AB" else photometric_band(zero_point).zero_point
    else:
        f0 = float(zero_point)
    mag = np.asarray(magnitude, dtype=float)
    flux = f0 * 10.0 ** (-0.4 * mag)
    if magnitude_error is None:
        return flux, None
    return flux, 0.4 * math.log(10.0) * flux * np.asarray(magnitude_error, dtype=float)
