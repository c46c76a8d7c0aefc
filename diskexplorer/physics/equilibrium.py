"""Optically thin radiative equilibrium of dust grains in the star's light.

A grain of species s at distance r from a star of luminosity L absorbs
π a² Q_abs,* L/(4π r²) and emits 4π a² Q_abs,P(T) σT⁴; per unit mass, with the mass
absorption coefficients κ,

    σ T_s⁴ κ_P,s(T_s) = L κ_*,s / (16 π r²),

where κ_P,s(T) = ∫ κ_ν B_ν(T) dν / ∫ B_ν(T) dν is the Planck mean at the grain's own
temperature and κ_*,s = ∫ κ_ν F_ν,* dν / ∫ F_ν,* dν the mean over the star's spectrum
(its photosphere table when it has one, else the blackbody of T_eff). This is the
balance of absorbed and emitted power of an isolated grain in an optically thin
medium, as in Spitzer (1978, *Physical Processes in the Interstellar Medium*, Wiley,
§9.1) and Draine (2011, *Physics of the Interstellar and Intergalactic Medium*,
Princeton, ch. 24) — the citations and section numbers are FROM MEMORY; the same balance
gives the sublimation-radius relation R_s = √(Q_R L/(16πσT_s⁴)) of Monnier &
Millan-Gabet (2002, ApJ 579, 694, eq. 1, FROM MEMORY) with Q_R = κ_*/κ_P(T_s)
(``tests/reference/CHECK_VALUES.md`` §4). Grey grains (κ_* = κ_P) obey
σT⁴ = L/(16πr²): T ∝ r^(−1/2).

Assumptions: the grain sees the star's direct light, undiminished (optically thin
heating: an optically thick inner rim would shadow what lies behind it, and that is
ignored here), no heating by other dust, no scattering.

Numerics: both means are trapezoid sums in ln λ over a fixed log grid (0.01–10⁵ µm, 160
nodes per decade) joined by the opacity's own nodes when it tells them
(``wavelength_nodes``), so κ at each tabulated wavelength enters the sum; below the
shortest of those nodes κ is held constant (see :func:`stellar_mean`). κ_P(T) is
tabulated once per opacity on :data:`TEMPERATURE_GRID` and interpolated by a cubic
spline in ln κ_P – ln T (linear in log-log beyond the grid); the balance is solved by
inverting the monotonic tabulated left side (linear interpolation) and polishing with
Newton steps on the spline until the relative power imbalance is below 1e-12.
"""
from __future__ import annotations

import functools
import hashlib
import math

import numpy as np
from scipy.interpolate import CubicSpline

from ..errors import DustError, ParameterError
from .constants import AU_M, C, L_SUN_W, SIGMA_SB
from .planck import planck_nu

__all__ = [
    "TEMPERATURE_GRID", "quadrature_wavelengths", "planck_mean", "planck_mean_direct", "stellar_mean",
    "heating", "grey_temperature", "equilibrium_temperature", "equilibrium_sublimation_radius",
    "power_balance",
]

#: Temperatures (K) on which κ_P(T) is tabulated per opacity.
TEMPERATURE_GRID = np.geomspace(10.0, 10000.0, 360)

# Log grid of the quadrature: 0.01 µm holds a 30 000 K photosphere (x = hc/λkT = 48 there)
# and 10⁵ µm the Rayleigh–Jeans tail of 10 K dust (≈ 2e-7 of ∫B_ν beyond).
_BASE_WAVELENGTHS = np.geomspace(0.01, 1e5, 7 * 160 + 1)
_LN_T = np.log(TEMPERATURE_GRID)
_LN_T_STEP = (_LN_T[-1] - _LN_T[0]) / (_LN_T.size - 1)


def _opacity_nodes(opacity):
    nodes = getattr(opacity, "wavelength_nodes", None)
    if nodes is None:
        return None
    nodes = np.asarray(nodes, float)
    return nodes[(nodes > _BASE_WAVELENGTHS[0]) & (nodes < _BASE_WAVELENGTHS[-1])]


