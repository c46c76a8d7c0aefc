"""Predict every observable of a data set at once, on shared cached evaluators."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .bandpass import ChannelEvaluator, ChannelSampling
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
    bandwidth, t3_bandwidth, sed_bandwidth : array_like or None, optional
        Full widths Δλ in µm of the top-hat channels of the V² points, the triangles and
        the SED wavelengths (broadcast against their wavelengths; 0 is monochromatic).
        ``None`` (default) is monochromatic; a group with widths is evaluated on a
        :class:`~diskexplorer.observables.bandpass.ChannelEvaluator` (channel-averaged
        visibilities, closure phases from them, channel-mean fluxes).
    accuracy : int
        Passed to the evaluators.

    Notes
    -----
    V² points and the three baselines of every triangle share one evaluator, so a
    change of one ring costs one transform per ring for all interferometric data; the
    SED uses a separate evaluator at zero baseline, whose frequency grid is trivial.
    """

    def __init__(self, u=(), v=(), wavelength=(), u1=(), v1=(), u2=(), v2=(), t3_wavelength=(),
                 sed_wavelength=(), accuracy=1, bandwidth=None, t3_bandwidth=None, sed_bandwidth=None):
        banded = bandwidth is not None or t3_bandwidth is not None
        u, v, wl, bw = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(
            u, v, wavelength, 0.0 if bandwidth is None else bandwidth))
        u1, v1, u2, v2, wl3, bw3 = (np.asarray(a, float).ravel() for a in np.broadcast_arrays(
            u1, v1, u2, v2, t3_wavelength, 0.0 if t3_bandwidth is None else t3_bandwidth))
        self.n_vis, self.n_t3 = u.size, u1.size
        all_u = np.concatenate([u, u1, u2, -u1 - u2])
        all_v = np.concatenate([v, v1, v2, -v1 - v2])
        all_wl = np.concatenate([wl, wl3, wl3, wl3])
        if not all_u.size:
            self.interferometric = None
        elif banded:
            self.interferometric = ChannelEvaluator(sampling=ChannelSampling(
                all_u, all_v, all_wl, np.concatenate([bw, bw3, bw3, bw3])), accuracy=accuracy)
        else:
            self.interferometric = Evaluator(sampling=Sampling(all_u, all_v, all_wl), accuracy=accuracy)
        self.sed_wavelength = np.asarray(sed_wavelength, float).ravel()
        n_sed = self.sed_wavelength.size
        if not n_sed:
            self.photometric = None
        elif sed_bandwidth is not None:
            sed_bw = np.broadcast_to(np.asarray(sed_bandwidth, float).ravel(), (n_sed,))
            self.photometric = ChannelEvaluator(np.zeros(n_sed), 0.0, self.sed_wavelength, sed_bw,
                                                accuracy=accuracy)
        else:
            self.photometric = Evaluator(np.zeros(n_sed), 0.0, self.sed_wavelength, accuracy=accuracy)

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
