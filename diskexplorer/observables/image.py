"""Model images on a pixel grid, and the direct Fourier transform that checks them."""
from __future__ import annotations

import math

import numpy as np
import xarray as xr

from ..physics.constants import ARCSEC_RAD, RAD_PER_MAS
from .scene import ring_labels

__all__ = ["model_image", "image_visibility", "point_source_visibility"]


def _disk_frame(x, y, inclination, position_angle):
    """Deprojected coordinates (along the major axis, along the minor axis) in the sky's units."""
    pa = math.radians(position_angle)
    cos_i = math.cos(math.radians(inclination))
    along = x * math.sin(pa) + y * math.cos(pa)
    across = (x * math.cos(pa) - y * math.sin(pa)) / cos_i
    return along, across


def model_image(scene, wavelength, npix=256, pixel_size=None, supersample=4):
    """Brightness of the scene on a square pixel grid.

    Parameters
    ----------
    scene : Scene
    wavelength : float
        Wavelength in µm.
    npix : int
        Pixels per side.
    pixel_size : float, optional
        Pixel size in mas; by default the outer ring fills 90 % of the field.
    supersample : int
        Sub-pixels per pixel side used to integrate sharp ring edges.

    Returns
    -------
    xarray.DataArray
        Flux per pixel in Jy, dims ("y", "x"): ``x`` in mas towards East, ``y`` in mas
        towards North (pixel centres; pixel ``npix // 2`` is centred on the star). Attributes hold the pixel
        size, wavelength, the extended component's flux (not in the image: it is fully
        resolved) and the ring outlines' radii in au and mas.

    Notes
    -----
    The star is drawn as a uniform disk (or a point in the central pixel). The image's
    Fourier transform with the convention exp(−2πi(u x + v y)) reproduces the engine's
    visibilities at frequencies the image resolves.
    """
    rad_per_au = ARCSEC_RAD / scene.distance
    mas_per_au = rad_per_au / RAD_PER_MAS
    # Rings whose inner edge follows the sublimation front are drawn from that front.
    drawn = [(r, r.resolved(scene.star)) for r in scene.rings if r.enabled]
    enabled = [resolved for _, resolved in drawn if resolved is not None]
    if pixel_size is None:
        r_max = max((r.r_out for r in enabled), default=1.0) * mas_per_au
        pixel_size = 2.0 * r_max / (0.9 * npix)
    k = int(supersample)
    # Pixel npix // 2 is centred on the star (the FFT convention of numpy's fftshift).
    centres = (np.arange(npix) - npix // 2) * pixel_size
    sub = (centres[:, None] + (np.arange(k) - (k - 1) / 2.0)[None, :] * (pixel_size / k)).ravel()
    xs, ys = np.meshgrid(sub, sub)
    along, across = _disk_frame(xs, ys, scene.inclination, scene.position_angle)
    r_au = np.hypot(along, across) / mas_per_au
    phi = np.arctan2(across, along)
    sub_sr = (pixel_size / k * RAD_PER_MAS) ** 2
    image = np.zeros_like(xs)
    lam = np.atleast_1d(float(wavelength))
    for ring in enabled:
        inside = (r_au >= ring.r_in) & (r_au <= ring.r_out)
        if not np.any(inside):
            continue
        inten = ring.intensity(r_au[inside], lam, scene.inclination, scene.star)[0]
        if ring.is_modulated:
            inten = inten * (1.0 + ring.c1 * np.cos(phi[inside]) + ring.s1 * np.sin(phi[inside]))
        image[inside] += inten * sub_sr
    image = image.reshape(npix, k, npix, k).sum(axis=(1, 3))
    if scene.star is not None:
        f_star = float(scene.star.flux(lam, scene.distance)[0])
        radius = scene.star.angular_diameter(scene.distance) / 2.0
        if scene.star.uniform_disk and radius > pixel_size / k:
            cover = (np.hypot(xs, ys) <= radius).astype(float).reshape(npix, k, npix, k).sum(axis=(1, 3))
            image += f_star * cover / cover.sum()
        else:
            image[npix // 2, npix // 2] += f_star
    compact = image.sum()
    f = scene.extended_fraction
    names = ring_labels(scene.rings)
    return xr.DataArray(
        image, dims=("y", "x"), coords={"y": centres, "x": centres},
        name="flux", attrs={
            "units": "Jy/pixel", "pixel_size_mas": float(pixel_size), "wavelength_um": float(wavelength),
            "x_axis": "mas towards East", "y_axis": "mas towards North",
            "extended_flux_jy": float(compact * f / (1 - f)),
            "ring_names": [n for n, r in zip(names, scene.rings)
                           if r.enabled and (r.inner_edge == "fixed" or r.resolved(scene.star) is not None)],
            "ring_edges_au": [[r.r_in, r.r_out] for r in enabled],
            "ring_edges_mas": [[r.r_in * mas_per_au, r.r_out * mas_per_au] for r in enabled],
        })


def image_visibility(image, u, v):
    """Normalised visibility of an image by direct Fourier sum.

    Parameters
    ----------
    image : xarray.DataArray
        As returned by :func:`model_image`.
    u, v : array_like
        Spatial frequencies in rad⁻¹ (cycles per radian), u East, v North.

    Returns
    -------
    ndarray of complex: Σ I exp(−2πi(u x + v y)) / Σ I (x, y in rad).
    """
    x = image["x"].values * RAD_PER_MAS
    y = image["y"].values * RAD_PER_MAS
    data = image.values
    u = np.atleast_1d(np.asarray(u, float))
    v = np.atleast_1d(np.asarray(v, float))
    ex = np.exp(-2j * np.pi * u[:, None] * x[None, :])   # (n, nx)
    ey = np.exp(-2j * np.pi * v[:, None] * y[None, :])   # (n, ny)
    total = np.einsum("ny,yx,nx->n", ey, data, ex)
    return total / data.sum()


def point_source_visibility(flux, x, y, u, v):
    """Visibility of point sources of ``flux`` at offsets (x East, y North) in mas.

    Spatial frequencies ``u``, ``v`` in rad⁻¹. V = Σ F exp(−2πi(u x + v y)) / Σ F.
    """
    flux = np.asarray(flux, float)
    x = np.asarray(x, float) * RAD_PER_MAS
    y = np.asarray(y, float) * RAD_PER_MAS
    u = np.asarray(u, float)[..., None]
    v = np.asarray(v, float)[..., None]
    return np.sum(flux * np.exp(-2j * np.pi * (u * x + v * y)), axis=-1) / flux.sum()
