"""Coated spheres (core + concentric shell) and the distribution of hollow spheres (DHS).

miepython has no coated sphere, so the Aden–Kerker solution is implemented here,
vectorised over arrays of inputs, in the numerically stable form that works with
logarithmic derivatives and with the ratio of Riccati–Bessel functions between the
two interfaces instead of the functions themselves (the approach of Toon & Ackerman
1981, Appl. Opt. 20, 3657, and of the layered-sphere recursion of Yang 2003, Appl. Opt.
42, 1710). Bohren & Huffman (1983) §8.1 give the boundary conditions; their routine
BHCOAT evaluates the same coefficients.

Conventions: refractive indices m = n + ik (k ≥ 0) relative to the surrounding medium;
ξₙ = ψₙ − iχₙ (B&H), so with Im z ≥ 0 the functions used here stay bounded.
"""
from __future__ import annotations

import numpy as np

from ..errors import DustError
from .mie import mie_cabs_per_volume

__all__ = ["coated_efficiencies", "dhs_cabs_per_volume", "hollow_sphere_radii"]

_UM_TO_CM = 1e-4
_CHUNK = 2048


def _d1_downward(z, nmax):
    """ψₙ′/ψₙ for n = 0..nmax by downward recurrence (stable for all z), shape (nmax+1, N).

    The start lies beyond both nmax and |z| by 16 + 6|z|^(1/3): the error of the
    arbitrary start value only decays once n is several transition widths (~|z|^(1/3))
    past the turning point n ≈ |z|; with the usual +15 alone, real arguments z ≳ 100
    lose ~1e-6 in Q_abs.
    """
    zmax = float(np.max(np.abs(z)))
    start = int(max(nmax, zmax) + 16 + 6 * np.cbrt(zmax))
    d = np.zeros(z.shape, dtype=complex)
    out = np.empty((nmax + 1,) + z.shape, dtype=complex)
    for n in range(start, 0, -1):
        d = n / z - 1.0 / (d + n / z)
        if n - 1 <= nmax:
            out[n - 1] = d
    return out


def _coefficients_chunk(mc, ms, x, y, nmax, nstop):
    """Sums over multipoles for one chunk of inputs; returns q_ext, q_sca, q_back."""
    zc = mc * x
    z1 = ms * x
    z2 = ms * y
    d1c = _d1_downward(zc, nmax)
    d1z1 = _d1_downward(z1, nmax)
    d1z2 = _d1_downward(z2, nmax)

    # Upward recurrences: D3ₙ = ξₙ′/ξₙ via the product ψₙξₙ (stable upwards), and
    # Qₙ = [ψₙ(z1)/ξₙ(z1)] / [ψₙ(z2)/ξₙ(z2)], bounded because Im(z2 − z1) ≥ 0.
    e1 = np.exp(2j * z1)
    e2 = np.exp(2j * z2)
    pxz1 = 0.5 * (1.0 - e1)
    pxz2 = 0.5 * (1.0 - e2)
    d3z1 = np.full(z1.shape, 1j)
    d3z2 = np.full(z2.shape, 1j)
    q = np.exp(2j * (z2 - z1)) * (e1 - 1.0) / (e2 - 1.0)
    ratio2 = (z1 / z2) ** 2

    # Outer medium (real argument): ψ and χ by upward recurrence, ξ = ψ − iχ.
    psi_prev, psi = np.cos(y), np.sin(y)
    chi_prev, chi = -np.sin(y), np.cos(y)
    xi_prev = psi_prev - 1j * chi_prev
    xi = psi - 1j * chi

    qext = np.zeros(y.shape)
    qsca = np.zeros(y.shape)
    back = np.zeros(y.shape, dtype=complex)
    for n in range(1, nmax + 1):
        # ψₙ, ξₙ of the outer argument
        psi_new = (2 * n - 1) / y * psi - psi_prev
        chi_new = (2 * n - 1) / y * chi - chi_prev
        psi_prev, psi = psi, psi_new
        chi_prev, chi = chi, chi_new
        xi_prev, xi = xi, psi - 1j * chi

        # D3ₙ at z1, z2 and Qₙ, from the (n−1) values
        q = q * ratio2 * ((z2 * d1z2[n] + n) * (n - z2 * d3z2)) / ((z1 * d1z1[n] + n) * (n - z1 * d3z1))
        pxz1 = pxz1 * (n / z1 - d1z1[n - 1]) * (n / z1 - d3z1)
        pxz2 = pxz2 * (n / z2 - d1z2[n - 1]) * (n / z2 - d3z2)
        d3z1 = d1z1[n] + 1j / pxz1
        d3z2 = d1z2[n] + 1j / pxz2

        # Log derivative of the shell's radial function at the outer surface, for the
        # electric (a) and magnetic (b) modes, from the condition set by the core.
        ga = (ms / mc) * d1c[n]
        gb = (mc / ms) * d1c[n]
        ha = (d1z2[n] * (d3z1 - ga) - q * (d1z1[n] - ga) * d3z2) / ((d3z1 - ga) - q * (d1z1[n] - ga))
        hb = (d1z2[n] * (d3z1 - gb) - q * (d1z1[n] - gb) * d3z2) / ((d3z1 - gb) - q * (d1z1[n] - gb))

        ta = ha / ms + n / y
        tb = ms * hb + n / y
        an = (ta * psi - psi_prev) / (ta * xi - xi_prev)
        bn = (tb * psi - psi_prev) / (tb * xi - xi_prev)

        live = n <= nstop  # terms past an element's own cut-off are left out (and may be nan)
        fac = 2 * n + 1
        qext += np.where(live, fac * (an.real + bn.real), 0.0)
        qsca += np.where(live, fac * (np.abs(an) ** 2 + np.abs(bn) ** 2), 0.0)
        back += np.where(live, fac * (-1) ** n * (an - bn), 0.0)
    return 2 * qext / y ** 2, 2 * qsca / y ** 2, np.abs(back) ** 2 / y ** 2


