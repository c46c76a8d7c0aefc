"""The report's matplotlib figures: SED, silicate band, V², closure phases, visibility
amplitudes, correlated fluxes and differential phases (when the data hold them), image, profiles.

matplotlib is imported only when figures are drawn (:func:`write_figures`), with the
non-interactive Agg backend, so importing this module pulls in neither matplotlib nor
any widget library.
"""
from __future__ import annotations

import math

import numpy as np

from .outputs import DEFAULT_DPI, FIGURE_SIZES_IN, FIGURES, _quiet
from .tables import residual_tables

__all__ = ["write_figures"]

#: Wavelengths (µm) of the image figure's panels (near-infrared rim, mid-infrared disk).
_IMAGE_FIGURE_WAVELENGTHS = (2.2, 10.0)

# Okabe & Ito (2008) colour-universal-design palette (the same one the app uses; kept
# here because the core must not import the app package).
_OKABE_ITO = ("#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")
_COMPONENT_COLOURS = {"star": "#E69F00", "extended": "#999999", "total": "#000000", "data": "#D55E00"}
_RING_COLOURS = ("#0072B2", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442")


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
    from ..observables.spectrum import (NO_DUST_BAND, SILICATE_WINDOWS, model_silicate_band,
                                        normalized_silicate_band)

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
    band = model_silicate_band(scene, lam)
    title = "normalised 10 µm silicate band (grey: continuum windows)"
    if band is None:
        # A bare photosphere's curvature through the windows is no band: draw none.
        title += "\n" + NO_DUST_BAND
    else:
        ax.plot(lam, band, color=_COMPONENT_COLOURS["total"], lw=2, label="model")
    for lo, hi in SILICATE_WINDOWS:
        ax.axvspan(lo, hi, color="#999999", alpha=0.2, lw=0)
    ax.axhline(1.0, color="#999999", lw=0.8)
    ax.set_xlabel("wavelength λ [µm]")
    ax.set_ylabel("normalised flux 1 + (F$_ν$ − F$_c$)/⟨F$_c$⟩")
    ax.set_title(title)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=9)
    return fig


#: Most data points one figure draws; a larger table is thinned evenly for its figure (the
#: residual tables keep every point) and the figure says so. 20 000 markers keep a PNG
#: under a few seconds; more would only overplot.
MAX_FIGURE_POINTS = 20_000


def _data_points(ax, x, cols, colour):
    """Data with error bars, coloured by ``colour``, and the model, black; returns the scatter.

    Error bars are one collection of segments built from arrays (``errorbar`` builds
    them point by point: seconds at 10⁵ points; one NaN-separated path keeps tens of
    MB per figure in the renderer).
    """
    n = len(cols["data"])
    pick = slice(None) if n <= MAX_FIGURE_POINTS else np.linspace(0, n - 1, MAX_FIGURE_POINTS).round().astype(int)
    x = np.asarray(x, float)[pick]
    y = np.asarray(cols["data"], float)[pick]
    e = np.asarray(cols["error"], float)[pick]
    from matplotlib.collections import LineCollection

    ends = np.stack([np.column_stack([x, y - e]), np.column_stack([x, y + e])], axis=1)
    ax.add_collection(LineCollection(ends, colors="#BBBBBB", linewidths=0.6, zorder=1))
    sc = ax.scatter(x, y, c=np.asarray(colour, float)[pick], s=9, cmap="viridis", zorder=2, label="data")
    ax.scatter(x, np.asarray(cols["model"], float)[pick], s=4, marker=".", color="#000000", zorder=3, label="model")
    if n > MAX_FIGURE_POINTS:
        ax.text(0.99, 0.01, f"{MAX_FIGURE_POINTS:,} of {n:,} points shown, evenly spaced",
                transform=ax.transAxes, ha="right", va="bottom", fontsize=8, color="#555555")
    return sc


