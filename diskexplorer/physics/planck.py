"""The Planck function in the project's internal units."""
import numpy as np

from .constants import C, H, JY_SI, K_B

__all__ = ["planck_nu", "planck_lambda"]

# 2 h nu^3 / c^2 = 2 h c / lambda^3; with lambda in µm and the result in Jy sr^-1:
_C1 = 2.0 * H * C / 1e-18 / JY_SI
_C2 = H * C / K_B / 1e-6         # h c / k in µm K


def planck_nu(wavelength, temperature):
    """Spectral radiance B_ν of a blackbody.

    Parameters
    ----------
    wavelength : array_like
        Wavelength λ in µm (> 0).
    temperature : array_like
        Temperature T in K (> 0). Broadcast against ``wavelength``.

    Returns
    -------
    ndarray
        B_ν in Jy sr⁻¹.

    Notes
    -----
    B_ν = (2hν³/c²) / (exp(hν/kT) − 1), written as (2hν³/c²) e^{−x} / (1 − e^{−x}) with
    x = hc/(λkT) so that it neither overflows for x ≫ 1 (it underflows smoothly to 0)
    nor loses precision for x ≪ 1 (``-expm1(-x)`` is exact there). Valid from
    0.1 µm to 1 mm and from 10 K to 30 000 K without warnings.

    Examples
    --------
    >>> float(planck_nu(2.2, 1500.0))  # doctest: +ELLIPSIS
    4.8298...e+16
    """
    lam = np.asarray(wavelength, dtype=float)
    t = np.asarray(temperature, dtype=float)
    x = _C2 / (lam * t)
    with np.errstate(over="ignore", under="ignore"):
        return _C1 / lam**3 * np.exp(-x) / (-np.expm1(-x))


def planck_lambda(wavelength, temperature):
    """Spectral radiance B_λ in W m⁻² µm⁻¹ sr⁻¹ (λ in µm, T in K); B_λ = B_ν c / λ²."""
    lam = np.asarray(wavelength, dtype=float)
    return planck_nu(lam, temperature) * JY_SI * C / (lam * 1e-6) ** 2 * 1e-6
