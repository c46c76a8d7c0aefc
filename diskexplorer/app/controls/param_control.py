"""Slider-plus-number controls generated from ParameterSpecs, and the scene-level panels."""
from __future__ import annotations

import html
import math

import ipywidgets as w
from ipywidgets.widgets.widget_description import DescriptionStyle
from ipywidgets.widgets.widget_string import HTMLStyle

from ..state.echo_guard import EchoGuard
from ..palette import MUTED
from .slider_companion import SliderCompanion

__all__ = ["ParamControl", "unit_text", "nice_step"]

_UNITS = {"g / cm2": "g cm⁻²", "solRad": "R☉", "solMass": "M☉", "solLum": "L☉", "deg": "°", "um": "µm"}

def unit_text(unit):
    """Display form of an astropy unit string ("" stays "")."""
    return _UNITS.get(unit, unit)


def _label_html(label):
    if "_" in label:
        base, sub = label.split("_", 1)
        return f"{html.escape(base)}<sub>{html.escape(sub)}</sub>"
    return html.escape(label)


#: Steps across a slider's range: linear, and log (in decades).
_LINEAR_STEPS = 200
_LOG_STEPS = 300
# A value from the page within this fraction of a step of a grid point is that point
# (the page computes min + k·step in its own floating point).
_ON_GRID = 1e-6

#: Units as words for assistive technology (symbols such as R☉ are read out badly).
_SPOKEN_UNITS = {"solRad": "solar radii", "solMass": "solar masses", "solLum": "solar luminosities",
                 "deg": "degrees", "um": "µm", "g / cm2": "g/cm²"}


_SHARED = {}


def _shared(key, make):
    """One Layout or Style shared by every control, for the parts no caller changes.

    Every widget brings a Layout (and most a Style), each a widget of its own that a new
    browser page receives and builds: sharing them removes five widgets per control.
    A shared one that was closed (``Widget.close_all``) is replaced.
    """
    obj = _SHARED.get(key)
    if obj is None or getattr(obj, "comm", None) is None:
        obj = _SHARED[key] = make()
    return obj


def _width(px):
    """The shared Layout of this width (px)."""
    return _shared(f"width-{px:g}", lambda: w.Layout(width=f"{px:g}px"))


def nice_step(span, steps):
    """The step of the 1-2-5 series nearest (in ratio) to ``span / steps``.

    Examples
    --------
    >>> nice_step(2450.0, 200), nice_step(4.0, 300)
    (10.0, 0.01)
    """
    raw = float(span) / steps
    if not (math.isfinite(raw) and raw > 0):
        return 1.0
    decade = 10.0 ** math.floor(math.log10(raw))
    best = min((m * decade for m in (1, 2, 5, 10)), key=lambda c: abs(math.log(c / raw)))
    return float(f"{best:.12g}")


class _Grid:
    """The slider's step grid, anchored on a value so that the grid contains it exactly.

    Works in the slider's coordinate: the value (linear) or log10 of it (log). Index 0
    is the anchor itself, so stepping away and back returns the anchor bit for bit;
    other indices give the anchor plus whole steps, cleaned of floating-point dust. If
    the grid would leave the valid range, its end index stands for the valid end
    itself (a shorter last step) so that the slider still reaches 0 or 1.
    """

    def __init__(self, spec, value, step):
        self.log = spec.scale == "log"
        self.anchor = float(value)
        self.step = step
        self.a = self._coord(self.anchor)
        lo, hi = spec.bounds
        lo, hi = min(lo, self.anchor), max(hi, self.anchor)
        v_lo, v_hi = spec.valid
        c_lo, c_hi = self._coord(lo), self._coord(hi)
        n_lo = math.ceil((self.a - c_lo) / step - 1e-9)
        n_hi = math.ceil((c_hi - self.a) / step - 1e-9)
        self.end_lo = self.end_hi = None
        # A grid end outside the valid range stands for the range's own end.
        if not self.log or v_lo > 0:
            edge = self._value(-n_lo)
            if edge < v_lo or (edge == v_lo and not spec.closed[0]):
                if lo > v_lo or spec.closed[0]:
                    self.end_lo = lo
                else:
                    n_lo -= 1
        edge = self._value(n_hi)
        if edge > v_hi or (edge == v_hi and not spec.closed[1]):
            if hi < v_hi or spec.closed[1]:
                self.end_hi = hi
            else:
                n_hi -= 1
        self.n_lo, self.n_hi = max(n_lo, 0), max(n_hi, 0)
        self.min = self.a - self.n_lo * step
        self.max = self.a + self.n_hi * step

    def _coord(self, value):
        return math.log10(value) if self.log else float(value)

    def _value(self, k):
        if k == 0:
            return self.anchor
        if self.log:
            return float(f"{self.anchor * 10.0 ** (k * self.step):.12g}")
        return round(self.anchor + k * self.step, 6 - math.floor(math.log10(self.step)))

    def value(self, k):
        """The value at index ``k`` (the range's ends where they stand for the valid ends)."""
        if k <= -self.n_lo and self.end_lo is not None:
            return self.end_lo
        if k >= self.n_hi and self.end_hi is not None:
            return self.end_hi
        return self._value(k)

    def index(self, value):
        """The grid index of ``value``, or None when it lies off the grid."""
        value = float(value)
        if value == self.anchor:
            return 0
        if self.end_lo is not None and value == self.end_lo:
            return -self.n_lo
        if self.end_hi is not None and value == self.end_hi:
            return self.n_hi
        if self.log and value <= 0:
            return None
        k = (self._coord(value) - self.a) / self.step
        j = round(k)
        return j if abs(k - j) < _ON_GRID and -self.n_lo <= j <= self.n_hi else None

    def slider_value(self, k):
        """What the slider holds at index ``k`` (FloatLogSlider holds values, FloatSlider coordinates)."""
        if k <= -self.n_lo and self.end_lo is not None:
            return 10.0 ** self.min if self.log else self.min
        if k >= self.n_hi and self.end_hi is not None:
            return 10.0 ** self.max if self.log else self.max
        return self.value(k)


