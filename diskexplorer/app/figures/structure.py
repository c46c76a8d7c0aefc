"""Radial profiles of the rings and the model image with ring outlines and a scale bar."""
from __future__ import annotations

import math

import bqplot as bq
import ipywidgets as w
import numpy as np

from ...physics.constants import ARCSEC_RAD, RAD_PER_MAS
from ..state.model_views import profiles, ring_outline
from ..palette import BRIGHTNESS_SCHEME, INK, ring_colour
from .base import EMPTY, assign, axis, new_figure, swap_scale

__all__ = ["ProfilesFigure", "ImageFigure"]


#: Radius range (au) of the profiles' axes until a profile is drawn.
_R_SPAN = (0.03, 100.0)


class ProfilesFigure:
    """T(r), τ(10 µm)(r) and I_ν(r) of every ring, side by side."""

    def __init__(self):
        self.parts = {}
        figs = []
        for key, title, ylabel, ylog in (("temperature", "temperature", "T [K]", True),
                                         ("tau", "optical depth at 10 µm", "τ (vertical)", True),
                                         ("intensity", "brightness", "I_ν [Jy sr⁻¹]", True)):
            # A domain from the start: before the first profile arrives the axis would place
            # its fixed tick values at NaN (the page logs every one).
            sx = bq.LogScale(min=_R_SPAN[0], max=_R_SPAN[1])
            sy = bq.LogScale() if ylog else bq.LinearScale()
            line = bq.Lines(x=EMPTY, y=EMPTY, scales={"x": sx, "y": sy}, stroke_width=2, display_legend=(key == "temperature"))
            pin_line = bq.Lines(x=EMPTY, y=EMPTY, scales={"x": sx, "y": sy}, stroke_width=1.4,
                                line_style="dashed", visible=False)
            ax = axis(sx, "r [au]", tick_values=[0.03, 0.1, 0.3, 1, 3, 10, 30, 100])
            fig = new_figure(title, [pin_line, line], [ax, axis(sy, ylabel, "vertical", tick_format=".2~e" if key == "intensity" else ".3~g")],
                             f"dx-fig-profile-{key}", height="250px")
            self.parts[key] = {"line": line, "pin_line": pin_line, "figure": fig, "ax": ax}
            figs.append(fig)
        # Each species of an equilibrium ring at its own temperature (dash-dotted, ring colour).
        temp = self.parts["temperature"]
        sx, sy = temp["line"].scales["x"], temp["line"].scales["y"]
        self.species_lines = bq.Lines(x=EMPTY, y=EMPTY, scales={"x": sx, "y": sy}, stroke_width=1.4,
                                      line_style="dash_dotted", display_legend=True, visible=False)
        temp["figure"].marks = [temp["pin_line"], self.species_lines, temp["line"]]
        # Side by side where there is room, wrapped in a narrow output.
        for fig in figs:
            fig.layout.flex, fig.layout.width = "1 1 300px", "auto"
        self.widget = w.HBox(figs, layout={"width": "100%", "flex_flow": "row wrap"})
        self._pins = []
        self._wavelength = 10.0
        self._span = _R_SPAN
        self._radii = {"live": np.zeros(0), "pins": np.zeros(0)}

    def update_data(self, view):
        """Profiles do not depend on the data."""

    def update_model(self, frame):
        """Draw ``frame.profiles`` (from :func:`~diskexplorer.observables.profiles.radial_profiles`)."""
        prof = frame.profiles
        r = prof["radius"].values
        labels = [str(x) for x in prof["ring"].values]
        colours = [ring_colour(k) for k in range(len(labels))]
        for key, part in self.parts.items():
            y = np.asarray(prof[key].values, float)
            if y.size == 0:
                assign(part["line"], x=EMPTY, y=EMPTY)
                continue
            y = np.where(np.isfinite(y) & (y > 0), y, np.nan)
            assign(part["line"], x=r, y=y, colors=colours, labels=labels)
        self._radii["live"] = r
        self._set_span()
        self._draw_species(frame.scene, r, labels)
        assign(self.parts["intensity"]["figure"],
               title=f"brightness at {prof['intensity'].attrs.get('wavelength_um', 0):.3g} µm")
        wavelength = float(prof["intensity"].attrs.get("wavelength_um", self._wavelength))
        if wavelength != self._wavelength:
            self._wavelength = wavelength
            self._draw_pins()

    def _draw_species(self, scene, r, labels):
        """One temperature line per species of each equilibrium ring, NaN where it is absent."""
        xs, ys, cols, names = [], [], [], []
        for k, ring in enumerate(scene.rings):
            if not ring.is_equilibrium or scene.star is None:
                continue
            edge = ring.resolved(scene.star)
            if edge is None:
                continue
            inside = (r >= edge.r_in) & (r <= edge.r_out)
            for species, t in scene.dust_temperature(k, r).items():
                xs.append(r)
                ys.append(np.where(inside, t, np.nan))
                cols.append(ring_colour(k))
                names.append(f"{labels[k]}: {species}")
        if xs:
            assign(self.species_lines, x=np.vstack(xs), y=np.vstack(ys), colors=cols, labels=names, visible=True)
        else:
            assign(self.species_lines, x=EMPTY, y=EMPTY, visible=False)

    def update_pins(self, pins):
        """Each pin's ring profiles, dashed in the pin's colour (``pins``: (name, colour, frame))."""
        self._pins = list(pins)
        self._draw_pins()

    def _draw_pins(self):
        rows = {key: ([], []) for key in self.parts}
        colours = []
        for _, colour, frame in self._pins:
            if not frame.scene.rings:
                continue
            prof = profiles(frame.scene, self._wavelength)
            r = prof["radius"].values
            for k in range(prof.sizes["ring"]):
                colours.append(colour)
                for key in self.parts:
                    y = prof[key].values[k]
                    rows[key][0].append(r)
                    rows[key][1].append(np.where(np.isfinite(y) & (y > 0), y, np.nan))
        self._radii["pins"] = np.concatenate([np.ravel(x) for x in rows["temperature"][0]]) if colours else np.zeros(0)
        self._set_span()
        for key, part in self.parts.items():
            if not colours:
                assign(part["pin_line"], visible=False)
                continue
            assign(part["pin_line"], x=np.vstack(rows[key][0]), y=np.vstack(rows[key][1]), colors=colours,
                   opacities=[0.6] * len(colours), visible=True)

    def _set_span(self):
        """The radius axes span every drawn radius (live and pinned), explicitly (see _R_SPAN)."""
        r = np.concatenate([self._radii["live"], self._radii["pins"]])
        r = r[np.isfinite(r) & (r > 0)]
        self._span = (float(r.min()), float(r.max())) if r.size else _R_SPAN
        for part in self.parts.values():
            assign(part["ax"].scale, min=self._span[0], max=self._span[1])

    def apply_style(self, state):
        """Log or linear radius axes from ``state.log_profiles``."""
        for part in self.parts.values():
            swap_scale(part["figure"], part["ax"], "x", state.log_profiles, min=self._span[0], max=self._span[1])


