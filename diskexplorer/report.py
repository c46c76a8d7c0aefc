"""Evaluate a model against its data and write a static report (tables, model cube, figures).

This is the headless logic behind ``diskexplorer evaluate``; every step is usable from
Python on its own::

    from diskexplorer.report import evaluate
    report = evaluate("start.json", out="report", formats=("png", "pdf"))
    print(report.chi2_text())

What an evaluation writes into its output folder:

* ``chi2.csv`` — χ² per data kind and per instrument (and the weighted total);
* ``residuals_<kind>.csv`` — one row per data point of each kind present (``vis2``,
  ``t3phi``, ``t3amp``, ``visamp``, ``photometry``, ``spectrum``, ``flux``) with the
  wavelength in µm, the spatial frequency in Mλ (interferometric kinds), data, error,
  model and normalised residual (data − model)/error;
* ``model.nc`` — a netCDF file (xarray) with the model image cube over a few
  wavelengths (x, y in mas), the SED and its components on a fine grid, and the model
  next to the data for every data kind;
* figures (PNG and/or PDF): ``sed``, ``silicate_band``, ``vis2``, ``closure_phase``,
  ``image``, ``profiles``.

Nothing is overwritten unless asked: the whole list of outputs is checked before any
computation starts. matplotlib is imported only when figures are drawn, with the
non-interactive Agg backend, so the module works on machines without a display and
pulls in no widget library.
"""
from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .data.classify import classify_data_file, collect_data_files
from .errors import DataError, DiskExplorerError

__all__ = [
    "EvaluationReport", "evaluate", "load_start", "classify_data_file", "data_description_with",
    "planned_outputs", "chi2_rows", "format_chi2_table", "residual_tables", "write_residual_tables",
    "model_cube", "write_model_cube", "write_figures", "FIGURES", "FIGURE_SIZES_IN", "DEFAULT_DPI",
    "DEFAULT_IMAGE_WAVELENGTHS", "FORMATS",
]

#: Figure names, in the order they are drawn.
FIGURES = ("sed", "silicate_band", "vis2", "closure_phase", "image", "profiles")
#: Figure sizes in inches (width, height); with :data:`DEFAULT_DPI` a PNG has
#: width·dpi × height·dpi pixels (no tight bounding box, so sizes are predictable).
FIGURE_SIZES_IN = {"sed": (7.2, 4.8), "silicate_band": (7.2, 4.8), "vis2": (7.2, 4.8),
                   "closure_phase": (7.2, 4.8), "image": (9.6, 4.8), "profiles": (9.6, 4.8)}
DEFAULT_DPI = 100
#: File formats a figure can be written in.
FORMATS = ("png", "pdf")
#: Wavelengths (µm) of the model image cube: H, K, L, M and two N-band points.
DEFAULT_IMAGE_WAVELENGTHS = (1.65, 2.2, 3.5, 4.8, 8.5, 10.0, 12.5)
#: Wavelengths (µm) of the image figure's panels (near-infrared rim, mid-infrared disk).
_IMAGE_FIGURE_WAVELENGTHS = (2.2, 10.0)

