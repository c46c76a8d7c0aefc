"""Interferometric figures: V², closure phases, |V|, correlated fluxes and differential phases
with residuals, and model correlated-flux spectra."""
from __future__ import annotations

import bqplot as bq
import ipywidgets as w
import numpy as np

from ...observables.species_parts import species_coherent_flux
from ..palette import INK, MUTED, OKABE_ITO, RING_COLOURS, WAVELENGTH_SCHEME
from .base import (EMPTY, assign, axis, dot_segments, error_segments, group_rows, new_figure, row_dots, row_ticks,
                   swap_scale, tick_segments)
from .sed import draw_species

__all__ = ["Vis2Figure", "ClosureFigure", "VisAmpFigure", "CorrFluxPointsFigure", "DiffPhaseFigure",
           "CorrelatedFluxFigure", "wavelength_colours", "wavelength_position", "wavelength_groups"]


def wavelength_position(wavelength, lo, hi):
    """Where ``wavelength`` (µm) lies on the colour key spanning ``lo``–``hi``: 0 … 1, clipped."""
    return np.clip((np.asarray(wavelength, float) - lo) / max(hi - lo, 1e-9), 0.0, 1.0)


def wavelength_colours(wavelength, lo, hi):
    """Hex colours of ``wavelength`` (µm) on the wavelength scheme spanning ``lo``–``hi``."""
    stops = np.array([[int(c[i:i + 2], 16) for i in (1, 3, 5)] for c in WAVELENGTH_SCHEME], float)
    pos = np.linspace(0, 1, len(stops))
    f = wavelength_position(wavelength, lo, hi)
    rgb = np.stack([np.interp(f, pos, stops[:, k]) for k in range(3)], axis=-1)
    return ["#%02x%02x%02x" % tuple(int(round(c)) for c in row) for row in np.atleast_2d(rgb)]


def wavelength_groups(wavelength, lo, hi, most=None):
    """Group points by their colour on the wavelength key spanning ``lo``–``hi`` (µm).

    Each distinct wavelength is a group while there are at most ``most`` (default
    :data:`MOST_COLOURS`); beyond, the groups are equal bins of the key (the occupied ones).

    Returns
    -------
    group : ndarray of int
        The group of each point, 0 … n_groups − 1.
    colours : list of str
        Hex colour of each group.
    """
    most = MOST_COLOURS if most is None else most
    wl = np.asarray(wavelength, float).ravel()
    waves, group = np.unique(wl, return_inverse=True)
    if waves.size <= most:
        return group.ravel(), (wavelength_colours(waves, lo, hi) if waves.size else [])
    b = np.clip((wavelength_position(wl, lo, hi) * most).astype(int), 0, most - 1)
    used, group = np.unique(b, return_inverse=True)
    return group.ravel(), wavelength_colours(lo + (used + 0.5) / most * (hi - lo), lo, hi)


#: At most this many points per figure are sent to the browser. χ² always uses every point.
MAX_DRAWN = 2500
#: At most this many colours (one SVG path each) for a figure's points and residuals.
MOST_COLOURS = 64
#: Diameter of a data point, px (the width of its zero-length stroke).
DOT_SIZE = 4.2