def _nice_length(x):
    """A round number (1, 2 or 5 × 10ⁿ) not larger than ``x``."""
    if not x > 0:
        return 1.0
    e = math.floor(math.log10(x))
    for m in (5, 2, 1):
        if m * 10**e <= x:
            return m * 10**e
    return 10**e


class ImageFigure:
    """The model image (log brightness), ring edges, and a scale bar in au."""

    def __init__(self):
        self.sx = bq.LinearScale(reverse=True)  # East to the left, as on the sky
        self.sy = bq.LinearScale()
        self.colour = bq.ColorScale(colors=list(BRIGHTNESS_SCHEME))
        self.heat = bq.HeatMap(x=np.arange(2.0), y=np.arange(2.0), color=np.zeros((2, 2)),
                               scales={"x": self.sx, "y": self.sy, "color": self.colour})
        xy = {"x": self.sx, "y": self.sy}
        self.outlines = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, stroke_width=1.1, line_style="dashed")
        self.pin_outlines = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, stroke_width=1.3, line_style="dotted",
                                     visible=False)
        self.bar = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, colors=[INK], stroke_width=3)
        self.bar_label = bq.Label(x=[0.0], y=[0.0], text=[""], scales=xy, colors=[INK], font_weight="bolder",
                                  default_size=12, align="middle")
        self.figure = new_figure("model image", [self.heat, self.pin_outlines, self.outlines, self.bar, self.bar_label],
                                 [axis(self.sx, "Δα (East ←) [mas]"), axis(self.sy, "Δδ (North ↑) [mas]", "vertical"),
                                  bq.ColorAxis(scale=self.colour, label="log₁₀ I", side="right")],
                                 "dx-fig-image", height="440px")
        # Equal scales on both axes, so an inclined ring keeps its true shape and angle.
        self.figure.layout.width = "470px"
        self.figure.fig_margin = {"top": 34, "bottom": 48, "left": 62, "right": 80}
        self.figure.min_aspect_ratio = 1.0
        self.figure.max_aspect_ratio = 1.0
        self.widget = self.figure

    def update_data(self, view):
        """The image does not depend on the data."""

    def update_model(self, frame):
        """Draw ``frame.image`` (DataArray from :func:`model_image`) for ``frame.scene``."""
        img = frame.image
        scene = frame.scene
        x = img["x"].values
        y = img["y"].values
        data = np.asarray(img.values, float)
        peak = data.max() if data.size and data.max() > 0 else 1.0
        # The star sits in one pixel and is ~100× brighter than a ring pixel: a log scale
        # with a floor of 10⁻⁴ shows both.
        logimg = np.log10(np.maximum(data / peak, 1e-4))
        assign(self.heat, x=x, y=y, color=logimg)
        assign(self.colour, min=-4.0, max=0.0)
        edges = img.attrs.get("ring_edges_mas", [])
        xs, ys, cols = [], [], []
        # The image lists the rings it drew: enabled ones, less any whose sublimation front
        # lies beyond its outer radius (empty).
        enabled = [k for k, r in enumerate(scene.rings)
                   if r.enabled and (r.inner_edge == "fixed" or r.resolved(scene.star) is not None)]
        for k, (lo, hi) in zip(enabled, edges):
            for rad in (lo, hi):
                ox, oy = ring_outline(rad, scene.inclination, scene.position_angle)
                xs.append(ox)
                ys.append(oy)
                cols.append(ring_colour(k))
        if xs:
            assign(self.outlines, x=np.vstack(xs), y=np.vstack(ys), colors=cols)
        else:
            assign(self.outlines, x=EMPTY, y=EMPTY)
        half = float(x.max()) if x.size else 1.0
        mas_per_au = ARCSEC_RAD / scene.distance / RAD_PER_MAS
        au = _nice_length(0.4 * half / mas_per_au)
        length = au * mas_per_au
        # The x scale is reversed: the bar's right end sits at +0.9 × half (East side, left).
        x0 = -0.9 * half
        assign(self.bar, x=np.array([x0, x0 + length]), y=np.array([-0.88 * half, -0.88 * half]))
        assign(self.bar_label, x=[x0 + length / 2], y=[-0.8 * half], text=[f"{au:g} au"])
        assign(self.sx, min=float(x.min()), max=float(x.max()))
        assign(self.sy, min=float(y.min()), max=float(y.max()))
        assign(self.figure, title=f"model image at {img.attrs.get('wavelength_um', 0):.3g} µm")

    def update_pins(self, pins):
        """The pinned states' ring edges, dotted in each pin's colour, over the live image."""
        xs, ys, cols = [], [], []
        for _, colour, frame in pins:
            sc = frame.scene
            mas_per_au = ARCSEC_RAD / sc.distance / RAD_PER_MAS
            for ring in sc.rings:
                if not ring.enabled:
                    continue
                for rad in (ring.r_in, ring.r_out):
                    ox, oy = ring_outline(rad * mas_per_au, sc.inclination, sc.position_angle)
                    xs.append(ox)
                    ys.append(oy)
                    cols.append(colour)
        if xs:
            assign(self.pin_outlines, x=np.vstack(xs), y=np.vstack(ys), colors=cols, visible=True)
        else:
            assign(self.pin_outlines, visible=False)

    def apply_style(self, state):
        """No toggles."""
