"""The model as a netCDF cube: images over a few wavelengths, the SED, the model at the data."""
from __future__ import annotations

import numpy as np

from ..errors import DiskExplorerError
from .outputs import DEFAULT_IMAGE_WAVELENGTHS, _quiet
from .tables import residual_tables

__all__ = ["model_cube", "write_model_cube"]


def _sed_grid(comparison):
    lo, hi = 0.3, 40.0
    for ds in (comparison.photometry, comparison.spectrum):
        if ds is not None and ds["wavelength"].size:
            lam = np.asarray(ds["wavelength"].values, float)
            lo, hi = min(lo, lam.min() / 1.2), max(hi, lam.max() * 1.2)
    # The dust library's wavelength grid spans 0.3–100 µm.
    return np.geomspace(max(lo, 0.3), min(hi, 100.0), 300)


def model_cube(scene, comparison=None, result=None, image_wavelengths=DEFAULT_IMAGE_WAVELENGTHS, npix=256,
               progress=_quiet):
    """The model as an xarray Dataset: image cube, SED, and the model along the data.

    Parameters
    ----------
    scene : Scene
    comparison : Comparison, optional
        With ``result``, adds the data and model at every data point.
    result : ComparisonResult, optional
    image_wavelengths : sequence of float
        Wavelengths of the image cube in µm.
    npix : int
        Image pixels per side (one pixel size for all wavelengths).
    progress : callable
        ``progress(message)`` for each image.

    Returns
    -------
    xarray.Dataset
        ``image`` (image_wavelength, y, x) in Jy per pixel, x in mas towards East, y in
        mas towards North (the fully resolved component is not in the image; its flux is
        ``extended_flux``); ``sed`` (component, sed_wavelength) in Jy; per data kind
        ``<kind>_data``, ``<kind>_error``, ``<kind>_model``, ``<kind>_residual`` along
        ``<kind>_point`` with coordinates ``<kind>_wavelength`` (µm) and, for
        interferometric kinds, ``<kind>_spatial_frequency`` (Mλ); χ² per kind in the
        attributes ``chi2_<kind>`` and ``npoints_<kind>``.
    """
    import xarray as xr

    from ..observables.image import model_image
    from ..observables.scene import ring_labels

    lams = [float(x) for x in image_wavelengths]
    if not lams:
        raise DiskExplorerError("model_cube: give at least one image wavelength (µm)")
    images, pixel, ext = [], None, []
    for k, lam in enumerate(lams):
        progress(f"  model image {k + 1}/{len(lams)} at {lam:g} µm")
        im = model_image(scene, lam, npix=npix, pixel_size=pixel)
        pixel = im.attrs["pixel_size_mas"]
        images.append(im.values)
        ext.append(im.attrs["extended_flux_jy"])
    x = im["x"].values
    ds = xr.Dataset(
        {"image": (("image_wavelength", "y", "x"), np.array(images),
                   {"units": "Jy/pixel", "long_name": "model brightness per pixel (compact components)"}),
         "extended_flux": ("image_wavelength", np.array(ext),
                           {"units": "Jy", "long_name": "flux of the fully resolved component (not in the image)"})},
        coords={"image_wavelength": ("image_wavelength", np.array(lams), {"units": "um"}),
                "x": ("x", x, {"units": "mas", "long_name": "offset towards East"}),
                "y": ("y", x.copy(), {"units": "mas", "long_name": "offset towards North"})})
    grid = _sed_grid(comparison) if comparison is not None else np.geomspace(0.3, 40.0, 300)
    comps = scene.sed_components(grid)
    ds["sed"] = xr.DataArray(np.array([comps[c] for c in comps]), dims=("component", "sed_wavelength"),
                             attrs={"units": "Jy", "long_name": "model flux density per component"})
    ds = ds.assign_coords(component=("component", np.array(list(comps), dtype=str)),
                          sed_wavelength=("sed_wavelength", grid, {"units": "um"}))
    names = ring_labels(scene.rings)
    ds.attrs.update({
        "title": "diskexplorer model evaluation",
        "distance_pc": float(scene.distance), "inclination_deg": float(scene.inclination),
        "position_angle_deg": float(scene.position_angle), "extended_fraction": float(scene.extended_fraction),
        "pixel_size_mas": float(pixel), "ring_names": ", ".join(names),
        # netCDF attributes are flat: ring edges as [r_in, r_out, r_in, r_out, ...] in au.
        "ring_edges_au": np.array([v for r in scene.rings for v in (r.r_in, r.r_out)], float),
        "ring_enabled": np.array([int(r.enabled) for r in scene.rings], np.int32),
    })
    if comparison is not None and result is not None:
        for kind, cols in residual_tables(comparison, result).items():
            dim = f"{kind}_point"
            coords = {f"{kind}_wavelength": (dim, cols["wavelength_um"], {"units": "um"})}
            if "spatial_frequency_Mlambda" in cols:
                coords[f"{kind}_spatial_frequency"] = (dim, cols["spatial_frequency_Mlambda"], {"units": "Mlambda"})
            if "instrument" in cols:
                coords[f"{kind}_instrument"] = (dim, np.asarray(cols["instrument"]).astype(str))
            unit = {"vis2": "", "t3phi": "deg", "t3amp": "", "visamp": "", "diffphi": "deg"}.get(kind, "Jy")
            for name in ("data", "error", "model", "residual"):
                ds[f"{kind}_{name}"] = xr.DataArray(np.asarray(cols[name], float), dims=(dim,),
                                                    attrs={"units": "" if name == "residual" else unit})
            ds = ds.assign_coords(coords)
            ds.attrs[f"chi2_{kind}"] = float(result.chi2[kind])
            ds.attrs[f"npoints_{kind}"] = int(result.npoints[kind])
        ds.attrs["chi2_total"] = float(result.total)
    return ds


def write_model_cube(dataset, path):
    """Write the :func:`model_cube` dataset to netCDF (netCDF4 engine, compressed images)."""
    encoding = {"image": {"zlib": True, "complevel": 4}}
    dataset.to_netcdf(path, engine="netcdf4", encoding=encoding)
    return path