@functools.lru_cache(maxsize=8)
def _quadrature(fingerprint, nodes_bytes):
    extra = np.frombuffer(nodes_bytes, dtype=float)
    lam = np.unique(np.concatenate([_BASE_WAVELENGTHS, extra]))
    x = np.log(lam)
    dx = np.diff(x)
    w = np.zeros_like(lam)
    w[:-1] += 0.5 * dx
    w[1:] += 0.5 * dx
    # ∫ f dν = ∫ f ν d(ln λ): trapezoid weights in ln λ times ν (Hz).
    w *= C / (lam * 1e-6)
    planck = planck_nu(lam[None, :], TEMPERATURE_GRID[:, None]) * w[None, :]
    norm = planck.sum(axis=1)
    for a in (lam, w, planck, norm):
        a.flags.writeable = False
    return lam, w, planck, norm


def quadrature_wavelengths(opacity=None):
    """The quadrature of the means for ``opacity``: (λ µm, weights Hz, B table, Σ B w).

    The weights make Σ w f ≈ ∫ f dν for a function f of λ (trapezoid in ln λ); the B
    table is B_ν(T, λ) w on :data:`TEMPERATURE_GRID` × λ and the last item its row sums.
    """
    extra = _opacity_nodes(opacity)
    data = b"" if extra is None else np.ascontiguousarray(extra).tobytes()
    key = hashlib.blake2b(data, digest_size=16).hexdigest()
    return _quadrature(key, data)


def _kappa_on(opacity, lam):
    nodes = getattr(opacity, "wavelength_nodes", None)
    if nodes is not None:
        # Below the shortest tabulated wavelength κ is held at its value there: the
        # library's power-law extension rises without bound in the ultraviolet (enstatite
        # glass: 4.5e7 cm² g⁻¹ at 0.1 µm, far above the geometric limit ~6e4 of 0.1 µm
        # grains), and κ_* of hot stars would follow it.
        lam = np.maximum(lam, float(np.min(nodes)))
    k = np.asarray(opacity.kappa(lam), float)
    if k.shape != np.shape(lam) or not np.all(np.isfinite(k)) or np.any(k < 0):
        raise DustError(f"dust {getattr(opacity, 'label', opacity)!r}: κ must be finite and ≥ 0 cm2/g "
                        f"over {lam[0]:g}–{lam[-1]:g} µm to form its Planck mean")
    return k


class _PlanckMeanTable:
    """ln κ_P against ln T for one opacity, with its spline and the balance's left side."""

    def __init__(self, opacity):
        lam, _, planck, norm = quadrature_wavelengths(opacity)
        kap = _kappa_on(opacity, lam)
        mean = (planck @ kap) / norm
        label = getattr(opacity, "label", repr(opacity))
        if not np.all(mean > 0):
            raise DustError(f"dust {label!r}: its Planck-mean κ vanishes at some temperature in "
                            f"{TEMPERATURE_GRID[0]:g}–{TEMPERATURE_GRID[-1]:g} K")
        self.log_kappa = np.log(mean)
        spline = CubicSpline(_LN_T, self.log_kappa)
        # The spline's piecewise coefficients, evaluated here with numpy (two scipy calls per
        # Newton step cost more than the whole step on the few hundred nodes of a ring).
        self.coefficients = np.ascontiguousarray(spline.c.T)      # (n − 1, 4), highest power first
        d = spline.derivative()
        self.slopes = (float(d(_LN_T[0])), float(d(_LN_T[-1])))
        # Left side of the balance, ln(T⁴ κ_P(T)), which must rise with T to invert it.
        self.left = 4.0 * _LN_T + self.log_kappa
        if np.any(np.diff(self.left) <= 0):
            bad = TEMPERATURE_GRID[1:][np.diff(self.left) <= 0][0]
            raise DustError(f"dust {label!r}: T⁴ κ_P(T) does not increase with T near {bad:.4g} K, "
                            "so the equilibrium temperature is not unique")

    def log_kappa_at(self, ln_t):
        """ln κ_P and d ln κ_P / d ln T at ``ln_t`` (spline inside, log-log lines outside)."""
        ln_t = np.asarray(ln_t, float)
        lo, hi = _LN_T[0], _LN_T[-1]
        inside = np.clip(ln_t, lo, hi)
        i = np.minimum(((inside - lo) / _LN_T_STEP).astype(np.intp), _LN_T.size - 2)
        dx = inside - _LN_T[i]
        c = self.coefficients[i]
        value = ((c[..., 0] * dx + c[..., 1]) * dx + c[..., 2]) * dx + c[..., 3]
        slope = (3.0 * c[..., 0] * dx + 2.0 * c[..., 1]) * dx + c[..., 2]
        if ln_t.size == 0 or (ln_t.min() >= lo and ln_t.max() <= hi):
            return value, slope
        below, above = ln_t < lo, ln_t > hi
        if np.any(below):
            value = np.where(below, self.log_kappa[0] + self.slopes[0] * (ln_t - lo), value)
            slope = np.where(below, self.slopes[0], slope)
        if np.any(above):
            value = np.where(above, self.log_kappa[-1] + self.slopes[1] * (ln_t - hi), value)
            slope = np.where(above, self.slopes[1], slope)
        return value, slope


