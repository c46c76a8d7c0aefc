"""The scene: distance, star, rings, viewing geometry, extended component — and its observables."""
from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, replace

import numpy as np

from ..errors import ParameterError
from ..physics.parameters import parameter, validate_parameters
from ..physics.ring import Ring
from ..physics.star import Star
from .bandpass import ChannelEvaluator, ChannelSampling
from .engine import Evaluator, Sampling

__all__ = ["Scene", "evaluator_for"]


@dataclass(frozen=True)
class Scene:
    """A star and its inner disk seen from Earth.

    Parameters
    ----------
    distance : float
        Distance in pc.
    star : Star or None
        The central star; ``None`` studies the disk alone.
    rings : sequence of Ring
        The dust rings (stored as a tuple).
    inclination : float
        Inclination in degrees, 0 (face-on) ≤ i < 90.
    position_angle : float
        Position angle of the major axis in degrees, east of north.
    extended_fraction : float
        Fraction of the total flux, at every wavelength, in a fully resolved component
        (V = 0), 0 ≤ f < 1.

    Notes
    -----
    V = (F★ V★ + Σ_j F_j V_j) / (F★ + Σ_j F_j + F_ext), with F_ext = f/(1−f)(F★ + Σ_j F_j).
    Fourier convention: V(u, v) = ∫ I(x, y) exp(−2πi(u x + v y)) dx dy, x towards East,
    y towards North, u and v as in OIFITS.

    Examples
    --------
    >>> s = Scene(distance=140, star=Star(t_eff=7000, radius=2),
    ...           rings=[Ring(r_in=0.3, r_out=0.6, t_in=1500)], inclination=40, position_angle=30)
    >>> abs(s.visibility(0.0, 0.0, 2.2)) == 1.0
    True
    """

    distance: float = parameter(
        140.0, unit="pc", label="d", description="distance to the star",
        valid=(0, math.inf), bounds=(10.0, 2000.0), scale="log")
    star: object = None
    rings: tuple = ()
    inclination: float = parameter(
        0.0, unit="deg", label="i", description="inclination of the disk (0 = face-on)",
        valid=(0.0, 90.0), closed=(True, False), bounds=(0.0, 85.0))
    position_angle: float = parameter(
        0.0, unit="deg", label="PA", description="position angle of the major axis, east of north",
        valid=(-360.0, 360.0), closed=(True, True), bounds=(0.0, 360.0))
    extended_fraction: float = parameter(
        0.0, unit="", label="f_ext", description="fraction of the total flux that is fully resolved",
        valid=(0.0, 1.0), closed=(True, False), bounds=(0.0, 0.9))

    def __post_init__(self):
        object.__setattr__(self, "rings", tuple(self.rings))
        validate_parameters(self)
        if self.star is not None and not isinstance(self.star, Star):
            raise ParameterError(f"Scene.star must be a Star or None, got {type(self.star).__name__}")
        for k, ring in enumerate(self.rings):
            if not isinstance(ring, Ring):
                raise ParameterError(f"Scene.rings[{k}] must be a Ring, got {type(ring).__name__}")

    # ------------------------------------------------------------------ editing
    def replace(self, **changes) -> "Scene":
        """A copy with ``changes`` applied (validated)."""
        return replace(self, **changes)

    def with_ring(self, index, **changes) -> "Scene":
        """A copy whose ring ``index`` has ``changes`` applied."""
        rings = list(self.rings)
        rings[index] = replace(rings[index], **changes)
        return replace(self, rings=tuple(rings))

    # ------------------------------------------------------------------ temperatures
    def dust_temperature(self, k, r):
        """Temperature of each grain species of ring ``k`` at radii ``r`` (au), in K.

        Returns
        -------
        dict
            {species name: ndarray of T(r) in K}. A power-law ring gives every species
            ``t_in (r/r_in)^(−q)``; an equilibrium ring each species' optically thin
            equilibrium temperature in this scene's star light, NaN where the species is
            absent (hotter than its sublimation temperature). No masking outside the ring.

        Raises
        ------
        ParameterError
            An equilibrium ring in a scene without a star.
        """
        ring = self.rings[k]
        temps = ring.species_temperatures(r, self.star)
        if not ring.is_equilibrium:
            return temps
        t_sub = ring.sublimation_temperatures()
        return {name: np.where(t <= t_sub[name], t, np.nan) for name, t in temps.items()}

    def sublimation_radii(self, k):
        """{species: sublimation radius in au} of ring ``k``'s dust around this scene's star."""
        return self.rings[k].sublimation_radii(self.star)

    # ------------------------------------------------------------------ observables
    # ``bandwidth`` everywhere: full width Δλ in µm of a top-hat channel centred on the
    # wavelength (scalar or broadcast against it); None (default) is monochromatic. What a
    # channel's observables are is defined in :mod:`diskexplorer.observables.bandpass`.
    def evaluate(self, u, v, wavelength, bandwidth=None):
        """The :class:`~diskexplorer.observables.engine.Evaluation` on a sampling (cached evaluator)."""
        return evaluator_for(u, v, wavelength, bandwidth).evaluate(self)

    def visibility(self, u, v, wavelength, bandwidth=None):
        """Complex normalised visibility.

        Parameters
        ----------
        u, v : array_like
            Baseline coordinates in m (u East, v North).
        wavelength : array_like
            Wavelength in µm; broadcast against ``u`` and ``v``.
        bandwidth : array_like or None
            Full width Δλ in µm of each point's top-hat channel centred on ``wavelength``
            (broadcast against it); ``None`` is monochromatic.

        Returns
        -------
        ndarray of complex, broadcast shape of the inputs.

        Notes
        -----
        With a bandwidth, V = ∫ F_ν V dλ / ∫ F_ν dλ over the channel (the flux-weighted
        coherent average, see :mod:`~diskexplorer.observables.bandpass`).
        """
        return self.evaluate(u, v, wavelength, bandwidth).vis

    def vis2(self, u, v, wavelength, bandwidth=None):
        """Squared visibility |V|² at (u, v) in m and λ in µm (channel of width ``bandwidth`` µm)."""
        return np.abs(self.visibility(u, v, wavelength, bandwidth)) ** 2

    def closure_phase(self, u1, v1, u2, v2, wavelength, bandwidth=None):
        """Closure phase in degrees of triangles given by baselines AB = (u1, v1), BC = (u2, v2) in m.

        arg[V(u1, v1) V(u2, v2) V(−u1−u2, −v1−v2)] (OIFITS convention), in (−180, 180];
        with a ``bandwidth`` (µm) each V is its baseline's channel average.
        """
        return np.degrees(np.angle(self.triple_product(u1, v1, u2, v2, wavelength, bandwidth)))

    def triple_product(self, u1, v1, u2, v2, wavelength, bandwidth=None):
        """Complex triple product V(AB) V(BC) V(CA) of triangles (see :meth:`closure_phase`)."""
        arrays = [u1, v1, u2, v2, wavelength] + ([] if bandwidth is None else [bandwidth])
        u1, v1, u2, v2, lam, *bw = np.broadcast_arrays(*(np.asarray(a, float) for a in arrays))
        us = np.stack([u1, u2, -u1 - u2])
        vs = np.stack([v1, v2, -v1 - v2])
        vis = self.visibility(us, vs, np.stack([lam, lam, lam]),
                              np.stack([bw[0]] * 3) if bw else None)
        return vis[0] * vis[1] * vis[2]

    def correlated_flux(self, u, v, wavelength, bandwidth=None):
        """Correlated flux |V| F_total in Jy at (u, v) in m and λ in µm (channel mean with ``bandwidth``)."""
        evaluator = evaluator_for(u, v, wavelength, bandwidth)
        ev = evaluator.evaluate(self)
        s = evaluator.sampling
        return np.abs(ev.vis) * ev.flux_total[s.wave_index].reshape(s.shape)

    def sed_components(self, wavelength, bandwidth=None):
        """Flux densities in Jy per component at ``wavelength`` (µm).

        With ``bandwidth`` (µm, broadcast against ``wavelength``) each value is the channel
        mean ∫ F_ν dλ / Δλ over a top-hat channel centred on the wavelength.

        Returns
        -------
        dict
            ``"star"``, one entry per ring (by ring name, made unique), ``"extended"``
            and ``"total"``, each an array of the broadcast shape of the inputs.
        """
        if bandwidth is None:
            lam = np.asarray(wavelength, float)
        else:
            lam, bandwidth = np.broadcast_arrays(np.asarray(wavelength, float), np.asarray(bandwidth, float))
        shape = lam.shape
        lam = np.atleast_1d(lam)
        zeros = np.zeros_like(lam)
        evaluator = evaluator_for(zeros, zeros, lam, None if bandwidth is None else np.atleast_1d(bandwidth))
        comps = evaluator.evaluate(self, fluxes_only=True).components(ring_labels(self.rings),
                                                                     evaluator.sampling.wave_index)
        return {k: v.reshape(shape) for k, v in comps.items()}

    def sed(self, wavelength, bandwidth=None):
        """Total flux density F_ν in Jy at ``wavelength`` (µm); channel mean with ``bandwidth`` (µm)."""
        return self.sed_components(wavelength, bandwidth)["total"]


