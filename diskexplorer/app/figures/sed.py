"""The SED (photometry and model components) and the N-band spectrum with its silicate band."""
from __future__ import annotations

import bqplot as bq
import ipywidgets as w
import numpy as np

from ...observables.species_parts import species_spectra
from ...observables.spectrum import NO_DUST_BAND, has_dust_opacity
from ..state.model_views import DEFAULT_SPECTRUM_WAVELENGTHS, SED_WAVELENGTHS, silicate_band, spectrum_wavelengths
from ..palette import COMPONENT_COLOURS, OKABE_ITO, ring_colour
from .base import EMPTY, assign, axis, error_segments, new_figure, swap_scale

__all__ = ["SedFigure", "SpectrumFigure", "component_colours", "species_colours", "species_key", "draw_species",
           "BAND_TITLE"]

#: Title of the silicate-band figure; a model without dust adds :data:`NO_DUST_BAND` to it.
BAND_TITLE = "normalised silicate band"


def component_colours(names):
    """Colours of SED components in the order of ``names`` (star, rings…, extended, total)."""
    out, k = [], 0
    for n in names:
        if n in COMPONENT_COLOURS:
            out.append(COMPONENT_COLOURS[n])
        else:
            out.append(ring_colour(k))
            k += 1
    return out


#: Colours of the species' lines, in the order of their first appearance (ring by ring).
_SPECIES_COLOURS = (OKABE_ITO["vermillion"], OKABE_ITO["sky_blue"], OKABE_ITO["bluish_green"], OKABE_ITO["orange"],
                    OKABE_ITO["reddish_purple"], OKABE_ITO["yellow"], OKABE_ITO["blue"], "#777777")


def species_colours(labels):
    """One colour per species name (``"ring: species"`` labels): a species keeps its colour in every ring."""
    names = list(dict.fromkeys(label.split(": ", 1)[-1] for label in labels))
    return [_SPECIES_COLOURS[names.index(label.split(": ", 1)[-1]) % len(_SPECIES_COLOURS)] for label in labels]


def species_key(labels, colours):
    """HTML key of species lines: a dash-dotted swatch in each line's colour and its label."""
    import html

    items = [f"<span style='white-space:nowrap;margin-right:10px'><span style='color:{c};font-weight:bold'>-·-</span> "
             f"{html.escape(label)}</span>" for label, c in zip(labels, colours)]
    return f"<div style='font-size:11px;line-height:1.4'>{' '.join(items)}</div>"


def draw_species(mark, key, x, parts, suffix=""):
    """Draw ``parts`` (label → values at ``x``) on the Lines ``mark`` and list them in the HTML
    ``key``; hide both when there are none. ``suffix`` is added to each line's label."""
    if not parts:
        assign(mark, visible=False)
        key.value = ""
        return
    labels = list(parts)
    colours = species_colours(labels)
    assign(mark, x=x, y=np.vstack([parts[k] for k in labels]), labels=[f"{k}{suffix}" for k in labels],
           colors=colours, visible=True)
    key.value = species_key(labels, colours)


def _positive(y):
    y = np.asarray(y, float)
    return np.where(y > 0, y, np.nan)


