"""Radial quadrature and the spatial-frequency grid of the visibility engine."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["radial_nodes", "frequency_grid", "cubic_weights"]

# Log panels no wider than this ratio keep power laws and the Wien tail smooth per panel.
_MAX_PANEL_RATIO = 1.25
# A panel spans at most this many cycles of J0(2π θ ρ_max); with 8 Gauss-Legendre nodes
# per panel the oscillatory integral converges far below 1e-5.
_MAX_CYCLES_PER_PANEL = 0.5
_NODES_PER_PANEL = 8
_GL = {}


def _gauss_legendre(n):
    if n not in _GL:
        _GL[n] = np.polynomial.legendre.leggauss(n)
    return _GL[n]


def radial_nodes(r_in, r_out, rad_per_au, rho_max, accuracy=1, breaks=()):
    """Composite Gauss–Legendre nodes across a ring.

    Parameters
    ----------
    r_in, r_out : float
        Ring edges in au.
    rad_per_au : float
        Angular size of 1 au at the scene distance, in radians.
    rho_max : float
        Largest spatial frequency to be resolved, in rad⁻¹ (cycles per radian).
    accuracy : int
        Multiplies the number of nodes per panel (convergence studies).
    breaks : sequence of float
        Radii in au inside (r_in, r_out) where the intensity jumps (a species' sublimation
        front): panels end there, so no Gauss–Legendre panel straddles the step.

    Returns
    -------
    r : ndarray
        Node radii in au.
    theta : ndarray
        Node angular radii in rad.
    area : ndarray
        Quadrature weights of 2π θ dθ in sr, so that Σ area·I = ∫ I 2π θ dθ.
    """
    cuts = [r_in] + sorted(b for b in breaks if r_in < b < r_out) + [r_out]
    edges = np.concatenate([_log_edges(a, b)[:-1] for a, b in zip(cuts[:-1], cuts[1:])] + [[r_out]])
    cycles = np.diff(edges) * rad_per_au * max(rho_max, 0.0)
    n_sub = np.maximum(1, np.ceil(cycles / _MAX_CYCLES_PER_PANEL)).astype(int)
    panels = np.concatenate([np.linspace(a, b, k + 1)[:-1] for a, b, k in zip(edges[:-1], edges[1:], n_sub)]
                            + [edges[-1:]])
    x, w = _gauss_legendre(_NODES_PER_PANEL * int(accuracy))
    lo, hi = panels[:-1, None], panels[1:, None]
    r = (0.5 * (hi - lo) * x[None, :] + 0.5 * (hi + lo)).ravel()
    dr = (0.5 * (hi - lo) * w[None, :]).ravel()
    theta = r * rad_per_au
    area = 2.0 * math.pi * theta * dr * rad_per_au
    return r, theta, area


def _log_edges(r_in, r_out):
    n_log = max(1, math.ceil(math.log(r_out / r_in) / math.log(_MAX_PANEL_RATIO)))
    return np.geomspace(r_in, r_out, n_log + 1)


def frequency_grid(theta_max, rho_max, accuracy=1):
    """Uniform spatial-frequency grid for the Hankel transforms.

    Parameters
    ----------
    theta_max : float
        Largest angular radius in the scene, rad.
    rho_max : float
        Largest spatial frequency of the sampling, rad⁻¹.
    accuracy : int
        Multiplies the number of grid points per cycle.

    Returns
    -------
    step : float
        Grid step h in rad⁻¹. The grid is ρ_m = (m − 1) h, m = 0 … n − 1: one node
        below zero lets cubic interpolation use the symmetry of J0 (even) and J1 (odd).
    n : int
        Number of grid nodes.

    Notes
    -----
    48 points per cycle of J0(2π θ_max ρ) bound the four-point Lagrange error near
    1e-5 of the kernel amplitude. θ_max is first rounded up on a ladder of factors
    1.25 so that dragging the outer radius does not rebuild the grid on every step.
    """
    theta_max = max(theta_max, 1e-15)
    ladder = 1.25 ** math.ceil(math.log(theta_max) / math.log(1.25))
    step = 1.0 / (ladder * 48 * int(accuracy))
    n = int(math.ceil(max(rho_max, step) / step)) + 4
    return step, n


def cubic_weights(rho, step):
    """Indices and weights of four-point Lagrange interpolation on the grid of :func:`frequency_grid`.

    Parameters
    ----------
    rho : ndarray
        Spatial frequencies (≥ 0) in rad⁻¹.
    step : float
        Grid step h.

    Returns
    -------
    index : ndarray of int, shape (n, 4)
        Grid indices (offset by the node at −h).
    weight : ndarray, shape (n, 4)
    """
    t = np.asarray(rho, dtype=float) / step
    i = np.floor(t)
    f = t - i
    i = i.astype(np.int64)
    index = (i + 1)[:, None] + np.arange(-1, 3)[None, :]
    fm1, fp1, fm2 = f - 1.0, f + 1.0, f - 2.0
    weight = np.stack([-f * fm1 * fm2 / 6.0,
                       fp1 * fm1 * fm2 / 2.0,
                       -fp1 * f * fm2 / 2.0,
                       fp1 * f * fm1 / 6.0], axis=1)
    return index, weight