@functools.lru_cache(maxsize=256)
def _table(opacity):
    return _PlanckMeanTable(opacity)


def planck_mean(opacity, temperature):
    """Planck-mean absorption κ_P(T) in cm² g⁻¹ from the cached table.

    Parameters
    ----------
    opacity : Opacity
        Anything with ``kappa(λ µm)`` in cm² g⁻¹ (hashable: the table is cached by it).
    temperature : array_like
        Grain temperature in K.

    Returns
    -------
    ndarray
        κ_P = ∫ κ_ν B_ν(T) dν / ∫ B_ν(T) dν, cm² g⁻¹.
    """
    t = np.asarray(temperature, float)
    return np.exp(_table(opacity).log_kappa_at(np.log(t))[0])


def planck_mean_direct(opacity, temperature):
    """κ_P(T) in cm² g⁻¹ by the quadrature itself at each ``temperature`` (K), no table (slow)."""
    lam, w, _, _ = quadrature_wavelengths(opacity)
    kap = _kappa_on(opacity, lam)
    t = np.atleast_1d(np.asarray(temperature, float))
    b = planck_nu(lam[None, :], t[:, None]) * w[None, :]
    return ((b @ kap) / b.sum(axis=1)).reshape(np.shape(temperature))


def _star_spectrum(star, lam):
    """F_ν of the star at ``lam`` (any scale): the photosphere table or B_ν(T_eff)."""
    if star.photosphere is not None:
        return np.asarray(star.photosphere.flux_at(lam, star.photosphere.reference_distance), float)
    return planck_nu(lam, star.t_eff)


@functools.lru_cache(maxsize=256)
def _stellar_mean(opacity, t_eff, photosphere):
    lam, w, _, _ = quadrature_wavelengths(opacity)
    from .star import Star  # the spectrum's shape only: luminosity does not enter
    star = Star(t_eff=t_eff, radius=1.0, photosphere=photosphere)
    f = _star_spectrum(star, lam) * w
    return float(f @ _kappa_on(opacity, lam) / f.sum())


def stellar_mean(opacity, star):
    """κ_* in cm² g⁻¹: κ averaged over the star's spectrum F_ν (photosphere table or blackbody).

    Notes
    -----
    κ_* = ∫ κ_ν F_ν,* dν / ∫ F_ν,* dν on the quadrature of :func:`quadrature_wavelengths`.
    Below the opacity's shortest tabulated wavelength (0.3 µm for the library) κ is held
    at its value there, not extended as a power law; beyond the longest it follows the
    opacity's own extension. Stars above ~10 000 K, whose light lies largely below
    0.3 µm, depend on that choice.
    """
    return _stellar_mean(opacity, float(star.t_eff), star.photosphere)