class SedFigure:
    """F_ν against λ: photometry with error bars, the model's components and total, pins."""

    def __init__(self):
        self.sx, self.sy = bq.LogScale(), bq.LogScale()
        sc = {"x": self.sx, "y": self.sy}
        self.errors = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, colors=[COMPONENT_COLOURS["data"]],
                               stroke_width=1.2)
        self.points = bq.Scatter(x=EMPTY, y=EMPTY, scales=sc, colors=[COMPONENT_COLOURS["data"]],
                                 default_size=28, marker="diamond", labels=["photometry"],
                                 display_legend=True)
        self.components = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.6, display_legend=True)
        self.pins = bq.Lines(x=EMPTY, y=EMPTY, scales=sc,
                             line_style="dashed", opacities=[0.55], stroke_width=1.4, visible=False)
        self.ax = axis(self.sx, "λ [µm]")
        self.ay = axis(self.sy, "F_ν [Jy]", "vertical", tick_format=".3~g")
        self.figure = new_figure("SED", [self.pins, self.components, self.errors, self.points],
                                 [self.ax, self.ay], "dx-fig-sed", legend=True)
        self.widget = self.figure

    def update_data(self, view):
        """Draw the photometry of ``view`` (a DataView)."""
        ph = view.photometry
        if ph is None or ph["wavelength"].size == 0:
            assign(self.points, x=EMPTY, y=EMPTY)
            assign(self.errors, x=EMPTY, y=EMPTY)
            return
        x = ph["wavelength"].values
        y = ph["flux"].values
        e = np.nan_to_num(ph["flux_err"].values)
        ex, ey = error_segments(x, y, e)
        assign(self.points, x=x, y=y)
        assign(self.errors, x=ex, y=_positive(ey))

    def update_model(self, frame):
        """Draw the model's SED components (``frame.sed``: dict name → Jy on SED_WAVELENGTHS)."""
        names = list(frame.sed)
        assign(self.components, x=SED_WAVELENGTHS, y=np.vstack([_positive(frame.sed[n]) for n in names]),
               colors=component_colours(names), labels=names)
        total = frame.sed["total"]
        peak = np.nanmax(total) if np.isfinite(total).any() else 1.0
        # Without a floor, the Wien tail of the star pulls the log axis down many decades.
        assign(self.sy, min=float(peak * 1e-4), max=float(peak * 3.0))

    def update_pins(self, pins):
        """Draw each pin's total SED, faint and dashed (``pins``: list of (name, colour, frame))."""
        if not pins:
            assign(self.pins, visible=False)
            return
        assign(self.pins, x=SED_WAVELENGTHS, y=np.vstack([_positive(f.sed["total"]) for _, _, f in pins]),
               colors=[c for _, c, _ in pins], labels=[n for n, _, _ in pins],
               opacities=[0.6] * len(pins), visible=True)

    def apply_style(self, state):
        """Log or linear axes from ``state.log_sed_x`` / ``state.log_sed_y``."""
        self.sx = swap_scale(self.figure, self.ax, "x", state.log_sed_x)
        self.sy = swap_scale(self.figure, self.ay, "y", state.log_sed_y)


