"""What each dust species of each ring adds to the spectrum and to the correlated flux.

A ring's dust is a mixture of species s with mass fractions f_s. Its optical depth is
τ = Σ_s τ_s with τ_s = f_s κ_s Σ / cos i, the same radial profile for every species, so the
species' shares of the absorbed and re-emitted light are fixed at each wavelength. The
engine's intensity of a ring is I = (Σ_s τ_s B_ν(T_s)/τ)(1 − e^{−τ}); species s emits
I_s = (τ_s B_ν(T_s)/τ)(1 − e^{−τ}), and the I_s add up to I at every radius.

Here each species' share of its ring is taken from the species alone, optically thin (the
ring with only species s at a small surface density ∝ f_s Σ and the same inner edge, so
its flux is ∝ f_s κ_s B_ν(T_s)): share_s(λ) = F_s,alone / Σ_s' F_s',alone. The species' flux
is share_s × the ring's flux, and its coherent flux share_s × the ring's coherent flux
F_ring V_ring on the data's (u, v), so the parts add up to the ring exactly. With a
power-law temperature (every species at the same T(r)) this is exact; in an equilibrium
ring, where the species' temperatures differ with radius, it is the share of the ring's
emission each species would have, a close approximation that the figures name as
"share". A ring whose inner edge follows the sublimation front is resolved first, so
every species starts where the whole ring does.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .scene import ring_labels

__all__ = ["SpeciesPart", "species_parts", "species_spectra", "species_coherent_flux"]


@dataclass(frozen=True)
class SpeciesPart:
    """One species of one ring, as a ring of its own.

    Attributes
    ----------
    ring_index : int
        The ring in the scene.
    ring_label : str
        The ring's display name (:func:`~diskexplorer.observables.scene.ring_labels`).
    species : str
        The species (its part name in the mixture).
    fraction : float
        Its mass fraction in the ring's dust.
    ring : Ring
        The part as a ring: the species alone at surface density fraction × Σ.
    """

    ring_index: int
    ring_label: str
    species: str
    fraction: float
    ring: object

    @property
    def label(self):
        """``"ring: species"``, e.g. ``"inner: iron"``."""
        return f"{self.ring_label}: {self.species}"


def species_parts(scene, rings=None):
    """The species parts of the scene's dusty rings, ring by ring, species in mixture order.

    Parameters
    ----------
    scene : Scene
    rings : iterable of int, optional
        Only these rings (default: every enabled ring with a dust mixture).

    Returns
    -------
    list of SpeciesPart
        Empty for rings without dust (optically thick blackbody rings) or whose dust
        lies wholly beyond its sublimation front.
    """
    labels = ring_labels(scene.rings)
    wanted = set(range(len(scene.rings))) if rings is None else set(rings)
    out = []
    for k, ring in enumerate(scene.rings):
        if k not in wanted or ring.dust is None or not getattr(ring, "enabled", True):
            continue
        whole = ring.resolved(scene.star)
        if whole is None:
            continue
        for part in whole.species():
            if part.opacity is None or part.fraction <= 0.0:
                continue
            alone = replace(whole, dust=part.opacity, sigma_in=whole.sigma_in * part.fraction, name=part.name)
            out.append(SpeciesPart(k, labels[k], part.name, float(part.fraction), alone))
    return out


def _alone(scene, ring):
    """The scene with its star and this one ring (no other ring, no extended emission)."""
    return scene.replace(rings=(ring,), extended_fraction=0.0)


#: Surface densities are scaled by this for the shares: every species alone is then
#: optically thin (its flux ∝ f_s κ_s B_s), whatever the ring's own optical depth.
THIN = 1e-8


def _shares(scene, parts, lam, bw):
    """Each part's share of its ring's flux at ``lam`` (0 where the ring emits nothing)."""
    alone = {p.label: _alone(scene, replace(p.ring, sigma_in=p.ring.sigma_in * THIN)).sed_components(lam, bw)[
        p.ring.name] for p in parts}
    totals = {}
    for p in parts:
        totals[p.ring_index] = totals.get(p.ring_index, 0.0) + alone[p.label]
    with np.errstate(invalid="ignore", divide="ignore"):
        return {p.label: np.where(totals[p.ring_index] > 0, alone[p.label] / totals[p.ring_index], 0.0)
                for p in parts}


def species_spectra(scene, wavelength, bandwidth=None, rings=None):
    """Flux density of each species of each dusty ring, Jy (its share of the ring's flux).

    Parameters
    ----------
    scene : Scene
    wavelength : array_like
        µm.
    bandwidth : array_like, optional
        Channel widths, µm (channel means, as :meth:`Scene.sed_components`).
    rings : iterable of int, optional
        Only the parts of these rings.

    Returns
    -------
    dict
        ``part.label`` → flux density (Jy) of the shape of ``wavelength``; the parts of a
        ring add up to the ring's flux.
    """
    parts = species_parts(scene, rings)
    if not parts:
        return {}
    comps = scene.sed_components(wavelength, bandwidth)
    shares = _shares(scene, parts, wavelength, bandwidth)
    return {p.label: shares[p.label] * comps[p.ring_label] for p in parts}


def species_coherent_flux(scene, u, v, wavelength, bandwidth=None, rings=None):
    """Complex coherent flux of each species of each dusty ring on (u, v), Jy.

    Parameters
    ----------
    scene : Scene
    u, v : array_like
        Baselines, m.
    wavelength : array_like
        µm, broadcast against ``u`` and ``v``.
    bandwidth : array_like, optional
        Channel widths, µm.
    rings : iterable of int, optional
        Only the parts of these rings.

    Returns
    -------
    dict
        ``part.label`` → complex coherent flux (Jy) of the broadcast shape: the species'
        share of its ring's coherent flux F_ring V_ring (the coherent flux of the star
        with that ring, less the star's own). Its modulus is what the species adds to the
        correlated flux; the parts of a ring add up to the ring's coherent flux.
    """
    u, v, lam = np.broadcast_arrays(np.asarray(u, float), np.asarray(v, float), np.asarray(wavelength, float))
    bw = None if bandwidth is None else np.broadcast_to(np.asarray(bandwidth, float), lam.shape)
    parts = species_parts(scene, rings)
    if not parts:
        return {}

    def coherent(s):
        return s.visibility(u, v, lam, bw) * s.sed(lam, bw)

    star = coherent(scene.replace(rings=(), extended_fraction=0.0))
    ring_coherent = {k: coherent(_alone(scene, scene.rings[k])) - star for k in {p.ring_index for p in parts}}
    shares = _shares(scene, parts, lam, bw)
    return {p.label: shares[p.label] * ring_coherent[p.ring_index] for p in parts}