class _PointsFigure:
    """Data with error bars coloured by wavelength, the model at the data, and residuals."""

    title = ""
    ylabel = ""
    xlabel = "spatial frequency B/λ [Mλ]"
    css = ""
    kind = ""

    def __init__(self):
        self.sx, self.sy = bq.LinearScale(), bq.LinearScale()
        xy = {"x": self.sx, "y": self.sy}
        self.errors = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, colors=["#c9c6bd"], stroke_width=1)
        # Points are dots in one path per wavelength (wavelength_groups): each path's colour
        # travels with its rows, so a new wavelength range recolours in the same message.
        self.data = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, stroke_width=DOT_SIZE, opacities=[0.85],
                             colors=[MUTED])
        # Model and pin values at the data points are ticks in one path each (see tick_segments).
        self.model = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, colors=[INK], stroke_width=2.4, opacities=[0.9])
        self.pin_marks = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, colors=[OKABE_ITO["reddish_purple"]],
                                  stroke_width=2.4, visible=False, opacities=[0.45])
        self.ax = axis(self.sx, self.xlabel)
        self.ay = axis(self.sy, self.ylabel, "vertical")
        # The wavelength key is written into the title: bqplot 0.13 draws a colour axis in
        # this layout as a few pixels wide, unreadable.
        self.extra_marks = []
        self._build_extra(xy)
        self.figure = new_figure(self.title, [self.errors, self.data, self.pin_marks] + self.extra_marks
                                 + [self.model], [self.ax, self.ay], self.css, dots=True)
        self.figure.fig_margin = {"top": 34, "bottom": 48, "left": 62, "right": 24}
        self.rx, self.ry = bq.LinearScale(), bq.LinearScale()
        # Residuals: ticks in the points' colour groups, one coloured path per group.
        self.residuals = bq.Lines(x=EMPTY, y=EMPTY, scales={"x": self.rx, "y": self.ry}, stroke_width=2.4,
                                  colors=[MUTED])
        self.zero = bq.Lines(x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": self.rx, "y": self.ry}, colors=[MUTED],
                             line_style="dashed")
        self.rax = axis(self.rx, self.xlabel)
        self.residual_figure = new_figure(f"{self.title} residuals", [self.zero, self.residuals],
                                          [self.rax, axis(self.ry, "(data − model)/σ", "vertical")],
                                          self.css + "-residuals", height="200px", dots=True)
        # What the title cannot hold in a narrow output (an SVG title is not wrapped): how
        # many of the points are drawn, in a caption that wraps.
        self.caption = w.HTML("")
        self.caption.add_class("dx-caption")
        self.widget = w.VBox(self._panels(), layout={"width": "100%"})
        self._points = None
        self._shown = slice(None)
        self._rows = slice(None)   # the drawn points' positions in the comparison's arrays

    def _build_extra(self, scales):
        pass

    def _panels(self):
        return (self.figure, self.caption, self.residual_figure)

    def apply_style(self, state):
        """Linear axes; a figure with axis toggles overrides this."""

    #: Hide the figure (and its residuals) while the data hold no point of its kind.
    hide_without_data = False

    def update_data(self, view):
        """Draw this kind's points of ``view`` (a DataView)."""
        pts = getattr(view, self.kind)
        if self.hide_without_data:
            display = "none" if pts is None else ""
            if self.widget.layout.display != display:
                self.widget.layout.display = display
            # A figure rendered while hidden measures zero and sets negative sizes on its
            # plot area (logged by the page): a hidden figure has no view at all.
            panels = () if pts is None else self._panels()
            if self.widget.children != panels:
                self.widget.children = panels
        if pts is not None:
            n = pts["freq"].size
            # An even stride keeps every baseline and wavelength represented.
            self._shown = np.arange(0, n, int(np.ceil(n / MAX_DRAWN))) if n > MAX_DRAWN else slice(None)
            pts = {k: v[self._shown] for k, v in pts.items()}
            # OI_VIS kinds are a subset of the OI_VIS points; the others are the whole kind.
            self._rows = pts["index"] if "index" in pts else self._shown
            lo, hi = view.wavelength_range
            assign(self.figure, title=f"{self.title} — λ {lo:.3g} µm (purple) to {hi:.3g} µm (red)")
            assign(self.caption, value="" if n <= MAX_DRAWN else
                   f"drawn: {pts['freq'].size:,} of {n:,} points, evenly spread (χ² uses all)")
        self._points = pts
        if pts is None:
            assign(self.figure, title=f"{self.title} — no data")
            assign(self.caption, value="")
            for m in (self.errors, self.data, self.model, self.residuals):
                assign(m, x=EMPTY, y=EMPTY)
            return
        lo, hi = view.wavelength_range
        group, colours = wavelength_groups(pts["wavelength"], lo, hi)
        self._index, row_group = group_rows(group, len(colours))
        colours = [colours[g] for g in row_group] or [MUTED]
        ex, ey = error_segments(pts["freq"], pts["value"], pts["error"])
        assign(self.errors, x=ex, y=ey)
        dx, dy = row_dots(pts["freq"], pts["value"], self._index)
        assign(self.data, x=dx, y=dy, colors=colours)
        assign(self.residuals, colors=colours)
        fmin, fmax = self._x_range(pts["freq"])
        self._tick = 0.004 * (fmax - fmin)
        assign(self.sx, min=fmin, max=fmax)
        assign(self.rx, min=fmin, max=fmax)
        assign(self.zero, x=np.array([fmin, fmax]))

    def _x_range(self, x):
        """The x axis range for points at ``x``: from 0 (spatial frequencies)."""
        return 0.0, float(np.max(x)) * 1.05

    def update_model(self, frame):
        """Draw the model at the data points and the residuals."""
        result = frame.result
        if self._points is None or result is None or self.model_key not in result.model:
            assign(self.model, x=EMPTY, y=EMPTY)
            assign(self.residuals, x=EMPTY, y=EMPTY)
            return
        pts = self._points
        mx, my = tick_segments(pts["freq"], np.asarray(result.model[self.model_key])[self._rows], self._tick)
        assign(self.model, x=mx, y=my)
        r = np.asarray(result.residuals[self.model_key])[self._rows]
        rx, ry = row_ticks(pts["freq"], r, self._index, self._tick)
        assign(self.residuals, x=rx, y=ry)

    def update_pins(self, pins):
        """The first pin's model at the data points, faint (more would hide the data)."""
        if not pins or self._points is None or pins[0][2].result is None:
            assign(self.pin_marks, visible=False)
            return
        name, colour, f = pins[0]
        if self.model_key not in f.result.model:
            assign(self.pin_marks, visible=False)
            return
        px, py = tick_segments(self._points["freq"], np.asarray(f.result.model[self.model_key])[self._rows],
                               self._tick)
        assign(self.pin_marks, x=px, y=py, colors=[colour], visible=True)


