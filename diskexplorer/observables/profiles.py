"""Radial profiles of the rings: temperature, optical depth, brightness."""
from __future__ import annotations

import numpy as np
import xarray as xr

from .scene import ring_labels

__all__ = ["radial_profiles"]


def radial_profiles(scene, wavelength=10.0, radius=None, tau_wavelength=10.0, npoints=400):
    """Temperature, optical depth and brightness against radius.

    Parameters
    ----------
    scene : Scene
    wavelength : float
        Wavelength of the brightness profile, µm.
    radius : array_like, optional
        Radii in au; by default a log grid spanning all rings.
    tau_wavelength : float
        Wavelength of the optical-depth profile, µm (10 µm by default).

    Returns
    -------
    xarray.Dataset
        Dims ("ring", "radius"): ``temperature`` (K), ``tau`` (vertical optical depth at
        ``tau_wavelength``; inf for optically thick rings), ``intensity`` (Jy sr⁻¹,
        azimuthally averaged, line-of-sight at the scene's inclination); NaN outside a ring.
        For an equilibrium ring ``temperature`` is the hottest species present at each
        radius (each species' own profile: :meth:`Scene.dust_temperature`) and ``tau``
        counts only the species present; a ring following its sublimation front starts there.
    """
    rings = list(scene.rings)
    if radius is None:
        lo = min((r.r_in for r in rings), default=0.1)
        hi = max((r.r_out for r in rings), default=1.0)
        radius = np.geomspace(lo * 0.8, hi * 1.25, npoints)
    radius = np.asarray(radius, float)
    temp = np.full((len(rings), radius.size), np.nan)
    tau = np.full_like(temp, np.nan)
    inten = np.full_like(temp, np.nan)
    for k, ring in enumerate(rings):
        if ring.is_equilibrium:
            _equilibrium_profiles(scene, k, radius, wavelength, tau_wavelength, temp, tau, inten)
            continue
        inside = (radius >= ring.r_in) & (radius <= ring.r_out)
        r = radius[inside]
        temp[k, inside] = ring.temperature(r)
        tau[k, inside] = ring.optical_depth(r, [tau_wavelength])[0]
        inten[k, inside] = ring.intensity(r, [wavelength], scene.inclination)[0]
    return xr.Dataset(
        {"temperature": (("ring", "radius"), temp, {"units": "K"}),
         "tau": (("ring", "radius"), tau, {"units": "", "wavelength_um": tau_wavelength}),
         "intensity": (("ring", "radius"), inten, {"units": "Jy/sr", "wavelength_um": wavelength})},
        coords={"ring": ring_labels(rings), "radius": ("radius", radius, {"units": "au"})})


def _equilibrium_profiles(scene, k, radius, wavelength, tau_wavelength, temp, tau, inten):
    """Fill row ``k`` for an equilibrium ring: hottest species present, τ of those present."""
    ring = scene.rings[k].resolved(scene.star)
    if ring is None:
        return
    inside = (radius >= ring.r_in) & (radius <= ring.r_out)
    r = radius[inside]
    species = scene.dust_temperature(k, r)
    stack = np.array(list(species.values()))
    with np.errstate(all="ignore"):
        hottest = np.where(np.all(np.isnan(stack), axis=0), np.nan, np.nanmax(np.nan_to_num(stack, nan=-1.0), axis=0))
    temp[k, inside] = hottest
    if ring.dust is None:
        tau[k, inside] = np.where(np.isnan(hottest), 0.0, np.inf)
    else:
        sigma = ring.surface_density(r)
        total = np.zeros(r.size)
        for part in ring.species():
            present = ~np.isnan(species[part.name])
            total += np.where(present, part.fraction * float(part.opacity.kappa([tau_wavelength])[0]) * sigma, 0.0)
        tau[k, inside] = total
    inten[k, inside] = ring.intensity(r, [wavelength], scene.inclination, scene.star)[0]