class ParamControl(w.HBox):
    """A labelled slider with a numeric box beside it, built from a :class:`ParameterSpec`.

    Parameters
    ----------
    spec : ParameterSpec
        Supplies the label, unit, slider range (``bounds``), linear/log scale and the
        significant digits shown (``digits``).
    value : float
        Initial value (the slider range widens to include it).
    on_change : callable
        Called with the new value (float) when the user moves the slider or types.
    css : str, optional
        Extra CSS class (tests and the browser test find controls by it).
    step : float, optional
        Slider step of a linear parameter (default: a 1-2-5 step near 1/200 of the range).
    widths : tuple of int, optional
        Widths (px) of the label, the slider and the number box. Their layouts are shared
        by every control of the same width (each Layout is a widget a new page builds):
        never change a control's layouts in place; pass widths instead.

    Notes
    -----
    The slider's grid is anchored on the current value (:class:`_Grid`): the value is a
    grid point, so arrow keys step away and back to it exactly, and a value set from
    elsewhere (typed, a fit, a session) moves the anchor. The number box shows the value
    rounded to ``spec.digits`` significant digits; :attr:`value` is never rounded. A
    :class:`~diskexplorer.app.controls.slider_aria.SliderAria` gives the handle its name and its
    value in the unit (a log slider's own coordinate is log10 of the value).
    """

    def __init__(self, spec, value, on_change, css=None, step=None, widths=(92, 170, 82)):
        self.spec = spec
        self._callback = on_change
        self._quiet = EchoGuard()
        unit = unit_text(spec.unit)
        self._label_text = (f"{_label_html(spec.label)}"
                            + (f" <span style='color:{MUTED}'>[{html.escape(unit)}]</span>" if unit else ""))
        label_w, slider_w, number_w = (_width(px) for px in widths)
        self.label = w.HTML(layout=label_w, style=_shared("html-style", HTMLStyle))
        value = float(value)
        lo, hi = spec.bounds
        if spec.scale == "log":
            self._step = nice_step(math.log10(max(hi, value)) - math.log10(min(lo, value)), _LOG_STEPS)
        else:
            self._step = float(step) if step else nice_step(max(hi, value) - min(lo, value), _LINEAR_STEPS)
        # The true value; the number box shows it rounded, the slider as a grid point.
        self._value = value
        self._grid = _Grid(spec, value, self._step)
        g = self._grid
        slider_style = _shared("slider-style", w.SliderStyle)
        if spec.scale == "log":
            self.slider = w.FloatLogSlider(value=value, base=10, min=g.min, max=g.max, step=self._step,
                                           readout=False, continuous_update=True, layout=slider_w,
                                           style=slider_style)
        else:
            self.slider = w.FloatSlider(value=value, min=g.min, max=g.max, step=self._step,
                                        readout=False, continuous_update=True, layout=slider_w,
                                        style=slider_style)
        self.number = w.FloatText(value=spec.rounded(value), layout=number_w,
                                  style=_shared("text-style", DescriptionStyle))
        self._unit = unit
        spoken = _SPOKEN_UNITS.get(spec.unit, spec.unit)
        self.aria = SliderCompanion(label=f"{spec.label}" + (f" [{spoken}]" if spoken else "") + f": {spec.description}",
                                    unit=spoken, log=spec.scale == "log", digits=spec.digits,
                                    title_name=spec.label, title_unit=unit, title_description=spec.description,
                                    layout=_shared("hidden", lambda: w.Layout(display="none")))
        self._show_grid()
        self.slider.observe(self._on_slider_change, "value")
        self.number.observe(self._on_number_change, "value")
        super().__init__([self.label, self.slider, self.number, self.aria],
                         layout=_shared("row", lambda: w.Layout(align_items="center")))
        self._show_number()
        self._show_title()
        self.add_class("dx-param")
        if css:
            self.add_class(css)

    @property
    def value(self):
        """Current value (float), exactly as the model holds it."""
        return float(self._value)

    @property
    def step(self):
        """Slider step: in the value's unit (linear) or in decades (log)."""
        return self._step

    def _show_grid(self):
        # A new grid means the value left the old one (typed, set from code): the kernel
        # writes the label's title then; on the grid the page writes it (SliderCompanion).
        if getattr(self, "_title_anchor", None) not in (None, self._grid.anchor):
            self._show_title()
        g = self._grid
        with self.slider.hold_sync(), self.slider.hold_trait_notifications():
            self.slider.min = g.min
            self.slider.max = g.max
            k = g.index(self._value)
            target = g.slider_value(k if k is not None else 0)
            if self.slider.value != target:
                self.slider.value = target
        with self.aria.hold_sync():
            self.aria.min_coord, self.aria.max_coord = g.min, g.max
            self.aria.min_value, self.aria.max_value = g.end_lo, g.end_hi

    def _show_number(self):
        # The box shows spec.digits significant digits; the label's title the exact value.
        shown = self.spec.rounded(self._value)
        if self.number.value != shown:
            self.number.value = shown

    def _show_title(self):
        # The control's tooltip: the exact value and what the parameter means. (A title on
        # the label's text: ipywidgets puts a widget's own tooltip on its hidden
        # description label, and a Box's tooltip breaks its view.) Written when the grid
        # is anchored anew; slider steps leave it to the page.
        self._title_anchor = self._grid.anchor
        exact = (f"{self.spec.label} = {self._value!r}" + (f" {self._unit}" if self._unit else "")
                 + f" — {self.spec.description}")
        text = f"<span class='dx-param-label' title='{html.escape(exact, quote=True)}'>{self._label_text}</span>"
        if self.label.value != text:
            self.label.value = text

    def _from_slider(self, new):
        """The value a slider position stands for, and whether it is on the grid."""
        g = self._grid
        if isinstance(self.slider, w.FloatLogSlider):
            if new <= 0:
                return new, False
            k = (math.log10(new) - g.a) / g.step
        else:
            k = (new - g.a) / g.step
        j = round(k)
        if abs(k - j) < _ON_GRID:
            return g.value(max(-g.n_lo, min(g.n_hi, j))), True
        return new, False

    def _is_snap(self, new):
        # The page rounds a slider's value to its step grid when it first draws it and
        # sends the rounded value back; treating that as an edit would move the model on
        # page load. A real move (drag, arrow key) is at least one full step.
        s = self.slider
        if isinstance(s, w.FloatLogSlider):
            if new <= 0 or self._value <= 0:
                return False
            return abs(math.log10(new) - math.log10(self._value)) < 0.5 * self._step
        return abs(new - self._value) < 0.5 * self._step

    def set_value(self, value):
        """Show ``value`` without calling back (the state changed elsewhere)."""
        value = float(value)
        with self._quiet:
            if value != self._value or self._grid.index(value) is None:
                self._value = value
                if self._grid.index(value) is None:
                    self._grid = _Grid(self.spec, value, self._step)
                self._show_grid()
            self._show_number()

    def _on_slider_change(self, change):
        if self._quiet:
            return
        new, on_grid = self._from_slider(float(change["new"]))
        if new == self._value or (not on_grid and self._is_snap(new)):
            return
        self._value = new
        with self._quiet:
            if not on_grid:
                # Set from code, off the grid: anchor the grid on it.
                self._grid = _Grid(self.spec, new, self._step)
                self._show_grid()
            self._show_number()
        self._callback(new)

    def _on_number_change(self, change):
        if self._quiet:
            return
        new = float(change["new"])
        self.set_value(new)
        self._callback(new)
