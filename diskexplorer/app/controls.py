"""Slider-plus-number controls generated from ParameterSpecs, and the scene-level panels."""
from __future__ import annotations

import html
import math

import ipywidgets as w

from ..errors import DiskExplorerError
from ..observables.scene import Scene
from ..physics.parameters import ParameterSpec, parameter_specs
from ..physics.star import LUMINOSITY_SPEC, Star
from .palette import MUTED

__all__ = ["ParamControl", "StarPanel", "GeometryPanel", "ExtendedPanel", "unit_text", "LUMINOSITY_SPEC"]

_UNITS = {"g / cm2": "g cm⁻²", "solRad": "R☉", "solMass": "M☉", "solLum": "L☉", "deg": "°", "um": "µm"}

#: Star(luminosity=...) is a constructor argument, not a declared field; its range here
#: follows from the declared radius and T_eff ranges at typical Herbig/T Tauri values.


def unit_text(unit):
    """Display form of an astropy unit string ("" stays "")."""
    return _UNITS.get(unit, unit)


def _label_html(label):
    if "_" in label:
        base, sub = label.split("_", 1)
        return f"{html.escape(base)}<sub>{html.escape(sub)}</sub>"
    return html.escape(label)


class ParamControl(w.HBox):
    """A labelled slider with a numeric box beside it, built from a :class:`ParameterSpec`.

    Parameters
    ----------
    spec : ParameterSpec
        Supplies the label, unit, slider range (``bounds``) and linear/log scale.
    value : float
        Initial value (the slider range widens to include it).
    on_change : callable
        Called with the new value (float) when the user moves the slider or types.
    css : str, optional
        Extra CSS class (tests and the browser test find controls by it).
    """

    def __init__(self, spec, value, on_change, css=None, step=None):
        self.spec = spec
        self._callback = on_change
        self._quiet = False
        lo, hi = spec.bounds
        unit = unit_text(spec.unit)
        text = f"{_label_html(spec.label)}" + (f" <span style='color:{MUTED}'>[{html.escape(unit)}]</span>" if unit else "")
        self.label = w.HTML(text, layout={"width": "92px"}, tooltip=spec.description)
        value = float(value)
        if spec.scale == "log":
            lo_e, hi_e = math.log10(min(lo, value)), math.log10(max(hi, value))
            self.slider = w.FloatLogSlider(value=value, base=10, min=lo_e, max=hi_e, step=(hi_e - lo_e) / 300,
                                           readout=False, continuous_update=True, layout={"width": "170px"})
        else:
            lo_v, hi_v = min(lo, value), max(hi, value)
            self.slider = w.FloatSlider(value=value, min=lo_v, max=hi_v, step=step or (hi_v - lo_v) / 200,
                                        readout=False, continuous_update=True, layout={"width": "170px"})
        self.number = w.FloatText(value=value, layout={"width": "82px"})
        # The true value; the slider may hold a value snapped to its step grid.
        self._value = value
        self.slider.observe(self._on_slider_change, "value")
        self.number.observe(self._on_number_change, "value")
        super().__init__([self.label, self.slider, self.number], layout={"align_items": "center"})
        self.add_class("dx-param")
        if css:
            self.add_class(css)

    @property
    def value(self):
        """Current value (float); the slider shows it rounded to its step."""
        return float(self._value)

    def _is_snap(self, new):
        # The browser rounds a slider's value to its step grid when it first draws it and
        # sends the rounded value back; treating that as an edit would move the model on
        # page load. A real move (drag, arrow key) is at least one full step.
        s = self.slider
        if isinstance(s, w.FloatLogSlider):
            if new <= 0 or self._value <= 0:
                return False
            return abs(math.log10(new) - math.log10(self._value)) < 0.5 * s.step
        return abs(new - self._value) < 0.5 * s.step

    def set_value(self, value):
        """Show ``value`` without calling back (the state changed elsewhere)."""
        value = float(value)
        self._quiet = True
        try:
            s = self.slider
            if isinstance(s, w.FloatLogSlider):
                e = math.log10(value) if value > 0 else s.min
                if e < s.min:
                    s.min = e
                if e > s.max:
                    s.max = e
            else:
                if value < s.min:
                    s.min = value
                if value > s.max:
                    s.max = value
            self._value = value
            if s.value != value:
                s.value = value
            if self.number.value != value:
                self.number.value = value
        finally:
            self._quiet = False

    def _on_slider_change(self, change):
        if self._quiet or self._is_snap(float(change["new"])):
            return
        self._value = float(change["new"])
        self._quiet = True
        try:
            self.number.value = float(change["new"])
        finally:
            self._quiet = False
        self._callback(float(change["new"]))

    def _on_number_change(self, change):
        if self._quiet:
            return
        self.set_value(change["new"])
        self._callback(float(change["new"]))


