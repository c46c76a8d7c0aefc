"""Predict every observable of a data set at once, on shared cached evaluators."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .engine import Evaluator, Sampling
from .scene import ring_labels

__all__ = ["Observer", "Prediction"]


@dataclass
class Prediction:
    """Model values at the data's sampling.

    Attributes
    ----------
    vis : ndarray (complex)
        Complex visibility at the V²/VIS points.
    vis2 : ndarray
        |V|² at those points.
    t3 : ndarray (complex)
        Triple products of the triangles.
    t3phi : ndarray
        Closure phases in degrees.
    flux_at_vis : ndarray
        Total flux density (Jy) at the wavelength of each V² point (for correlated flux).
    sed : dict of ndarray
        Flux densities in Jy per component at the SED wavelengths ("star", ring names,
        "extended", "total").
    """

    vis: np.ndarray
    vis2: np.ndarray
    t3: np.ndarray
    t3phi: np.ndarray
    flux_at_vis: np.ndarray
    sed: dict

    @property
    def correlated_flux(self):
        """|V| F_total in Jy at the V² points."""
        return np.abs(self.vis) * self.flux_at_vis


class Observer:
    """Binds the sampling of a data set; ``observe(scene)`` predicts everything.

    Parameters
    ----------
    u, v, wavelength : array_like, optional
        Points of squared visibilities (or complex visibilities): m, m, µm.
    u1, v1, u2, v2, t3_wavelength : array_like, optional
        Triangles: baselines AB and BC in m (OIFITS convention), wavelengths in µm.
    sed_wavelength : array_like, optional
        Wavelengths in µm of photometry and spectra.
    accuracy : int
        Passed to the evaluators.

    Notes
    -----
    V² points and the three baselines of every triangle share one evaluator, so a
    change of one ring costs one transform per ring for all interferometric data; the
    SED uses a separate evaluator at zero baseline, whose frequency grid is trivial.
    """

    def __init__(self, u=(), v=(), wavelength=(), u1=(), v1=(), u2=(), v2=(), t3_wavelength=(),
                 sed_wavelength=(), accuracy=1):
        u, v, wl = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(u, v, wavelength))
        u1, v1, u2, v2, wl3 = (np.asarray(a, float).ravel()
                               for a in np.broadcast_arrays(u1, v1, u2, v2, t3_wavelength))
        self.n_vis, self.n_t3 = u.size, u1.size
        all_u = np.concatenate([u, u1, u2, -u1 - u2])
        all_v = np.concatenate([v, v1, v2, -v1 - v2])
        all_wl = np.concatenate([wl, wl3, wl3, wl3])
        self.interferometric = Evaluator(sampling=Sampling(all_u, all_v, all_wl), accuracy=accuracy) \
            if all_u.size else None
        self.sed_wavelength = np.asarray(sed_wavelength, float).ravel()
        self.photometric = Evaluator(np.zeros(self.sed_wavelength.size), 0.0, self.sed_wavelength,
                                     accuracy=accuracy) if self.sed_wavelength.size else None

    def observe(self, scene) -> Prediction:
        """All predictions for ``scene``."""
        nv, nt = self.n_vis, self.n_t3
        if self.interferometric is not None:
            ev = self.interferometric.evaluate(scene)
            vis = ev.normalised(slice(0, nv))
            ab, bc, ca = (ev.normalised(slice(nv + k * nt, nv + (k + 1) * nt)) for k in range(3))
            t3 = ab * bc
            t3 *= ca
            flux_at_vis = ev.flux_total[ev.wave_index[:nv]]
        else:
            vis = t3 = np.zeros(0, complex)
            flux_at_vis = np.zeros(0)
        sed = {}
        if self.photometric is not None:
            sed = self.photometric.evaluate(scene, fluxes_only=True).components(
                ring_labels(scene.rings), self.photometric.sampling.wave_index)
        vis2 = vis.real * vis.real + vis.imag * vis.imag
        t3phi = np.arctan2(t3.imag, t3.real)
        t3phi *= 180.0 / np.pi
        return Prediction(vis=vis, vis2=vis2, t3=t3, t3phi=t3phi,
                          flux_at_vis=flux_at_vis, sed=sed)
