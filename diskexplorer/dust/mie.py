"""Homogeneous spheres: a thin wrapper over miepython in our sign convention.

miepython (3.x) is imported on first use, not at package import. Whether its numba JIT
is active is decided by the ``MIEPYTHON_USE_JIT`` environment variable *before* that
first import; only the library build script sets it.
"""
from __future__ import annotations

import numpy as np

from ..errors import DustError

__all__ = ["mie_efficiencies", "mie_cabs_per_volume", "size_parameter"]

_UM_TO_CM = 1e-4


def _miepython():
    import miepython  # deferred: keeps `import diskexplorer.dust` fast
    return miepython


def size_parameter(radius, wavelength):
    """x = 2π a / λ (dimensionless) for radius and wavelength in the same unit (µm)."""
    return 2.0 * np.pi * np.asarray(radius, dtype=float) / np.asarray(wavelength, dtype=float)


def mie_efficiencies(m, x):
    """Mie efficiencies of a homogeneous sphere.

    Parameters
    ----------
    m : complex or array_like
        Refractive index relative to the medium, **n + ik with k ≥ 0** (our convention;
        converted to miepython's n − ik here).
    x : float or array_like
        Size parameter 2πa/λ.

    Returns
    -------
    q_ext, q_sca, q_abs, q_back, g : ndarray
        Efficiencies (cross-section / πa²), backscattering efficiency
        |2 S₁(π)/x|² and asymmetry parameter.
    """
    m = np.asarray(m, dtype=complex)
    x = np.asarray(x, dtype=float)
    if np.any(m.imag < 0):
        raise DustError("mie_efficiencies expects m = n + ik with k ≥ 0 (our convention)")
    m, x = np.broadcast_arrays(m, x)
    shape = m.shape
    mp = _miepython()
    qext, qsca, qback, g = mp.efficiencies_mx(np.conj(m).ravel(), x.ravel())
    qext = np.asarray(qext, dtype=float).reshape(shape)
    qsca = np.asarray(qsca, dtype=float).reshape(shape)
    qback = np.asarray(qback, dtype=float).reshape(shape)
    g = np.asarray(g, dtype=float).reshape(shape)
    return qext, qsca, qext - qsca, qback, g


def mie_cabs_per_volume(m, radius, wavelength):
    """Absorption cross-section per unit volume of a sphere, C_abs/V in cm⁻¹.

    Parameters
    ----------
    m : complex or array_like
        n + ik (k ≥ 0) at each wavelength.
    radius : float
        Sphere radius in µm.
    wavelength : array_like
        Wavelengths in µm.

    Notes
    -----
    C_abs/V = Q_abs πa² / (4πa³/3) = 3 Q_abs / (4a).
    """
    a = float(radius)
    if not (np.isfinite(a) and a > 0):
        raise DustError(f"grain radius {radius!r} µm: expected > 0")
    x = size_parameter(a, wavelength)
    q_abs = mie_efficiencies(m, x)[2]
    return 3.0 * q_abs / (4.0 * a * _UM_TO_CM)