def _legend_in_emptiest_corner(ax, x, y, fontsize=9):
    """A legend in the corner of the axes that holds the fewest of the points (x, y).

    matplotlib's ``loc="best"`` tests every point against every candidate place, which
    takes seconds at 10⁴–10⁵ points; four corner boxes counted with numpy do the same job.
    """
    ax.autoscale_view()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    fx = (np.asarray(x, float) - x0) / ((x1 - x0) or 1.0)
    fy = (np.asarray(y, float) - y0) / ((y1 - y0) or 1.0)
    corners = {"upper right": (fx > 0.65) & (fy > 0.75), "upper left": (fx < 0.35) & (fy > 0.75),
               "lower right": (fx > 0.65) & (fy < 0.25), "lower left": (fx < 0.35) & (fy < 0.25)}
    loc = min(corners, key=lambda k: int(np.count_nonzero(corners[k])))
    ax.legend(fontsize=fontsize, loc=loc)


#: The N band of the species figure, µm.
_SPECIES_BAND_UM = (7.5, 13.5)


def _species_baselines(comparison, most=3):
    """Up to ``most`` N-band baselines of the data, a spread of lengths: (label, u, v, λ) each."""
    obs = getattr(comparison, "observations", None) if comparison is not None else None
    ds = getattr(obs, "vis2", None) if obs is not None else None
    if ds is None or not ds.sizes.get("point", 0):
        return []
    wl = ds["wavelength"].values
    inside = np.flatnonzero((wl >= _SPECIES_BAND_UM[0]) & (wl <= _SPECIES_BAND_UM[1]))
    if not inside.size:
        return []
    u, v = ds["u"].values[inside], ds["v"].values[inside]
    # One row per (u, v): the baseline of an exposure; pick the shortest, middle and longest.
    rows, first, which = np.unique(np.round(np.stack([u, v], axis=1), 3), axis=0, return_index=True,
                                   return_inverse=True)
    which = which.ravel()
    length = np.hypot(rows[:, 0], rows[:, 1])
    order = np.argsort(length)
    picks = order[np.unique(np.linspace(0, order.size - 1, min(most, order.size)).round().astype(int))]
    out = []
    for r in picks:
        sel = inside[which == r]
        k = np.argsort(wl[sel])
        out.append((f"B = {length[r]:.0f} m", ds["u"].values[sel][k], ds["v"].values[sel][k], wl[sel][k]))
    return out


