"""Demo material for the explorer: the lead's sample, or a self-made stand-in.

The project's sample (``diskexplorer.sample``) is the intended source of the demo scene
and data. While it is not there, :func:`fallback_demo` builds an invented scene and
synthetic observations from that scene's own predictions, so the explorer can always open
on something.
"""
from __future__ import annotations

import numpy as np

from ..dust import DustMix

__all__ = ["demo_material", "fallback_scene", "fallback_data"]


def _dust(fractions, grain_size=1.5, shape="dhs"):
    return DustMix(fractions, grain_size=grain_size, shape=shape)


def fallback_scene():
    """An invented star with two rings and a gap (distance 140 pc, inclination 35°).

    Returns
    -------
    Scene
    """
    from ..observables.scene import Scene
    from ..physics.ring import Ring
    from ..physics.star import Star

    inner = Ring(r_in=0.35, r_out=0.9, t_in=1450.0, q=0.6, sigma_in=3e-3, p=1.0,
                 dust=_dust({"olivine_glass": 0.6, "forsterite": 0.25, "iron": 0.15}, 1.5),
                 name="inner")
    outer = Ring(r_in=3.0, r_out=8.0, t_in=420.0, q=0.5, sigma_in=1e-3, p=1.0,
                 dust=_dust({"olivine_glass": 0.8, "enstatite_glass": 0.2}, 0.1),
                 name="outer")
    return Scene(distance=140.0, star=Star(t_eff=7600.0, radius=2.1, mass=2.2),
                 rings=(inner, outer), inclination=35.0, position_angle=60.0,
                 extended_fraction=0.03)


def fallback_data(scene=None, seed=1):
    """Synthetic V², closure phases, photometry and an N-band spectrum of ``scene``.

    The "truth" is ``scene`` with a slightly hotter, larger inner ring and a bright
    side, so the starting scene does not fit perfectly. Noise is Gaussian.

    Parameters
    ----------
    scene : Scene, optional
        Defaults to :func:`fallback_scene`.
    seed : int
        Random seed.

    Returns
    -------
    dict
        ``observations`` (ObservationSet), ``photometry`` and ``spectrum`` (xarray.Dataset).
    """
    from ..data.observations import ObservationSet
    from ..data.photometry import photometry_dataset
    from ..data.spectrum import spectrum_dataset
    from ..physics.ring import Ring
    from ..testing import make_observations

    scene = scene or fallback_scene()
    c1, s1 = Ring.modulation(0.3, 50.0)
    truth = scene.with_ring(0, r_in=scene.rings[0].r_in * 1.1, t_in=scene.rings[0].t_in + 80.0,
                            c1=c1, s1=s1) if scene.rings else scene
    rng = np.random.default_rng(seed)
    sets = []
    for band, ntel, nch, ins, noise in (("K", 6, 8, "DEMO-K", 0.02), ("N", 4, 24, "DEMO-N", 0.03)):
        obs = make_observations(n_telescopes=ntel, n_exposures=4, n_channels=nch, band=band,
                                insname=ins, target="DEMO-DISK", noise=noise, seed=seed)
        v2 = obs.vis2
        model = truth.vis2(v2["u"].values, v2["v"].values, v2["wavelength"].values)
        v2 = v2.assign(vis2=("point", model + rng.normal(0, noise, model.shape)),
                       vis2_err=("point", np.full(model.shape, noise)))
        t3 = obs.t3
        cp = truth.closure_phase(t3["u1"].values, t3["v1"].values, t3["u2"].values, t3["v2"].values,
                                 t3["wavelength"].values)
        err = 1.5 if band == "K" else 3.0
        t3 = t3.assign(t3phi=("point", cp + rng.normal(0, err, cp.shape)),
                       t3phi_err=("point", np.full(cp.shape, err)))
        sets.append(ObservationSet(vis2=v2, t3=t3, targets=obs.targets, arrays=obs.arrays,
                                   files=(f"demo-{band}",)))
    observations = ObservationSet.concat(sets)
    phot_wl = np.array([0.44, 0.55, 0.64, 0.79, 1.25, 1.65, 2.2, 3.4, 4.6, 12.0, 22.0, 60.0, 100.0])
    phot = truth.sed(phot_wl)
    photometry = photometry_dataset(phot_wl, phot * (1 + rng.normal(0, 0.05, phot.shape)), 0.08 * phot,
                                    band=["B", "V", "R", "I", "J", "H", "K", "W1", "W2", "W3", "W4",
                                          "F60", "F100"])
    spec_wl = np.linspace(7.6, 13.4, 90)
    spec = truth.sed(spec_wl)
    spectrum = spectrum_dataset(spec_wl, spec * (1 + rng.normal(0, 0.02, spec.shape)), 0.03 * spec)
    return {"observations": observations, "photometry": photometry, "spectrum": spectrum}


def demo_material():
    """The starting scene and data: the project's sample if present, else the stand-in.

    Returns
    -------
    (Scene, dict)
        The scene and a dict with ``observations``, ``photometry``, ``spectrum``.
    """
    from .. import sample

    return sample.demo_scene(), sample.load_sample_data()
