"""The model's panels of controls: star and distance, viewing geometry, extended component.

Each control is a :class:`~diskexplorer.app.controls.param_control.ParamControl` built from
the parameter's declaration; each edit calls one :class:`~diskexplorer.app.state.ExplorerState`
method, and an invalid value is refused with its message and the panel shows the state again.
"""
from __future__ import annotations

import html

import ipywidgets as w

from ...errors import DiskExplorerError
from ...observables.scene import Scene
from ...physics.parameters import parameter_specs
from ...physics.star import LUMINOSITY_SPEC, Star
from .param_control import ParamControl

#: Star(luminosity=...) is a constructor argument, not a declared field; its range here
#: follows from the declared radius and T_eff ranges at typical Herbig/T Tauri values.

__all__ = ["StarPanel", "GeometryPanel", "ExtendedPanel", "guarded"]


def guarded(state, fn):
    """Apply an edit; an invalid value shows its ParameterError and leaves the state as it was."""
    try:
        fn()
        return True
    except DiskExplorerError as exc:
        state.show_message(str(exc))
        return False


class _Panel(w.VBox):
    def __init__(self, state, children, title):
        self.state = state
        head = w.HTML(f"<div class='dx-section-title'>{html.escape(title)}</div>")
        super().__init__([head] + children)
        self.add_class("dx-panel")
        state.observe(lambda ch: self.sync(), "scene")

    def _set(self, fn):
        if not guarded(self.state, fn):
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