def _figure_species(plt, scene, comparison):
    """Each dust species' share of the N-band spectrum, and of the correlated flux per baseline."""
    from ..observables.species_parts import species_coherent_flux, species_spectra

    fig, (left, right) = plt.subplots(1, 2, figsize=FIGURE_SIZES_IN["species"], layout="constrained")
    lam = np.linspace(*_SPECIES_BAND_UM, 121)
    parts = species_spectra(scene, lam)
    names = list(dict.fromkeys(label.split(": ", 1)[1] for label in parts))
    # Okabe–Ito without black (the totals) and yellow (too faint on white).
    hues = [c for c in _OKABE_ITO if c not in ("#000000", "#F0E442")] + ["#777777"]
    colour = {n: hues[k % len(hues)] for k, n in enumerate(names)}
    styles = ("-.", ":", "--")
    rings = list(dict.fromkeys(label.split(": ", 1)[0] for label in parts))
    comps = scene.sed_components(lam)
    for r, ring in enumerate(rings):
        left.plot(lam, comps[ring], color=_ring_colour(r), lw=1.8, label=f"ring {ring}")
    for label, flux in parts.items():
        ring, name = label.split(": ", 1)
        left.plot(lam, flux, color=colour[name], lw=1.1, ls=styles[rings.index(ring) % 3], label=label)
    if not parts:
        left.text(0.5, 0.5, "no ring holds a dust mixture", transform=left.transAxes, ha="center")
    left.set_xlabel("wavelength λ [µm]")
    left.set_ylabel("F$_ν$ [Jy]")
    left.set_title("each species' share of its ring")
    if parts:
        left.legend(fontsize=7, ncol=2)
    baselines = _species_baselines(comparison)
    if not baselines:
        pa = math.radians(scene.position_angle)
        baselines = [(f"B = {b:.0f} m (major axis; no N-band data)", np.full(lam.size, b * math.sin(pa)),
                      np.full(lam.size, b * math.cos(pa)), lam) for b in (20.0, 50.0, 100.0)]
    greys = ("#000000", "#555555", "#999999")
    for k, (label, u, v, wl) in enumerate(baselines):
        right.plot(wl, np.abs(scene.visibility(u, v, wl) * scene.sed(wl)), color=greys[k % 3], lw=1.6,
                   label=f"total, {label}")
    # The species on one baseline (the middle one): more would hide each other.
    label, u, v, wl = baselines[len(baselines) // 2]
    for part, coherent in species_coherent_flux(scene, u, v, wl).items():
        ring, name = part.split(": ", 1)
        right.plot(wl, np.abs(coherent), color=colour[name], lw=1.1, ls=styles[rings.index(ring) % 3], label=part)
    right.set_xlabel("wavelength λ [µm]")
    right.set_ylabel("correlated flux |F V| [Jy]")
    right.set_title(f"correlated flux: totals, and each species on {label.split(' (')[0]}")
    right.legend(fontsize=7, ncol=2)
    fig.suptitle("dust species (shares of each ring; exact for power-law temperatures)")
    return fig


def _interferometric_figure(plt, name, tables, kind, ylabel, title, scene):
    fig, ax = plt.subplots(figsize=FIGURE_SIZES_IN[name], layout="constrained")
    cols = tables.get(kind)
    if cols is not None and len(cols["data"]):
        freq = cols["spatial_frequency_Mlambda"]
        lam = cols["wavelength_um"]
        sc = _data_points(ax, freq, cols, lam)
        fig.colorbar(sc, ax=ax, label="wavelength λ [µm]")
        _legend_in_emptiest_corner(ax, *sc.get_offsets().T)
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
    ax.set_xlabel("longest baseline of the triangle B$_{max}$/λ [Mλ]" if kind.startswith("t3")
                  else "spatial frequency B/λ [Mλ]")
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    return fig


def _figure_differential_phase(plt, tables):
    """Differential phases against wavelength (they are spectral), coloured by baseline length."""
    fig, ax = plt.subplots(figsize=FIGURE_SIZES_IN["differential_phase"], layout="constrained")
    cols = tables["diffphi"]
    lam = cols["wavelength_um"]
    baseline = np.hypot(cols["u_m"], cols["v_m"])
    sc = _data_points(ax, lam, cols, baseline)
    fig.colorbar(sc, ax=ax, label="projected baseline B [m]")
    ax.axhline(0.0, color="#999999", lw=0.8)
    ax.set_xlabel("wavelength λ [µm]")
    ax.set_ylabel("differential phase [deg]")
    ax.set_title("differential phases, relative to each row's reference channels (colour: data; black: model)")
    _legend_in_emptiest_corner(ax, *sc.get_offsets().T)
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

    from ..physics.constants import ARCSEC_RAD, RAD_PER_MAS

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
    from ..observables.profiles import radial_profiles

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
        "species": lambda: _figure_species(plt, scene, comparison),
        "vis2": lambda: _interferometric_figure(plt, "vis2", tables, "vis2", "squared visibility V²",
                                                "squared visibilities (colour: data; black: model)", scene),
        "closure_phase": lambda: _interferometric_figure(plt, "closure_phase", tables, "t3phi",
                                                         "closure phase [deg]",
                                                         "closure phases (colour: data; black: model)", scene),
        "visibility_amplitude": lambda: _interferometric_figure(
            plt, "visibility_amplitude", tables, "visamp", "visibility amplitude |V|",
            "visibility amplitudes (colour: data; black: model)", scene),
        "correlated_flux": lambda: _interferometric_figure(
            plt, "correlated_flux", tables, "corrflux", "correlated flux |V| F$_ν$ [Jy]",
            "correlated fluxes (colour: data; black: model)", scene),
        "differential_phase": lambda: _figure_differential_phase(plt, tables),
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