#: Wavelengths (µm) of the model spectrum while no spectrum is loaded.
class SpectrumFigure:
    """The N-band spectrum (data, model total and components) and the normalised silicate band."""

    def __init__(self):
        self.sx, self.sy = bq.LinearScale(), bq.LinearScale()
        sc = {"x": self.sx, "y": self.sy}
        c = COMPONENT_COLOURS
        self.errors = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, colors=["#e9a47a"], stroke_width=1)
        self.data = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, colors=[c["data"]], stroke_width=1.8,
                             labels=["spectrum"], display_legend=True)
        self.components = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.5, display_legend=True)
        self.pins = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, line_style="dashed", visible=False)
        # Each species' share of its ring (observables.species_parts), drawn on request.
        self.species = bq.Lines(x=EMPTY, y=EMPTY, scales=sc, stroke_width=1.2, line_style="dash_dotted",
                                visible=False)
        self.ax = axis(self.sx, "λ [µm]")
        self.ay = axis(self.sy, "F_ν [Jy]", "vertical")
        self.figure = new_figure("N-band spectrum", [self.pins, self.species, self.components, self.errors,
                                                     self.data],
                                 [self.ax, self.ay], "dx-fig-spectrum")
        self.bx, self.by = bq.LinearScale(), bq.LinearScale()
        bs = {"x": self.bx, "y": self.by}
        self.band_data = bq.Lines(x=EMPTY, y=EMPTY, scales=bs, colors=[c["data"]], stroke_width=1.8,
                                  labels=["data"], display_legend=True)
        self.band_model = bq.Lines(x=EMPTY, y=EMPTY, scales=bs, colors=[c["total"]], stroke_width=1.6,
                                   labels=["model"], display_legend=True)
        self.band_pins = bq.Lines(x=EMPTY, y=EMPTY, scales=bs, line_style="dashed", visible=False)
        self.band_figure = new_figure(BAND_TITLE, [self.band_pins, self.band_model,
                                                                  self.band_data],
                                      [axis(self.bx, "λ [µm]"),
                                       axis(self.by, "1 + (F − F_c)/⟨F_c⟩", "vertical")],
                                      "dx-fig-silicate")
        self.show_species = w.Checkbox(value=False, indent=False,
                                       description="each dust species' share of its ring (dash-dotted)",
                                       layout={"width": "auto"})
        self.show_species.observe(lambda ch: self._draw_species(), "value")
        # Side by side where there is room, one under the other in a narrow output.
        for fig in (self.figure, self.band_figure):
            fig.layout.flex, fig.layout.width = "1 1 320px", "auto"
        # The species' key sits beside the box: in the figure's legend it would cover the curves.
        self.species_key = w.HTML()
        self.widget = w.VBox([w.HBox([self.show_species, self.species_key],
                                     layout={"flex_flow": "row wrap", "align_items": "center"}),
                              w.HBox([self.figure, self.band_figure],
                                                        layout={"width": "100%", "flex_flow": "row wrap"})],
                             layout={"width": "100%"})
        self._wl = DEFAULT_SPECTRUM_WAVELENGTHS
        self._frame = None

    def update_data(self, view):
        """Draw the spectrum of ``view`` and fix the model's wavelengths to it."""
        sp = view.spectrum
        self._wl = spectrum_wavelengths(view)
        if sp is None or sp["wavelength"].size == 0:
            for m in (self.data, self.errors, self.band_data):
                assign(m, x=EMPTY, y=EMPTY)
            return
        x, y = sp["wavelength"].values, sp["flux"].values
        e = np.nan_to_num(sp["flux_err"].values)
        ex, ey = error_segments(x, y, e)
        assign(self.data, x=x, y=y)
        assign(self.errors, x=ex, y=ey)
        band = silicate_band(x, y)
        assign(self.band_data, x=x if band is not None else EMPTY, y=band if band is not None else EMPTY)

    @property
    def wavelength(self):
        """Wavelengths (µm) at which the model spectrum is drawn."""
        return self._wl

    def update_model(self, frame):
        """Draw ``frame.spectrum`` (dict name → Jy at :attr:`wavelength`)."""
        spec = frame.spectrum
        names = [n for n in spec if n != "extended" or np.any(spec[n] > 0)]
        assign(self.components, x=self._wl, y=np.vstack([spec[n] for n in names]),
               colors=component_colours(names), labels=names)
        band = self._model_band(frame)
        assign(self.band_model, x=self._wl if band is not None else EMPTY,
               y=band if band is not None else EMPTY)
        # A model without dust has no band: say so rather than draw the curvature of its
        # Planck spectra through the continuum windows as an absorption.
        dusty = has_dust_opacity(frame.scene)
        assign(self.band_figure, title=BAND_TITLE if dusty else f"{BAND_TITLE} — {NO_DUST_BAND}")
        assign(self.band_model, labels=["model"] if dusty else [f"model: {NO_DUST_BAND}"])
        self._frame = frame
        self._draw_species()

    def _draw_species(self):
        """Each species' share of its ring at :attr:`wavelength`, when the box is ticked."""
        parts = species_spectra(self._frame.scene, self._wl) if self.show_species.value and self._frame else {}
        draw_species(self.species, self.species_key, self._wl, parts)

    def _model_band(self, frame):
        """The model's normalised band at :attr:`wavelength`, or None (no dust, or a window missing)."""
        if not has_dust_opacity(frame.scene):
            return None
        return silicate_band(self._wl, frame.spectrum["total"])

    def update_pins(self, pins):
        """Faint dashed totals and bands of the pinned states."""
        if not pins:
            assign(self.pins, visible=False)
            assign(self.band_pins, visible=False)
            return
        cols = [c for _, c, _ in pins]
        assign(self.pins, x=self._wl, y=np.vstack([f.spectrum["total"] for _, _, f in pins]), colors=cols,
               opacities=[0.6] * len(pins), visible=True)
        bands = [self._model_band(f) for _, _, f in pins]
        bands = [b if b is not None else np.full(self._wl.size, np.nan) for b in bands]
        assign(self.band_pins, x=self._wl, y=np.vstack(bands), colors=cols, opacities=[0.6] * len(pins),
               visible=True)

    def apply_style(self, state):
        """No log axes here (the band is a linear diagnostic)."""