def ring_labels(rings):
    """Unique display names of rings: their names, numbered where repeated."""
    seen, out = {}, []
    for ring in rings:
        n = seen.get(ring.name, 0)
        seen[ring.name] = n + 1
        out.append(ring.name if n == 0 else f"{ring.name} {n + 1}")
    return out


_EVALUATORS = {}
_MAX_EVALUATORS = 8


def _fingerprint(*arrays):
    h = hashlib.blake2b(digest_size=16)
    for a in arrays:
        a = np.ascontiguousarray(a, dtype=float)
        h.update(str(a.shape).encode())
        h.update(a.tobytes())
    return h.hexdigest()


def evaluator_for(u, v, wavelength, bandwidth=None):
    """The shared evaluator for this sampling (kept in a small cache by content).

    An :class:`Evaluator`, or with ``bandwidth`` (channel widths in µm) a
    :class:`~diskexplorer.observables.bandpass.ChannelEvaluator`.
    """
    if bandwidth is None:
        u, v, lam = np.broadcast_arrays(np.asarray(u, float), np.asarray(v, float), np.asarray(wavelength, float))
        key = _fingerprint(u, v, lam)
    else:
        u, v, lam, bw = np.broadcast_arrays(np.asarray(u, float), np.asarray(v, float),
                                            np.asarray(wavelength, float), np.asarray(bandwidth, float))
        key = "band" + _fingerprint(u, v, lam, bw)
    ev = _EVALUATORS.pop(key, None)
    if ev is None:
        ev = (Evaluator(sampling=Sampling(u, v, lam)) if bandwidth is None
              else ChannelEvaluator(sampling=ChannelSampling(u, v, lam, bw)))
    _EVALUATORS[key] = ev
    while len(_EVALUATORS) > _MAX_EVALUATORS:
        _EVALUATORS.pop(next(iter(_EVALUATORS)))
    return ev