class Vis2Figure(_PointsFigure):
    """V² against spatial frequency, with a continuous model curve along one position angle."""

    title = "squared visibility"
    ylabel = "V²"
    css = "dx-fig-vis2"
    kind = "vis2"
    model_key = "vis2"

    def _build_extra(self, scales):
        xy = {"x": self.sx, "y": self.sy}
        self.curve = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, stroke_width=2.2, display_legend=True)
        self.curve_pins = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, line_style="dashed", visible=False,
                                   stroke_width=1.4)
        self.extra_marks = [self.curve_pins, self.curve]
        self._wl_range = (1.5, 13.0)

    def update_data(self, view):
        super().update_data(view)
        self._wl_range = view.wavelength_range

    def update_curve(self, frame):
        """Draw the continuous curve ``frame.curve`` = (freq Mλ, V² (nwl, n), wavelengths µm, PA deg)."""
        freq, vis2, wls, pa = frame.curve
        assign(self.curve, x=freq, y=vis2, colors=wavelength_colours(wls, *self._wl_range),
               labels=[f"{wl:.2f} µm, PA {pa:.0f}°" for wl in wls])

    def update_pins(self, pins):
        super().update_pins(pins)
        curves = [(c, f.curve) for _, c, f in pins if f.curve is not None]
        if not curves:
            assign(self.curve_pins, visible=False)
            return
        ys = np.vstack([cv[1] for _, cv in curves])
        cols = [c for c, cv in curves for _ in range(cv[1].shape[0])]
        assign(self.curve_pins, x=curves[0][1][0], y=ys, colors=cols, opacities=[0.55] * len(cols),
               visible=True)

    def apply_style(self, state):
        """Log V² axis and log frequency axis from the state."""
        self.sy = swap_scale(self.figure, self.ay, "y", state.log_vis2)
        if state.log_vis2:
            assign(self.sy, min=1e-4, max=1.1)
        else:
            assign(self.sy, min=0.0, max=1.1)