def heating(star, r):
    """L/(16 π r²) in W m⁻² at radii ``r`` (au): the right side of the balance per unit κ_*."""
    if star is None:
        raise ParameterError("equilibrium temperatures need a star: the scene has none")
    lum = star.luminosity * L_SUN_W
    r_m = np.asarray(r, float) * AU_M
    return lum / (16.0 * math.pi * r_m * r_m)


def grey_temperature(star, r):
    """Equilibrium temperature in K of grey grains (κ_* = κ_P): (L/(16πσr²))^(1/4), r in au."""
    return (heating(star, r) / SIGMA_SB) ** 0.25


def equilibrium_temperature(opacity, star, r, iterations=2):
    """Optically thin equilibrium temperature T_s(r) in K of grains of ``opacity``.

    Parameters
    ----------
    opacity : Opacity or None
        The grains' κ_abs(λ) (hashable); ``None`` means grey (a blackbody surface).
    star : Star
        The heating star: luminosity and spectrum.
    r : array_like
        Distance from the star in au (> 0).
    iterations : int
        Newton steps after the interpolated first guess (quadratic convergence: the guess
        is within ~1e-4 in ln T, two steps reach rounding).

    Returns
    -------
    ndarray
        T_s in K, shape of ``r``, solving σ T⁴ κ_P(T) = L κ_* / (16 π r²).

    Raises
    ------
    DustError
        If the opacity's κ_P is not positive or T⁴κ_P(T) does not rise with T.
    ParameterError
        If there is no star.
    """
    if opacity is None:
        return grey_temperature(star, r)
    tab = _table(opacity)
    target = np.log(heating(star, r) * stellar_mean(opacity, star) / SIGMA_SB)
    # First guess: invert the monotonic left side, extended linearly beyond the grid.
    left = tab.left
    ln_t = np.interp(target, left, _LN_T)
    lo, hi = target < left[0], target > left[-1]
    if np.any(lo):
        ln_t = np.where(lo, _LN_T[0] + (target - left[0]) / (4.0 + tab.slopes[0]), ln_t)
    if np.any(hi):
        ln_t = np.where(hi, _LN_T[-1] + (target - left[-1]) / (4.0 + tab.slopes[1]), ln_t)
    for _ in range(int(iterations)):
        value, slope = tab.log_kappa_at(ln_t)
        ln_t = ln_t - (4.0 * ln_t + value - target) / (4.0 + slope)
    return np.exp(ln_t)


def power_balance(opacity, star, r, temperature):
    """Relative imbalance (emitted − absorbed)/absorbed per unit mass, from the tabulated κ_P.

    Emitted: 4 σ T⁴ κ_P(T); absorbed: κ_* L/(4π r²) (both W g⁻¹ × cm² … per unit mass,
    the common factor dropped). Zero at the equilibrium temperature.
    """
    kp = 1.0 if opacity is None else planck_mean(opacity, temperature)
    ks = 1.0 if opacity is None else stellar_mean(opacity, star)
    emitted = SIGMA_SB * np.asarray(temperature, float) ** 4 * kp
    absorbed = heating(star, r) * ks
    return emitted / absorbed - 1.0


def equilibrium_sublimation_radius(opacity, star, t_sub):
    """Radius in au where grains of ``opacity`` reach ``t_sub`` (K) in equilibrium.

    Notes
    -----
    R_s = √(Q_R L / (16 π σ T_s⁴)) with Q_R = κ_* / κ_P(T_s) (1 for grey grains,
    ``opacity=None``): the balance solved for r at T = T_s.
    """
    t_sub = np.asarray(t_sub, float)
    q_r = 1.0 if opacity is None else stellar_mean(opacity, star) / planck_mean(opacity, t_sub)
    if star is None:
        raise ParameterError("a sublimation radius needs a star: the scene has none")
    lum = star.luminosity * L_SUN_W
    return np.sqrt(q_r * lum / (16.0 * math.pi * SIGMA_SB * t_sub**4)) / AU_M
