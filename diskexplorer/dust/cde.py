"""Small-particle (Rayleigh-limit) absorption: spheres, ellipsoids and the CDE.

All functions take the dielectric function ε = ε′ + iε″ in the Bohren & Huffman
convention (ε″ ≥ 0 for absorption) and return the absorption cross-section per unit
particle volume, C_abs/V, in cm⁻¹ for a wavelength in µm.

These are electrostatic (dipole) results: valid while the particle is small compared
with the wavelength inside and outside it, 2πa|m|/λ ≪ 1. Within that limit C_abs/V and
hence κ_abs = C_abs/(ρV) do not depend on grain size.
"""
from __future__ import annotations

import numpy as np

from ..errors import DustError

__all__ = ["cde_bracket", "cde_cabs_per_volume", "sphere_rayleigh_cabs_per_volume",
           "ellipsoid_cabs_per_volume"]

_UM_TO_CM = 1e-4
# Below this |ε − 1| the closed form loses digits to cancellation; a Taylor series is
# exact to O(δ⁴) there (CHECK_VALUES §2: 2 + δ − δ²/3 + δ³/6).
_SERIES_LIMIT = 1e-4


def _as_eps(eps):
    e = np.asarray(eps, dtype=complex)
    if np.any(e.imag < 0):
        raise DustError("dielectric function with ε″ < 0 given; the CDE formula needs the "
                        "absorption-positive convention ε = ε′ + iε″ (ε″ ≥ 0): conjugate it first")
    return e


def _wavenumber(wavelength):
    lam = np.asarray(wavelength, dtype=float)
    if np.any(~np.isfinite(lam)) or np.any(lam <= 0):
        raise DustError("wavelength must be finite and > 0 µm")
    return 2.0 * np.pi / (lam * _UM_TO_CM)


def cde_bracket(eps):
    """The CDE shape factor 2ε ln ε / (ε − 1) (dimensionless, complex).

    Principal branch of the logarithm (arg ε ∈ (−π, π]), which for ε″ ≥ 0 and ε′ < 0
    gives arg ε ≈ +π as the shape average requires; near ε = 1 the removable singularity
    is handled by the series 2 + δ − δ²/3 + δ³/6, δ = ε − 1.
    """
    e = _as_eps(eps)
    d = e - 1.0
    small = np.abs(d) < _SERIES_LIMIT
    safe = np.where(small, 2.0 + 0j, e)  # avoid 0/0 in the unused branch
    direct = 2.0 * safe * np.log(safe) / (safe - 1.0)
    series = 2.0 + d - d * d / 3.0 + d ** 3 / 6.0
    return np.where(small, series, direct)


def cde_cabs_per_volume(eps, wavelength):
    """Absorption per unit volume of a continuous distribution of ellipsoids.

    Parameters
    ----------
    eps : complex or array_like
        Dielectric function, ε″ ≥ 0.
    wavelength : float or array_like
        Wavelength in µm (broadcast against ``eps``).

    Returns
    -------
    ndarray
        ⟨C_abs⟩/V in cm⁻¹.

    Notes
    -----
    ⟨C_abs⟩/V = (2π/λ) Im[2ε ln ε/(ε − 1)] — Bohren & Huffman (1983) eq. 12.36: all
    ellipsoid shapes equally probable (depolarisation factors uniform on the triangle
    L₁ + L₂ ≤ 1), randomly oriented, in the Rayleigh limit.

    Examples
    --------
    >>> round(float(cde_cabs_per_volume((1.5 + 0.1j) ** 2, 10.0)), 4)
    1059.0795
    """
    return _wavenumber(wavelength) * np.imag(cde_bracket(eps))


def sphere_rayleigh_cabs_per_volume(eps, wavelength):
    """Rayleigh-limit sphere: C_abs/V = 3 (2π/λ) Im[(ε − 1)/(ε + 2)] in cm⁻¹ (λ in µm)."""
    e = _as_eps(eps)
    return _wavenumber(wavelength) * 3.0 * np.imag((e - 1.0) / (e + 2.0))


def ellipsoid_cabs_per_volume(eps, wavelength, l1, l2):
    """Randomly oriented ellipsoid in the Rayleigh limit, C_abs/V in cm⁻¹.

    ⟨C_abs⟩/V = (k/3) Im Σᵢ 1/(Lᵢ + 1/(ε − 1)) with L₃ = 1 − L₁ − L₂ (B&H 1983 p. 354).
    """
    e = _as_eps(eps)
    l3 = 1.0 - l1 - l2
    inv = 1.0 / (e - 1.0)
    s = 1.0 / (l1 + inv) + 1.0 / (l2 + inv) + 1.0 / (l3 + inv)
    return _wavenumber(wavelength) / 3.0 * np.imag(s)