def _guarded(state, fn):
    """Apply an edit; an invalid value shows its ParameterError and leaves the state as it was."""
    try:
        fn()
        return True
    except DiskExplorerError as exc:
        state.say(str(exc))
        return False


class _Panel(w.VBox):
    def __init__(self, state, children, title):
        self.state = state
        head = w.HTML(f"<div class='dx-section-title'>{html.escape(title)}</div>")
        super().__init__([head] + children)
        self.add_class("dx-panel")
        state.observe(lambda ch: self.sync(), "scene")

    def _set(self, fn):
        if not _guarded(self.state, fn):
            self.sync()


class StarPanel(_Panel):
    """T_eff, radius or luminosity, mass, uniform disk; and the distance."""

    def __init__(self, state):
        specs = parameter_specs(Star)
        star = state.scene.star or Star()
        self.controls = {
            "t_eff": ParamControl(specs["t_eff"], star.t_eff, lambda v: self._set(lambda: state.update_star(t_eff=v)),
                                  css="dx-t_eff"),
            "radius": ParamControl(specs["radius"], star.radius,
                                   lambda v: self._set(lambda: state.update_star(radius=v)), css="dx-radius"),
            "luminosity": ParamControl(LUMINOSITY_SPEC, star.luminosity,
                                       lambda v: self._set(lambda: state.update_star(luminosity=v)),
                                       css="dx-luminosity"),
            "mass": ParamControl(specs["mass"], star.mass, lambda v: self._set(lambda: state.update_star(mass=v)),
                                 css="dx-mass"),
            "distance": ParamControl(parameter_specs(Scene)["distance"], state.scene.distance,
                                     lambda v: self._set(lambda: state.update_scene(distance=v)), css="dx-distance"),
        }
        self.size_by = w.ToggleButtons(options=[("radius", "radius"), ("luminosity", "luminosity")],
                                       value="radius", style={"button_width": "90px"})
        self.size_by.observe(lambda ch: self._show_size(), "value")
        self.uniform = w.Checkbox(value=star.uniform_disk, description="resolved stellar disk", indent=False)
        self.uniform.observe(lambda ch: self._set(lambda: state.update_star(uniform_disk=ch["new"])), "value")
        self.size_box = w.VBox([self.controls["radius"]])
        super().__init__(state, [self.controls["t_eff"], w.HBox([w.HTML("size from", layout={"width": "92px"}),
                                                                   self.size_by]),
                                 self.size_box, self.controls["mass"], self.uniform, self.controls["distance"]],
                         "star and distance")

    def _show_size(self):
        key = self.size_by.value
        self.size_box.children = [self.controls[key]]
        self.sync()

    def sync(self):
        """Show the state's star and distance."""
        star = self.state.scene.star or Star()
        for k in ("t_eff", "radius", "mass"):
            self.controls[k].set_value(getattr(star, k))
        self.controls["luminosity"].set_value(star.luminosity)
        self.controls["distance"].set_value(self.state.scene.distance)
        if self.uniform.value != star.uniform_disk:
            self.uniform.value = star.uniform_disk


class GeometryPanel(_Panel):
    """Inclination and position angle of the disk."""

    def __init__(self, state):
        specs = parameter_specs(Scene)
        sc = state.scene
        self.controls = {
            name: ParamControl(specs[name], getattr(sc, name),
                               (lambda n: lambda v: self._set(lambda: state.update_scene(**{n: v})))(name),
                               css=f"dx-{name}")
            for name in ("inclination", "position_angle")}
        super().__init__(state, list(self.controls.values()), "viewing geometry")

    def sync(self):
        """Show the state's geometry."""
        for name, c in self.controls.items():
            c.set_value(getattr(self.state.scene, name))


class ExtendedPanel(_Panel):
    """The fully resolved component's flux fraction."""

    def __init__(self, state):
        spec = parameter_specs(Scene)["extended_fraction"]
        self.control = ParamControl(spec, state.scene.extended_fraction,
                                    lambda v: self._set(lambda: state.update_scene(extended_fraction=v)),
                                    css="dx-extended_fraction")
        super().__init__(state, [self.control], "extended component")

    def sync(self):
        """Show the state's extended fraction."""
        self.control.set_value(self.state.scene.extended_fraction)