class ClosureFigure(_PointsFigure):
    """Closure phases against the largest spatial frequency of each triangle."""

    title = "closure phase"
    ylabel = "closure phase [°]"
    css = "dx-fig-t3"
    kind = "t3"
    model_key = "t3phi"

    def update_data(self, view):
        super().update_data(view)
        assign(self.ax, label="largest spatial frequency of the triangle [Mλ]")
        assign(self.rax, label="largest spatial frequency of the triangle [Mλ]")

    def apply_style(self, state):
        """Closure phases are always on a linear axis."""


class VisAmpFigure(_PointsFigure):
    """Normalised visibility amplitudes |V| (OI_VIS, AMPTYP "absolute") against spatial frequency."""

    title = "visibility amplitude"
    ylabel = "|V|"
    css = "dx-fig-visamp"
    kind = "visamp"
    model_key = "visamp"
    hide_without_data = True


class CorrFluxPointsFigure(_PointsFigure):
    """Correlated fluxes |V| F_ν (OI_VIS, AMPTYP "correlated flux", Jy) against spatial frequency."""

    title = "correlated flux"
    ylabel = "|V| F_ν [Jy]"
    css = "dx-fig-corrflux-data"
    kind = "corrflux"
    model_key = "corrflux"
    hide_without_data = True


class DiffPhaseFigure(_PointsFigure):
    """Differential phases (OI_VIS, PHITYP "differential") against wavelength.

    Each channel's phase relative to the reference channels its file's VISREFMAP names
    (see :func:`diskexplorer.fitting.comparison.differential_phase`).
    """

    title = "differential phase"
    ylabel = "differential phase [°]"
    xlabel = "λ [µm]"
    css = "dx-fig-diffphi"
    kind = "diffphi"
    model_key = "diffphi"
    hide_without_data = True

    def _x_range(self, x):
        lo, hi = float(np.min(x)), float(np.max(x))
        pad = 0.03 * max(hi - lo, 0.1)
        return lo - pad, hi + pad