# Okabe & Ito (2008) colour-universal-design palette (the same one the app uses; kept
# here because the core must not import the app package).
_OKABE_ITO = ("#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")
_COMPONENT_COLOURS = {"star": "#E69F00", "extended": "#999999", "total": "#000000", "data": "#D55E00"}
_RING_COLOURS = ("#0072B2", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442")

_INTERFEROMETRIC = ("vis2", "t3phi", "t3amp", "visamp")


def _quiet(message):
    """Default progress sink: say nothing."""


# --------------------------------------------------------------------------- inputs
def load_start(source):
    """Read a starting-point document.

    Parameters
    ----------
    source : str, os.PathLike, dict or StartingPoint
        A path to a starting-point JSON document (see
        :func:`diskexplorer.fitting.read_start`), the document itself, or an already
        read :class:`~diskexplorer.fitting.StartingPoint`.

    Returns
    -------
    StartingPoint

    Raises
    ------
    SeedError
        Unreadable or malformed document (the message names the entry).
    """
    from .fitting.start_import import StartingPoint, read_start

    if isinstance(source, StartingPoint):
        return source
    return read_start(source)


def data_description_with(description, files=None, base_dir=None):
    """A data description whose kinds are replaced by ``files`` where given.

    Parameters
    ----------
    description : DataDescription or dict or None
        The data a starting point names.
    files : path or sequence of paths, optional
        Data files and folders (OIFITS, photometry, spectrum) sorted by content with
        :func:`~diskexplorer.data.collect_data_files`. Each kind given replaces that kind of the
        description entirely (its selections and error floors too); kinds not given are
        kept. Weights are kept.
    base_dir : str, optional
        Folder the description's relative paths refer to; override paths are made
        absolute against the current directory, so they stay right whatever the base.

    Returns
    -------
    DataDescription

    Raises
    ------
    DataError
        More than one photometry or spectrum file, a file that does not exist, is none
        of the kinds or is damaged.
    """
    from .fitting.data_description import DataDescription, describe_data

    desc = describe_data(description)
    if not files:
        return desc
    found = collect_data_files(files)
    kinds = {k: [os.path.abspath(p) for p in v] for k, v in found.items()}
    for kind in ("photometry", "spectrum"):
        if len(kinds[kind]) > 1:
            raise DataError(f"{len(kinds[kind])} {kind} files given ({', '.join(kinds[kind])}); "
                            f"an evaluation uses one {kind} file")
    d = desc.as_dict()
    if kinds["oifits"]:
        d["oifits"] = kinds["oifits"]
    if kinds["photometry"]:
        d["photometry"] = kinds["photometry"][0]
    if kinds["spectrum"]:
        d["spectrum"] = kinds["spectrum"][0]
    return DataDescription.from_dict(d)


# --------------------------------------------------------------------------- outputs
def _formats(formats):
    if isinstance(formats, str):
        formats = [f for f in formats.split(",")]
    out = []
    for f in formats:
        f = f.strip().lower().lstrip(".")
        if not f:
            continue
        if f not in FORMATS:
            raise DiskExplorerError(f"figure format {f!r} is not supported; choose from {', '.join(FORMATS)}")
        if f not in out:
            out.append(f)
    return tuple(out)


def planned_outputs(out, kinds, formats=("png",), figures=True, cube=True):
    """The files an evaluation writes into ``out``.

    Parameters
    ----------
    out : str or os.PathLike
        Output folder.
    kinds : sequence of str
        Data kinds present (``Comparison.kinds``).
    formats : sequence of str or str
        Figure formats (``"png"``, ``"pdf"``; a comma-separated string is accepted).
    figures, cube : bool
        Whether figures and the netCDF cube are written.

    Returns
    -------
    dict
        ``"chi2"``, ``"residuals"`` (kind → path), ``"cube"`` (path or None) and
        ``"figures"`` (name → list of paths).
    """
    out = Path(out)
    fmts = _formats(formats) if figures else ()
    return {
        "chi2": out / "chi2.csv",
        "residuals": {k: out / f"residuals_{k}.csv" for k in kinds},
        "cube": out / "model.nc" if cube else None,
        "figures": {name: [out / f"{name}.{fmt}" for fmt in fmts] for name in FIGURES} if fmts else {},
    }


def _all_paths(plan):
    paths = [plan["chi2"], *plan["residuals"].values()]
    if plan["cube"] is not None:
        paths.append(plan["cube"])
    for group in plan["figures"].values():
        paths.extend(group)
    return paths


def _refuse_existing(plan, force):
    if force:
        return
    existing = [p for p in _all_paths(plan) if p.exists()]
    if existing:
        more = f" (and {len(existing) - 1} more output(s))" if len(existing) > 1 else ""
        raise FileExistsError(f"{existing[0]} exists{more}; pass --force (force=True) to overwrite, or choose "
                              "another output folder")


# --------------------------------------------------------------------------- χ² and tables
def _mlambda(u, v, wavelength):
    """Spatial frequency B/λ in Mλ (10⁶ wavelengths) of baselines (u, v) in m at λ in µm."""
    # B [m] / (λ [µm] 1e-6) / 1e6 = B / λ[µm]: the factors cancel.
    return np.hypot(u, v) / wavelength


def _coord(ds, name, default=""):
    if name in ds.coords or name in ds:
        return np.asarray(ds[name].values)
    return np.full(ds.sizes.get("point", 0), default, dtype=object)


def residual_tables(comparison, result):
    """The data, model and residuals of every data kind as column tables.

    Parameters
    ----------
    comparison : Comparison
        The data, as bound by :class:`~diskexplorer.fitting.Comparison`.
    result : ComparisonResult
        From ``comparison.compare(scene)``.

    Returns
    -------
    dict
        Kind → dict of column name → 1-d array, one row per data point in the order of
        the comparison. Column names carry their units: ``wavelength_um``,
        ``spatial_frequency_Mlambda`` (B/λ in 10⁶ wavelengths; for closure phases the
        longest baseline of the triangle), ``u_m``, ``v_m``, ``data``, ``error``,
        ``model``, ``residual`` ((data − model)/error, closure phases by chord length, see diskexplorer.fitting.comparison.phase_residual;
        upper limits contribute only where the model exceeds them). Data are in V²,
        degrees (``t3phi``), visibility amplitude or Jy (``photometry``, ``spectrum``,
        ``flux``); the SED kinds add one ``model_<component>`` column per component (Jy).
    """
    obs = comparison.observations
    tables = {}
    for kind in result.residuals:
        cols = {}
        if kind == "vis2":
            ds = obs.vis2
            u, v, lam = ds["u"].values, ds["v"].values, ds["wavelength"].values
            cols.update(instrument=_coord(ds, "insname"), mjd=_coord(ds, "mjd", np.nan), u_m=u, v_m=v,
                        wavelength_um=lam, spatial_frequency_Mlambda=_mlambda(u, v, lam),
                        data=ds["vis2"].values, error=ds["vis2_err"].values)
        elif kind in ("t3phi", "t3amp"):
            ds = obs.t3
            u1, v1, u2, v2 = (ds[n].values for n in ("u1", "v1", "u2", "v2"))
            lam = ds["wavelength"].values
            longest = np.max(np.stack([np.hypot(u1, v1), np.hypot(u2, v2), np.hypot(u1 + u2, v1 + v2)]), axis=0)
            cols.update(instrument=_coord(ds, "insname"), mjd=_coord(ds, "mjd", np.nan), u1_m=u1, v1_m=v1,
                        u2_m=u2, v2_m=v2, wavelength_um=lam, spatial_frequency_Mlambda=longest / lam,
                        data=ds[kind].values, error=ds[f"{kind}_err"].values)
        elif kind == "visamp":
            ds = obs.vis
            u, v, lam = ds["u"].values, ds["v"].values, ds["wavelength"].values
            cols.update(instrument=_coord(ds, "insname"), mjd=_coord(ds, "mjd", np.nan), u_m=u, v_m=v,
                        wavelength_um=lam, spatial_frequency_Mlambda=_mlambda(u, v, lam),
                        amptyp=_coord(ds, "amptyp"), data=ds["visamp"].values, error=ds["visamp_err"].values)
        else:
            ds = {"photometry": comparison.photometry, "spectrum": comparison.spectrum,
                  "flux": getattr(obs, "flux", None)}[kind]
            flux = ds["flux"].values
            err = ds["flux_err"].values if "flux_err" in ds else np.full(flux.shape, np.nan)
            if kind == "spectrum":
                # The error χ² used: samples without one get the comparison's 5 % default.
                err = np.where(np.isfinite(err) & (err > 0), err, 0.05 * np.abs(flux))
            if kind == "photometry":
                cols["band"] = _coord(ds, "band")
            if kind == "flux":
                cols["instrument"] = _coord(ds, "insname")
            cols.update(wavelength_um=ds["wavelength"].values, data=flux, error=err)
            if kind == "photometry":
                cols["upper_limit"] = ds["upper_limit"].values.astype(bool)
        cols["model"] = np.asarray(result.model[kind], float)
        cols["residual"] = np.asarray(result.residuals[kind], float)
        comps = {"photometry": result.sed, "spectrum": result.spectrum}.get(kind) or {}
        for name, values in comps.items():
            if name != "total":
                cols[f"model_{name}"] = np.asarray(values, float)
        tables[kind] = cols
    return tables


def chi2_rows(result, tables=None):
    """χ² per data kind, per instrument within each kind, and in total.

    Parameters
    ----------
    result : ComparisonResult
    tables : dict, optional
        From :func:`residual_tables`; needed for the per-instrument rows.

    Returns
    -------
    list of dict
        Keys ``kind``, ``subset`` (instrument name, ``"all"`` or ``""`` for the total),
        ``n``, ``chi2``, ``reduced`` (χ²/N) and ``weight`` (in the total).
    """
    rows = []
    for kind, chi2 in result.chi2.items():
        n = result.npoints[kind]
        w = result.weights.get(kind, 1.0)
        rows.append(dict(kind=kind, subset="all", n=n, chi2=chi2, reduced=chi2 / n if n else math.nan, weight=w))
        inst = (tables or {}).get(kind, {}).get("instrument")
        if inst is not None and len(set(inst)) > 1:
            r = np.asarray(result.residuals[kind], float)
            for name in sorted(set(inst)):
                sel = (inst == name) & np.isfinite(r)
                c = float(np.sum(r[sel] ** 2))
                k = int(sel.sum())
                rows.append(dict(kind=kind, subset=str(name), n=k, chi2=c, reduced=c / k if k else math.nan,
                                 weight=w))
    n = result.n_total
    rows.append(dict(kind="total", subset="", n=n, chi2=result.total,
                     reduced=result.total / n if n else math.nan, weight=math.nan))
    return rows


def format_chi2_table(rows):
    """The χ² rows of :func:`chi2_rows` as an aligned text table."""
    lines = [f"{'data':<12}{'subset':<10}{'N':>8}{'chi2':>14}{'chi2/N':>10}{'weight':>8}"]
    for r in rows:
        label = r["kind"] if r["subset"] in ("all", "") else ""
        subset = "" if r["subset"] in ("all", "") else r["subset"]
        weight = "" if math.isnan(r["weight"]) else f"{r['weight']:g}"
        if r["kind"] == "total":
            lines.append("-" * 62)
        lines.append(f"{label:<12}{subset:<10}{r['n']:>8d}{r['chi2']:>14.2f}{r['reduced']:>10.3f}{weight:>8}")
    return "\n".join(lines)


def _write_csv(path, columns):
    names = list(columns)
    arrays = [np.asarray(columns[n]) for n in names]
    with open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(names)
        for row in zip(*arrays):
            writer.writerow([_cell(x) for x in row])


def _cell(x):
    if isinstance(x, (bool, np.bool_)):
        return "true" if x else "false"
    if isinstance(x, (float, np.floating)):
        return "" if not np.isfinite(x) else f"{float(x):.8g}"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    return str(x)


def write_residual_tables(tables, paths):
    """Write each kind's table (:func:`residual_tables`) to ``paths[kind]`` as CSV."""
    for kind, cols in tables.items():
        _write_csv(paths[kind], cols)
    return [paths[k] for k in tables]


# --------------------------------------------------------------------------- model cube
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

    from .observables.image import model_image
    from .observables.scene import ring_labels

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
            unit = {"vis2": "", "t3phi": "deg", "t3amp": "", "visamp": ""}.get(kind, "Jy")
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


# --------------------------------------------------------------------------- figures
def _pyplot():
    # Deferred: matplotlib is only needed for the static report; Agg draws without a
    # display and keeps any interactive backend (and widgets) out of the core.
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    return plt


def _save(fig, paths, dpi):
    for p in paths:
        fig.savefig(p, dpi=dpi)


def _ring_colour(k):
    return _RING_COLOURS[k % len(_RING_COLOURS)]


def _figure_sed(plt, scene, comparison, cube):
    fig, ax = plt.subplots(figsize=FIGURE_SIZES_IN["sed"], layout="constrained")
    grid = cube["sed_wavelength"].values
    ring_k = 0
    for comp in cube["component"].values:
        y = cube["sed"].sel(component=comp).values
        if comp == "total":
            ax.plot(grid, y, color=_COMPONENT_COLOURS["total"], lw=2, label="model total", zorder=5)
        elif comp in ("star", "extended"):
            if np.any(y > 0):
                ax.plot(grid, y, color=_COMPONENT_COLOURS[comp], lw=1.2, ls="--", label=str(comp))
        else:
            ax.plot(grid, y, color=_ring_colour(ring_k), lw=1.2, label=f"ring {comp}")
            ring_k += 1
    spec = comparison.spectrum if comparison is not None else None
    if spec is not None and spec["wavelength"].size:
        ax.plot(spec["wavelength"].values, spec["flux"].values, color="#56B4E9", lw=1, label="spectrum")
    phot = comparison.photometry if comparison is not None else None
    if phot is not None and phot["wavelength"].size:
        lam = phot["wavelength"].values
        flux = phot["flux"].values
        err = phot["flux_err"].values
        ul = phot["upper_limit"].values.astype(bool)
        ax.errorbar(lam[~ul], flux[~ul], yerr=err[~ul], fmt="o", ms=5, color=_COMPONENT_COLOURS["data"],
                    label="photometry", zorder=6)
        if np.any(ul):
            ax.plot(lam[ul], flux[ul], "v", ms=7, color=_COMPONENT_COLOURS["data"], label="upper limit", zorder=6)
    ax.set_xscale("log")
    ax.set_yscale("log")
    total = cube["sed"].sel(component="total").values
    top = np.nanmax(total)
    ax.set_ylim(top * 1e-3, top * 3)
    ax.set_xlabel("wavelength λ [µm]")
    ax.set_ylabel("flux density F$_ν$ [Jy]")
    ax.set_title("spectral energy distribution")
    ax.legend(fontsize=8, ncol=2, loc="lower center")
    return fig


def _figure_silicate(plt, scene, comparison):
    from .observables.spectrum import SILICATE_WINDOWS, normalized_silicate_band

    fig, ax = plt.subplots(figsize=FIGURE_SIZES_IN["silicate_band"], layout="constrained")
    spec = comparison.spectrum if comparison is not None else None
    lam = None
    if spec is not None and spec["wavelength"].size:
        lam = np.asarray(spec["wavelength"].values, float)
        try:
            ax.plot(lam, normalized_silicate_band(lam, spec["flux"].values), color=_COMPONENT_COLOURS["data"],
                    lw=1.2, label="spectrum")
        except ValueError:
            # The spectrum misses a continuum window: show the model on its own grid.
            lam = None
    if lam is None:
        lam = np.linspace(7.5, 13.5, 200)
    model = scene.sed(lam)
    ax.plot(lam, normalized_silicate_band(lam, model), color=_COMPONENT_COLOURS["total"], lw=2, label="model")
    for lo, hi in SILICATE_WINDOWS:
        ax.axvspan(lo, hi, color="#999999", alpha=0.2, lw=0)
    ax.axhline(1.0, color="#999999", lw=0.8)
    ax.set_xlabel("wavelength λ [µm]")
    ax.set_ylabel("normalised flux 1 + (F$_ν$ − F$_c$)/⟨F$_c$⟩")
    ax.set_title("normalised 10 µm silicate band (grey: continuum windows)")
    ax.legend(fontsize=9)
    return fig


def _interferometric_figure(plt, name, tables, kind, ylabel, title, scene):
    fig, ax = plt.subplots(figsize=FIGURE_SIZES_IN[name], layout="constrained")
    cols = tables.get(kind)
    if cols is not None and len(cols["data"]):
        freq = cols["spatial_frequency_Mlambda"]
        lam = cols["wavelength_um"]
        ax.errorbar(freq, cols["data"], yerr=cols["error"], fmt="none", ecolor="#BBBBBB", elinewidth=0.6, zorder=1)
        sc = ax.scatter(freq, cols["data"], c=lam, s=9, cmap="viridis", zorder=2, label="data")
        ax.scatter(freq, cols["model"], s=4, marker=".", color="#000000", zorder=3, label="model")
        fig.colorbar(sc, ax=ax, label="wavelength λ [µm]")
        ax.legend(fontsize=9, loc="best")
    else:
        # No data of this kind: show the model along the major and minor axes instead.
        pa = math.radians(scene.position_angle)
        rho = np.linspace(0.0, 60.0, 200)  # Mλ
        for k, lam in enumerate((2.2, 3.5, 10.0)):
            for axis, angle, ls in (("major", pa, "-"), ("minor", pa + math.pi / 2, "--")):
                b = rho * lam  # baseline length in m for B/λ = rho Mλ
                u, v = b * math.sin(angle), b * math.cos(angle)
                if kind == "vis2":
                    y = scene.vis2(u, v, np.full_like(u, lam))
                    ax.plot(rho, y, ls=ls, color=_OKABE_ITO[(k + 5) % 8], label=f"{lam:g} µm, {axis} axis")
        ax.text(0.5, 0.95, f"no {kind} data", transform=ax.transAxes, ha="center", va="top")
        if kind == "vis2":
            ax.legend(fontsize=8)
    ax.set_xlabel("spatial frequency B/λ [Mλ]" if kind == "vis2" else "longest baseline of the triangle B$_{max}$/λ [Mλ]")
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    return fig


def _ring_outline(r_mas, inclination, position_angle, n=200):
    """Sky coordinates (x East, y North, mas) of a circle of radius r in the inclined disk plane."""
    t = np.linspace(0.0, 2.0 * np.pi, n)
    pa = math.radians(position_angle)
    along = r_mas * np.cos(t)
    across = r_mas * math.cos(math.radians(inclination)) * np.sin(t)
    # Inverse of the disk-frame rotation of :mod:`diskexplorer.observables.image`.
    return along * math.sin(pa) + across * math.cos(pa), along * math.cos(pa) - across * math.sin(pa)


def _figure_image(plt, scene, cube):
    from matplotlib.colors import LogNorm

    from .physics.constants import ARCSEC_RAD, RAD_PER_MAS

    lams = [w for w in _IMAGE_FIGURE_WAVELENGTHS]
    available = cube["image_wavelength"].values
    chosen = sorted({float(available[np.argmin(np.abs(available - w))]) for w in lams})
    fig, axes = plt.subplots(1, len(chosen), figsize=FIGURE_SIZES_IN["image"], layout="constrained",
                             squeeze=False)
    x = cube["x"].values
    half = 0.5 * (x[1] - x[0]) if x.size > 1 else 0.5
    # imshow puts column 0 (x[0], the most westerly) at extent[0]; the x axis is then
    # flipped so that East is to the left, as on the sky.
    extent = (x[0] - half, x[-1] + half, x[0] - half, x[-1] + half)
    mas_per_au = ARCSEC_RAD / scene.distance / RAD_PER_MAS
    n = x.size
    # Faint is pale (YlOrBr, monotonic lightness); below the scale's three decades: white.
    cmap = plt.get_cmap("YlOrBr").with_extremes(under="white", bad="white")
    for ax, lam in zip(axes[0], chosen):
        img = cube["image"].sel(image_wavelength=lam).values.copy()
        # The unresolved star outshines the rings by orders of magnitude: scale the
        # colours to the rings (star pixels saturate) over three decades.
        mask = np.ones_like(img, bool)
        c = n // 2
        mask[c - 1:c + 2, c - 1:c + 2] = False
        top = img[mask].max() if np.any(img[mask] > 0) else (img.max() or 1.0)
        shown = np.where(img > 0, img, np.nan)
        im = ax.imshow(shown, origin="lower", extent=extent, cmap=cmap,
                       norm=LogNorm(vmin=top * 1e-3, vmax=top), interpolation="nearest")
        for k, ring in enumerate(scene.rings):
            if not ring.enabled:
                continue
            for r in (ring.r_in, ring.r_out):
                ox, oy = _ring_outline(r * mas_per_au, scene.inclination, scene.position_angle)
                ax.plot(ox, oy, color=_ring_colour(k), lw=0.9, ls="--")
        ax.set_xlim(extent[1], extent[0])
        ax.set_ylim(extent[2], extent[3])
        ax.set_xlabel("Δα (East) [mas]")
        ax.set_ylabel("Δδ (North) [mas]")
        ax.set_title(f"model image at {lam:g} µm")
        fig.colorbar(im, ax=ax, label="Jy per pixel", shrink=0.8)
    return fig


def _figure_profiles(plt, scene):
    from .observables.profiles import radial_profiles

    prof = radial_profiles(scene, wavelength=10.0, tau_wavelength=10.0)
    fig, axes = plt.subplots(1, 3, figsize=FIGURE_SIZES_IN["profiles"], layout="constrained")
    r = prof["radius"].values
    for k, ring in enumerate(prof["ring"].values):
        col = _ring_colour(k)
        axes[0].plot(r, prof["temperature"].values[k], color=col, label=str(ring))
        tau = prof["tau"].values[k]
        axes[1].plot(r, np.where(np.isinf(tau), np.nan, tau), color=col)
        axes[2].plot(r, prof["intensity"].values[k], color=col)
    for ax, label in zip(axes, ("temperature T [K]", "vertical optical depth τ at 10 µm",
                                "brightness I$_ν$ at 10 µm [Jy sr$^{-1}$]")):
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("radius r [au]")
        ax.set_ylabel(label)
    if len(prof["ring"]):
        axes[0].legend(fontsize=8)
    fig.suptitle("radial profiles of the rings")
    return fig


def write_figures(scene, comparison, result, cube, paths, dpi=DEFAULT_DPI, progress=_quiet):
    """Draw the report figures with matplotlib and save them.

    Parameters
    ----------
    scene : Scene
    comparison : Comparison or None
    result : ComparisonResult or None
    cube : xarray.Dataset
        From :func:`model_cube` (image and SED grids are reused).
    paths : dict
        Figure name → list of paths (see :func:`planned_outputs`); the suffix picks the
        format.
    dpi : int
        Raster resolution; a PNG is ``FIGURE_SIZES_IN[name] × dpi`` pixels.
    progress : callable
        ``progress(message)`` per figure.

    Returns
    -------
    list of pathlib.Path
    """
    plt = _pyplot()
    tables = residual_tables(comparison, result) if comparison is not None and result is not None else {}
    makers = {
        "sed": lambda: _figure_sed(plt, scene, comparison, cube),
        "silicate_band": lambda: _figure_silicate(plt, scene, comparison),
        "vis2": lambda: _interferometric_figure(plt, "vis2", tables, "vis2", "squared visibility V²",
                                                "squared visibilities (colour: data; black: model)", scene),
        "closure_phase": lambda: _interferometric_figure(plt, "closure_phase", tables, "t3phi",
                                                         "closure phase [deg]",
                                                         "closure phases (colour: data; black: model)", scene),
        "image": lambda: _figure_image(plt, scene, cube),
        "profiles": lambda: _figure_profiles(plt, scene),
    }
    written = []
    for name in FIGURES:
        targets = paths.get(name) or []
        if not targets:
            continue
        progress(f"  figure {name}")
        fig = makers[name]()
        try:
            _save(fig, targets, dpi)
        finally:
            plt.close(fig)
        written.extend(targets)
    return written


# --------------------------------------------------------------------------- the whole evaluation
@dataclass
class EvaluationReport:
    """What :func:`evaluate` computed and wrote.

    Attributes
    ----------
    scene : Scene
        The evaluated model.
    comparison : Comparison
        The data bound to the engine.
    result : ComparisonResult
        Model, residuals and χ² per data kind.
    chi2 : list of dict
        Rows of :func:`chi2_rows` (per kind, per instrument, total).
    files : list of pathlib.Path
        Everything written, in order.
    cube : xarray.Dataset or None
        The model cube (also in ``model.nc``).
    """

    scene: object
    comparison: object
    result: object
    chi2: list
    files: list = field(default_factory=list)
    cube: object = None

    def chi2_text(self) -> str:
        """The χ² table as aligned text."""
        return format_chi2_table(self.chi2)


def evaluate(source, out="evaluation", data=None, formats=("png",), force=False, progress=None, *,
             base_dir=None, image_wavelengths=DEFAULT_IMAGE_WAVELENGTHS, npix=256, dpi=DEFAULT_DPI,
             figures=True, cube=True):
    """Evaluate a model against its data and write tables, a model cube and figures.

    Parameters
    ----------
    source : str, os.PathLike, dict, StartingPoint or Scene
        A starting-point document (path, dict or read), or a bare :class:`Scene` (then
        ``data`` names the data).
    out : str or os.PathLike
        Output folder (created if needed).
    data : sequence of paths, DataDescription or dict, optional
        With a starting point: data files (OIFITS, photometry, spectrum; classified by
        content) replacing the document's data of the same kind. With a bare scene: a
        data description (``{"oifits": [...], "photometry": ..., "spectrum": ...}``) or
        a list of files.
    formats : sequence of str or str
        Figure formats, ``"png"`` and/or ``"pdf"``.
    force : bool
        Overwrite existing outputs. Default False: if any planned output exists,
        nothing is computed or written.
    progress : callable, optional
        ``progress(message)`` for each step (the CLI prints them).
    base_dir : str, optional
        Folder relative data paths refer to (default: the document's folder, else the
        current directory).
    image_wavelengths : sequence of float
        Wavelengths of the image cube in µm.
    npix : int
        Image pixels per side.
    dpi : int
        Resolution of raster figures.
    figures, cube : bool
        Whether to draw figures and write the netCDF cube.

    Returns
    -------
    EvaluationReport

    Raises
    ------
    FileExistsError
        If an output exists and ``force`` is False.
    SeedError, DataError, DiskExplorerError
        Bad documents, data files or arguments.
    FileNotFoundError
        A data file that does not exist.

    Examples
    --------
    >>> report = evaluate("start.json", out="report", formats="png,pdf")   # doctest: +SKIP
    >>> print(report.chi2_text())                                           # doctest: +SKIP
    """
    from .fitting.data_description import DataDescription, describe_data
    from .observables.scene import Scene

    say = progress or _quiet
    fmts = _formats(formats) if figures else ()
    if figures and not fmts:
        raise DiskExplorerError("no figure format given; choose from " + ", ".join(FORMATS))
    accuracy = 1
    if isinstance(source, Scene):
        scene = source
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data)
        else:
            desc = data_description_with(None, list(data))
    else:
        say(f"reading the starting point {source if not isinstance(source, dict) else '(document)'}")
        start = load_start(source)
        scene = start.scene
        accuracy = start.accuracy
        base_dir = base_dir or start.base_dir
        if data is None or isinstance(data, (dict, DataDescription)):
            desc = describe_data(data) if data is not None else start.data
        else:
            desc = data_description_with(start.data, list(data))
    if desc.empty:
        raise DataError("no data to evaluate against: the starting point names none; give data files "
                        "(--data PATH ...)")
    say("reading the data")
    comparison = desc.comparison(base_dir, accuracy=accuracy)
    plan = planned_outputs(out, comparison.kinds, fmts or ("png",), figures=figures, cube=cube)
    _refuse_existing(plan, force)
    say("computing the model at the data (" + ", ".join(comparison.kinds) + ")")
    result = comparison.compare(scene)
    tables = residual_tables(comparison, result)
    rows = chi2_rows(result, tables)
    Path(out).mkdir(parents=True, exist_ok=True)
    files = []
    _write_csv(plan["chi2"], {k: [r[k] for r in rows] for k in ("kind", "subset", "n", "chi2", "reduced", "weight")})
    files.append(plan["chi2"])
    say("writing residual tables")
    files += write_residual_tables(tables, plan["residuals"])
    cube_ds = None
    if cube or figures:
        say("computing the model cube")
        cube_ds = model_cube(scene, comparison, result, image_wavelengths=image_wavelengths, npix=npix,
                             progress=say)
    if cube:
        if plan["cube"].exists():
            plan["cube"].unlink()  # netCDF4 refuses to clobber an open-for-read file; force was given
        write_model_cube(cube_ds, plan["cube"])
        files.append(plan["cube"])
        say(f"wrote {plan['cube']}")
    if figures:
        say("drawing figures")
        files += write_figures(scene, comparison, result, cube_ds, plan["figures"], dpi=dpi, progress=say)
    return EvaluationReport(scene=scene, comparison=comparison, result=result, chi2=rows, files=files,
                            cube=cube_ds)