def coated_efficiencies(m_core, m_shell, x_core, x_shell):
    """Efficiencies of a sphere with a concentric core and shell.

    Parameters
    ----------
    m_core, m_shell : complex or array_like
        Refractive indices n + ik (k ≥ 0) of core and shell relative to the medium.
    x_core, x_shell : float or array_like
        Size parameters 2πa/λ of the core radius and of the outer radius
        (0 < x_core ≤ x_shell). All inputs broadcast together.

    Returns
    -------
    q_ext, q_sca, q_abs, q_back : ndarray
        Efficiencies referred to the outer cross-section π b².

    Notes
    -----
    Coefficients aₙ, bₙ have the homogeneous-sphere form with the logarithmic
    derivative Dₙ(m x) replaced by that of the shell function
    ψₙ(m₂kr) + Cₙ ξₙ(m₂kr), whose constant Cₙ follows from matching the core at the
    inner interface (B&H 1983 eq. 8.2, rewritten in ratios). Series cut off at
    n_stop = y + 4y^(1/3) + 2 (B&H App. B).
    """
    mc, ms, x, y = np.broadcast_arrays(np.asarray(m_core, dtype=complex),
                                       np.asarray(m_shell, dtype=complex),
                                       np.asarray(x_core, dtype=float),
                                       np.asarray(x_shell, dtype=float))
    shape = y.shape
    mc, ms, x, y = (a.ravel() for a in (mc, ms, x, y))
    if np.any(mc.imag < 0) or np.any(ms.imag < 0):
        raise DustError("coated_efficiencies expects m = n + ik with k ≥ 0")
    if np.any(~(y > 0)) or np.any(~(x > 0)) or np.any(x > y * (1 + 1e-12)):
        raise DustError("coated sphere needs 0 < x_core ≤ x_shell")
    x = np.minimum(x, y)
    nstop = np.floor(y + 4.0 * np.cbrt(y) + 2.0).astype(int)
    order = np.argsort(nstop, kind="stable")
    out = [np.empty(y.size) for _ in range(3)]
    with np.errstate(all="ignore"):
        for s in range(0, y.size, _CHUNK):
            idx = order[s:s + _CHUNK]
            nmax = int(nstop[idx].max())
            res = _coefficients_chunk(mc[idx], ms[idx], x[idx], y[idx], nmax, nstop[idx])
            for o, r in zip(out, res):
                o[idx] = r
    qext, qsca, qback = (o.reshape(shape) for o in out)
    if not (np.all(np.isfinite(qext)) and np.all(np.isfinite(qsca))):
        raise DustError("coated-sphere series did not converge (non-finite efficiency)")
    return qext, qsca, qext - qsca, qback


def hollow_sphere_radii(radius, vacuum_fraction):
    """Outer and core radius (µm) of a hollow sphere holding the material of a solid
    sphere of radius ``radius`` (µm), with vacuum volume fraction f of the whole:
    b = a (1 − f)^(−1/3), core = b f^(1/3)."""
    f = np.asarray(vacuum_fraction, dtype=float)
    outer = radius / np.cbrt(1.0 - f)
    return outer, outer * np.cbrt(f)


def dhs_cabs_per_volume(m, radius, wavelength, f_max=0.8, n_fractions=12):
    """Absorption per unit material volume of a distribution of hollow spheres.

    Parameters
    ----------
    m : complex or array_like
        Refractive index n + ik (k ≥ 0) of the grain material at each wavelength.
    radius : float
        Volume-equivalent radius of the material, µm (every hollow sphere in the
        distribution holds the same mass as a solid sphere of this radius).
    wavelength : array_like
        Wavelengths in µm.
    f_max : float
        Largest vacuum volume fraction (Min et al. 2005, A&A 432, 909 use 0.8).
    n_fractions : int
        Gauss–Legendre nodes of the average over f.

    Returns
    -------
    ndarray
        ⟨C_abs⟩/V_material in cm⁻¹.

    Notes
    -----
    ⟨C_abs⟩ = (1/f_max) ∫₀^{f_max} C_abs(f) df, uniform in the vacuum fraction f, each
    C_abs from a coated sphere with a vacuum core (m = 1) and a shell of the material.
    """
    a = float(radius)
    if not (np.isfinite(a) and a > 0):
        raise DustError(f"grain radius {radius!r} µm: expected > 0")
    if not 0.0 <= f_max < 1.0:
        raise DustError(f"DHS f_max = {f_max!r}: expected 0 ≤ f_max < 1")
    lam = np.asarray(wavelength, dtype=float)
    m = np.broadcast_to(np.asarray(m, dtype=complex), lam.shape)
    if f_max == 0.0:
        return mie_cabs_per_volume(m, a, lam)
    nodes, weights = np.polynomial.legendre.leggauss(int(n_fractions))
    f = 0.5 * f_max * (nodes + 1.0)
    w = 0.5 * weights  # ∫₀^{f_max} df / f_max ↔ Σ w_i
    outer, core = hollow_sphere_radii(a, f)
    k = 2.0 * np.pi / lam
    xs = k[..., None] * outer
    xc = k[..., None] * core
    qabs = coated_efficiencies(1.0 + 0j, m[..., None], xc, xs)[2]
    cabs = qabs * np.pi * outer ** 2  # µm²
    volume = 4.0 / 3.0 * np.pi * a ** 3  # µm³
    return (cabs @ w) / volume / _UM_TO_CM