class CorrelatedFluxFigure:
    """Model correlated flux |V| F_total against λ for a spread of baselines."""

    def __init__(self):
        self.sx, self.sy = bq.LogScale(), bq.LinearScale()
        sc = {"x": self.sx, "y": self.sy}
        self.lines = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.6, display_legend=True)
        # The model's channels as dots on each line (dot_segments: one path per baseline).
        self.markers = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=4.0)
        self.pin_lines = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.2, line_style="dashed",
                                  visible=False)
        self.data = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, colors=[OKABE_ITO["vermillion"]], stroke_width=3.0,
                             opacities=[0.8], visible=False)
        # Each dust species' share of the coherent flux on one chosen baseline.
        self.species = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.2, line_style="dash_dotted",
                                visible=False)
        self.figure = new_figure("correlated flux per baseline (model)",
                                 [self.pin_lines, self.lines, self.markers, self.species, self.data],
                                 [axis(self.sx, "λ [µm]"), axis(self.sy, "|V| F_total [Jy]", "vertical")],
                                 "dx-fig-corrflux", height="300px", dots=True)
        self.species_of = w.Dropdown(options=[("none", -1)], value=-1, description="species on",
                                     layout={"width": "300px"}, style={"description_width": "initial"})
        self.species_of.observe(lambda ch: self._draw_species(), "value")
        self.species_key = w.HTML()
        self.widget = w.VBox([w.HBox([self.species_of, self.species_key], layout={"flex_flow": "row wrap",
                                                                                  "align_items": "center"}),
                              self.figure], layout={"width": "100%"})
        self._groups = []
        self._baseline_uv = []
        self._frame = None

    def update_data(self, view):
        """Choose the baselines to draw (``view.baselines``)."""
        self._groups = view.baselines
        vis2 = getattr(view.observations, "vis2", None) if view.observations is not None else None
        self._baseline_uv = [(vis2["u"].values[g["index"]], vis2["v"].values[g["index"]],
                              vis2["wavelength"].values[g["index"]]) for g in self._groups] if vis2 is not None else []
        # Keep the chosen baseline while it is still among those drawn.
        chosen = self.species_of.label if self.species_of.value >= 0 else None
        options = [("none", -1)] + [(g["label"], k) for k, g in enumerate(self._groups)]
        self.species_of.options = options
        self.species_of.value = next((k for label, k in options[1:] if label == chosen), -1)
        vis = getattr(view.observations, "vis", None) if view.observations is not None else None
        if vis is not None and vis.sizes.get("point", 0):
            amptyp = np.asarray(vis["amptyp"].values).astype(str)
            sel = amptyp == "correlated flux"
            dx, dy = dot_segments(vis["wavelength"].values[sel], vis["visamp"].values[sel])
            assign(self.data, x=dx, y=dy, visible=bool(sel.any()))
        else:
            assign(self.data, visible=False)

    def update_model(self, frame):
        """Draw |V| F_total at the V² points of each chosen baseline."""
        if not self._groups or frame.result is None:
            assign(self.lines, x=EMPTY, y=EMPTY)
            assign(self.markers, x=EMPTY, y=EMPTY)
            return
        xs, ys = self._rows(frame)
        colours = [RING_COLOURS[k % len(RING_COLOURS)] for k in range(len(self._groups))]
        assign(self.lines, x=xs, y=ys, colors=colours, labels=[g["label"] for g in self._groups])
        mx, my = dot_segments(xs.ravel(), ys.ravel())
        assign(self.markers, x=mx.reshape(xs.shape[0], -1), y=my.reshape(xs.shape[0], -1), colors=colours)
        self._frame = frame
        self._draw_species()

    def _draw_species(self):
        """|F_s V_s| of each species on the chosen baseline (monochromatic at its channels)."""
        k = self.species_of.value
        parts = {}
        if k is not None and 0 <= k < len(self._baseline_uv) and self._frame is not None:
            u, v, wl = self._baseline_uv[k]
            parts = species_coherent_flux(self._frame.scene, u, v, wl)
        if not parts:
            draw_species(self.species, self.species_key, EMPTY, {})
            return
        wl = self._baseline_uv[k][2]
        order = np.argsort(wl)
        draw_species(self.species, self.species_key, wl[order], {p: np.abs(c)[order] for p, c in parts.items()},
                     suffix=f" ({self._groups[k]['label']})")

    def _rows(self, frame):
        """(λ, |V| F_total) per chosen baseline, NaN-padded rows."""
        corr = frame.result.prediction.correlated_flux
        wl = frame.wavelength_vis2
        n = max(g["index"].size for g in self._groups)
        xs = np.full((len(self._groups), n), np.nan)
        ys = np.full_like(xs, np.nan)
        for k, g in enumerate(self._groups):
            idx = g["index"]
            xs[k, :idx.size] = wl[idx]
            ys[k, :idx.size] = corr[idx]
        return xs, ys

    def update_pins(self, pins):
        """Each pin's correlated fluxes on the same baselines, dashed in the pin's colour."""
        rows = [(self._rows(f), c) for _, c, f in pins
                if self._groups and f.result is not None and f.wavelength_vis2 is not None]
        if not rows:
            assign(self.pin_lines, visible=False)
            return
        xs = np.vstack([r[0][0] for r in rows])
        ys = np.vstack([r[0][1] for r in rows])
        cols = [c for (x, _), c in rows for _ in range(x.shape[0])]
        assign(self.pin_lines, x=xs, y=ys, colors=cols, opacities=[0.55] * len(cols), visible=True)

    def apply_style(self, state):
        """No toggles."""
