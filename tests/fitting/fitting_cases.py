"""Shared builders for the fitting tests: a two-ring scene and noise-free data from it.

The data are made by our own forward model (Scene.vis2, Scene.closure_phase, Scene.sed)
on an invented (u, v) sampling, so the true scene fits them with χ² = 0.
"""
import numpy as np

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.data import ObservationSet, photometry_dataset

# Free parameters of the recovery test and the perturbation applied to the truth.
FREE = ["rings.0.r_in", "rings.0.t_in", "geometry.inclination", "geometry.position_angle", "rings.1.t_in"]


def true_scene():
    return Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0), rings=[
        Ring(r_in=0.3, r_out=0.6, t_in=1500.0, q=0.5, dust=None, name="inner", c1=0.3, s1=0.2),
        Ring(r_in=1.0, r_out=3.0, t_in=600.0, q=0.5, sigma_in=1e-3, dust=PowerLawOpacity(), name="outer")],
        inclination=40.0, position_angle=30.0)


def perturbed(scene):
    return (scene.with_ring(0, r_in=0.33, t_in=1400.0).with_ring(1, t_in=650.0)
            .replace(inclination=35.0, position_angle=36.0))


WAVELENGTHS = np.array([2.0, 2.2, 2.4, 3.5, 4.0, 8.0, 10.0, 12.0])  # µm
PHOT_WAVELENGTHS = np.array([1.2, 1.6, 2.2, 3.4, 4.6, 9.0, 12.0, 22.0])  # µm


def synthetic_data(scene, n_baselines=30, n_triangles=20, seed=1):
    """(ObservationSet with V² and closure phases, photometry Dataset) of ``scene``, noise-free."""
    rng = np.random.default_rng(seed)
    angle = rng.uniform(0, np.pi, n_baselines)
    length = rng.uniform(20, 130, n_baselines)  # m
    u, v = length * np.sin(angle), length * np.cos(angle)
    wl = WAVELENGTHS
    U, V, W = np.repeat(u, wl.size), np.repeat(v, wl.size), np.tile(wl, n_baselines)
    u1, v1 = np.repeat(u[:n_triangles], wl.size), np.repeat(v[:n_triangles], wl.size)
    u2 = np.repeat(u[10:10 + n_triangles], wl.size)
    v2 = np.repeat(v[5:5 + n_triangles], wl.size)
    W3 = np.tile(wl, n_triangles)
    obs = ObservationSet.from_arrays(
        vis2=dict(u=U, v=V, wavelength=W, vis2=scene.vis2(U, V, W), vis2_err=np.full(W.size, 0.01)),
        t3=dict(u1=u1, v1=v1, u2=u2, v2=v2, wavelength=W3, t3phi=scene.closure_phase(u1, v1, u2, v2, W3),
                t3phi_err=np.full(W3.size, 1.0), t3amp=np.full(W3.size, 1.0), t3amp_err=np.full(W3.size, 0.1)))
    flux = scene.sed(PHOT_WAVELENGTHS)
    phot = photometry_dataset(PHOT_WAVELENGTHS, flux, 0.05 * flux)
    return obs, phot
