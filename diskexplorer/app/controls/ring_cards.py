"""One card per ring (add, remove, duplicate, enable) with its dust-mixture editor and its
composition solve (:mod:`~diskexplorer.app.controls.composition_panel`)."""
from __future__ import annotations

import html
import math
from dataclasses import replace

import ipywidgets as w

from ...physics.parameters import ParameterSpec, parameter_specs
from ...physics.ring import MODULATION_AMPLITUDE_SPEC as AMPLITUDE_SPEC
from ...physics.ring import MODULATION_ANGLE_SPEC as ANGLE_SPEC
from ...physics.ring import SUBLIMATION_TEMPERATURE_SPEC, Ring
from .model_panels import guarded
from .param_control import ParamControl
from ..state.echo_guard import EchoGuard
from ..palette import MUTED, ring_colour

__all__ = ["RingDeck", "RingCard", "MixtureEditor", "TemperatureEditor", "renormalise", "NORMALISATION_NOTE",
           "AMPLITUDE_SPEC", "ANGLE_SPEC", "TEMPERATURE_MODE_OPTIONS"]

#: The ring card's temperature switch: (label, Ring.temperature_mode).
TEMPERATURE_MODE_OPTIONS = [("power law", "power_law"), ("equilibrium", "equilibrium")]

#: The modulation is declared as (c1, s1); the cards show it as amplitude and angle, whose
#: ranges follow from that declaration: √(c1² + s1²) ≤ max |c1|, angle a full turn.

_SHAPES = [("hollow spheres (DHS)", "dhs"), ("spheres (Mie)", "mie"), ("ellipsoids (CDE)", "cde")]


def renormalise(fractions, changed, value):
    """Set one mass fraction and rescale the others so that all sum to 1.

    Parameters
    ----------
    fractions : dict of str to float
        Current fractions (summing to 1).
    changed : str
        Species whose fraction the user set.
    value : float
        Its new fraction, clipped to [0, 1].

    Returns
    -------
    dict
        New fractions, same keys, summing to 1. The others keep their proportions; if
        they were all zero they share the remainder equally.
    """
    value = min(max(float(value), 0.0), 1.0)
    others = [k for k in fractions if k != changed]
    rest = sum(fractions[k] for k in others)
    out = {changed: value}
    if not others:
        out[changed] = 1.0
        return out
    for k in others:
        out[k] = (1.0 - value) * (fractions[k] / rest if rest > 0 else 1.0 / len(others))
    return out


def _species():
    from ...dust import list_species

    return [s["name"] for s in list_species()]


def _sizes(species):
    """Grain sizes (µm) the library tabulates for these species (built-ins only)."""
    from ...dust import get_library

    lib = get_library()
    return sorted({float(x) for sp in species for x in lib.sizes(sp, "dhs")})


#: What the editor says under the fractions: they are normalised on purpose, visibly.
NORMALISATION_NOTE = "setting one fraction rescales the others in proportion, so that they sum to 1"


class MixtureEditor(w.VBox):
    """Mass fractions per species (kept normalised), grain size and shape method of a ring's dust.

    Parameters
    ----------
    dust : DustMix or None
        None is an opaque (black-body) ring.
    on_change : callable
        Called with the new dust (a DustMix or None).
    on_message : callable, optional
        Shows a message to the user (the app's notice); a fraction typed outside [0, 1]
        is refused with a message instead of being clipped.

    Notes
    -----
    :class:`~diskexplorer.dust.DustMix` takes mass fractions that sum to 1 and refuses
    others; this editor keeps them so explicitly (:func:`renormalise`) and says so
    under the fractions (:data:`NORMALISATION_NOTE`).
    """

    def __init__(self, dust, on_change, on_message=None):
        self._callback = on_change
        self._on_message = on_message
        self._quiet = EchoGuard()
        self.species = _species()
        frac_spec = ParameterSpec(name="fraction", unit="", label="f", description="mass fraction",
                                  valid=(0.0, 1.0), closed=(True, True), bounds=(0.0, 1.0), digits=3)
        self._frac_spec = frac_spec
        self.fraction_controls = {}
        rows = [self._fraction_row(sp) for sp in self.species]
        self.opaque = w.Checkbox(value=dust is None, description="opaque (no dust opacity)", indent=False)
        self.opaque.observe(self._on_opaque, "value")
        self.size = w.Dropdown(options=[(f"{s:g} µm", s) for s in _sizes(self.species)], description="grain radius",
                               style={"description_width": "86px"}, layout={"width": "220px"})
        self.shape = w.Dropdown(options=_SHAPES, description="shape", style={"description_width": "86px"},
                                layout={"width": "260px"})
        self.size.observe(lambda ch: self._emit(), "value")
        self.shape.observe(lambda ch: self._on_shape(), "value")
        self.sum_label = w.HTML()
        self.body = w.VBox([self.size, self.shape] + rows + [self.sum_label])
        super().__init__([self.opaque, self.body])
        self.add_class("dx-mixture")
        self.sync(dust)

    def _fraction_row(self, species):
        c = ParamControl(replace(self._frac_spec, label=species.replace("_", " ")), 0.0,
                         lambda v: self._on_fraction(species, v), step=0.01, widths=(120, 140, 70))
        self.fraction_controls[species] = c
        return c

    def add_species(self, species):
        """Offer a newly registered species (fraction 0) below the others."""
        if species in self.fraction_controls:
            return
        self.species.append(species)
        row = self._fraction_row(species)
        children = list(self.body.children)
        self.body.children = children[:-1] + [row, children[-1]]   # keep the sum line last

    # -- reading -------------------------------------------------------------------
    @property
    def fractions(self):
        """The fractions shown, by species (sum 1 unless opaque)."""
        return {sp: c.value for sp, c in self.fraction_controls.items()}

    def sync(self, dust):
        """Show ``dust`` (a DustMix or None) without calling back."""
        with self._quiet:
            self.opaque.value = dust is None or not hasattr(dust, "fractions")
            self.body.layout.display = "none" if self.opaque.value else None
            if not self.opaque.value:
                fr = {}
                for key, f in dust.fractions:
                    name = key if isinstance(key, str) else key[0]
                    fr[name] = fr.get(name, 0.0) + f
                # A species this editor does not list yet (registered by an imported
                # starting point or a restored session): offered before it is shown.
                for name in fr:
                    self.add_species(name)
                for sp, c in self.fraction_controls.items():
                    c.set_value(fr.get(sp, 0.0))
                if dust.grain_size in [v for _, v in self.size.options]:
                    self.size.value = dust.grain_size
                self.shape.value = dust.shape
                self.size.disabled = dust.shape == "cde"
            self._show_sum()

    def _show_sum(self):
        total = sum(self.fractions.values())
        self._accepted = self.fractions
        self.sum_label.value = (f"<span style='color:{MUTED};font-size:11px'>sum of mass fractions: {total:.3f}"
                                f" — {html.escape(NORMALISATION_NOTE)}</span>")

    # -- writing -------------------------------------------------------------------
    def _on_fraction(self, species, value):
        if self._quiet:
            return
        if not (math.isfinite(value) and 0.0 <= value <= 1.0):
            # Clipping 5 to 1 would silently make a single-species ring; refuse instead.
            with self._quiet:
                self.fraction_controls[species].set_value(self._accepted.get(species, 0.0))
            if self._on_message is not None:
                self._on_message(f"dust mixture: mass fraction of {species} = {value:g} is outside [0, 1]; "
                                 "the mixture is unchanged")
            return
        new = renormalise(self.fractions, species, value)
        with self._quiet:
            for sp, c in self.fraction_controls.items():
                c.set_value(new[sp])
        self._show_sum()
        self._emit()

    def _on_shape(self):
        self.size.disabled = self.shape.value == "cde"
        self._emit()

    def _on_opaque(self, change):
        if self._quiet:
            return
        self.body.layout.display = "none" if change["new"] else None
        if not change["new"] and sum(self.fractions.values()) <= 0:
            first = self.species[0] if self.species else None
            if first:
                with self._quiet:
                    self.fraction_controls[first].set_value(1.0)
        self._emit()

    def current(self):
        """The dust the editor shows: a DustMix, or None when opaque."""
        if self.opaque.value or not self.species:
            return None
        from ...dust import DustMix
        fr = {sp: f for sp, f in self.fractions.items() if f > 0}
        return DustMix(fr, grain_size=self.size.value, shape=self.shape.value)

    def _emit(self):
        if self._quiet:
            return
        self._callback(self.current())


class TemperatureEditor(w.VBox):
    """A ring's temperature mode, its inner edge and its species' sublimation temperatures.

    Parameters
    ----------
    on_edit : callable
        ``on_edit(**changes)`` with Ring fields (``temperature_mode``, ``inner_edge``,
        ``sublimation``).
    on_message : callable, optional
        Shows a message (why a switch was refused).
    """

    def __init__(self, on_edit, on_message=None):
        self._on_edit = on_edit
        self._on_message = on_message
        self._star = None
        self._quiet = EchoGuard()
        self._species = ()
        self._sublimation = {}
        self.mode = w.ToggleButtons(options=TEMPERATURE_MODE_OPTIONS, value="power_law",
                                    tooltips=["T = T_in (r/r_in)^-q for every grain",
                                              "each species in radiative equilibrium with the star's light "
                                              "(optically thin)"],
                                    style={"button_width": "110px"})
        self.mode.add_class("dx-ring-temperature-mode")
        self.mode.observe(self._on_mode, "value")
        self.follow = w.Checkbox(value=False, description="inner edge at the sublimation front", indent=False)
        self.follow.add_class("dx-ring-follow-front")
        self.follow.observe(self._on_follow, "value")
        self.front = w.HTML()
        self.sublimation_box = w.VBox()
        self.controls = {}
        self.equilibrium_box = w.VBox([w.HBox([self.follow, self.front]), self.sublimation_box])
        super().__init__([self.mode, self.equilibrium_box])

    def _on_mode(self, change):
        if self._quiet:
            return
        if change["new"] == "power_law":
            self._on_edit(temperature_mode="power_law", inner_edge="fixed")
        elif self._star is None:
            # Equilibrium temperatures come from the star's light: refuse rather than fail later.
            with self._quiet:
                self.mode.value = change["old"]
            if self._on_message is not None:
                self._on_message("equilibrium temperatures need a star: the scene has none")
        else:
            self._on_edit(temperature_mode="equilibrium")

    def _on_follow(self, change):
        if not self._quiet:
            self._on_edit(inner_edge="sublimation" if change["new"] else "fixed")

    def _on_sublimation(self, name, value):
        if not self._quiet:
            self._on_edit(sublimation={**self._sublimation, name: float(value)})

    def sync(self, ring, star):
        """Show ``ring`` (its front computed for ``star``, which may be None)."""
        self._star = star
        with self._quiet:
            self.mode.value = ring.temperature_mode
            self.follow.value = ring.inner_edge == "sublimation"
            self._sublimation = dict(ring.sublimation)
            equilibrium = ring.is_equilibrium
            self.equilibrium_box.layout.display = None if equilibrium else "none"
            if not equilibrium:
                return
            t_sub = ring.sublimation_temperatures()
            names = tuple(t_sub)
            if names != self._species:
                self._species = names
                self.controls = {
                    name: ParamControl(replace(SUBLIMATION_TEMPERATURE_SPEC, label=f"T_sub {name}",
                                               description=f"sublimation temperature of {name}"),
                                       t_sub[name], (lambda n: lambda v: self._on_sublimation(n, v))(name),
                                       css="dx-ring-sublimation")
                    for name in names}
                self.sublimation_box.children = list(self.controls.values())
            for name, c in self.controls.items():
                c.set_value(t_sub[name])
            self.front.value = _front_text(ring, star)


def _front_text(ring, star):
    if star is None:
        return f"<span style='color:{MUTED};font-size:11px'>no star: no sublimation front</span>"
    try:
        front = ring.sublimation_front(star)
    except Exception as exc:  # an unusable opacity: say why, keep the card working
        return f"<span style='color:{MUTED};font-size:11px'>front: {html.escape(str(exc))}</span>"
    where = "" if front < ring.r_out else " (beyond r_out: the ring is empty)"
    return f"<span style='color:{MUTED};font-size:11px'>front at {front:.4g} au{where}</span>"


class RingCard(w.VBox):
    """Controls of one ring: header (name, enable, duplicate, remove) and its parameters."""

    def __init__(self, deck, index, ring):
        self.deck = deck
        self.index = index
        state = deck.state
        specs = parameter_specs(Ring)
        self.name = w.Text(value=ring.name, layout={"width": "130px"})
        self.name.observe(lambda ch: self._edit(name=ch["new"]), "value")
        self.enabled = w.Checkbox(value=ring.enabled, description="on", indent=False, layout={"width": "50px"})
        self.enabled.observe(lambda ch: self._edit(enabled=ch["new"]), "value")
        self.duplicate_button = w.Button(description="duplicate", layout={"width": "80px"})
        self.remove_button = w.Button(description="remove", layout={"width": "70px"}, button_style="")
        self.duplicate_button.on_click(lambda b: guarded(state, lambda: state.duplicate_ring(self.index)))
        self.remove_button.on_click(lambda b: guarded(state, lambda: state.remove_ring(self.index)))
        self.swatch = w.HTML()
        header = w.HBox([self.swatch, self.name, self.enabled, self.duplicate_button, self.remove_button],
                        layout={"align_items": "center"})
        self.controls = {
            name: ParamControl(specs[name], getattr(ring, name),
                               (lambda n: lambda v: self._edit(**{n: v}))(name), css=f"dx-ring-{name}")
            for name in ("r_in", "r_out", "t_in", "q", "sigma_in", "p")}
        self.amplitude = ParamControl(AMPLITUDE_SPEC, ring.modulation_amplitude, lambda v: self._modulate(),
                                      css="dx-ring-amplitude")
        self.angle = ParamControl(ANGLE_SPEC, ring.modulation_angle, lambda v: self._modulate(), css="dx-ring-angle")
        # The dust-mixture editor (80 widgets per ring, every one sent to a new page) and the
        # composition solve are built when their section is first opened, or when code asks
        # for them (`mixture`, `composition`).
        self._mixture = None
        self._composition = None
        self.dust_box = dust_box = w.Accordion([w.VBox(), w.VBox()], titles=("dust mixture", "solve composition"),
                                               selected_index=None)
        dust_box.observe(self._on_dust_open, "selected_index")
        self.temperature = TemperatureEditor(lambda **changes: self._edit(**changes), on_message=state.show_message)
        # T_in and q sit in a box of their own, hidden for an equilibrium ring (a control's
        # layout may be shared with others, so it is not the one to hide).
        c = self.controls
        self.power_law_box = w.VBox([c["t_in"], c["q"]])
        super().__init__([header, self.temperature, c["r_in"], c["r_out"], self.power_law_box, c["sigma_in"], c["p"],
                          self.amplitude, self.angle, dust_box])
        self.add_class("dx-ring-card")
        self.sync(index, ring)

    @property
    def mixture(self):
        """The ring's :class:`MixtureEditor`, built on first use."""
        if self._mixture is None:
            state = self.deck.state
            dust = state.scene.rings[self.index].dust
            self._mixture = MixtureEditor(dust, lambda d: self._edit(dust=d), on_message=state.show_message)
            self.mixture_dust = dust
            self.dust_box.children = [self._mixture]
        return self._mixture

    @property
    def mixture_built(self):
        """Whether the dust-mixture editor exists yet."""
        return self._mixture is not None

    @property
    def composition(self):
        """The ring's :class:`~diskexplorer.app.controls.composition_panel.CompositionPanel`, built on first use."""
        if self._composition is None:
            from .composition_panel import CompositionPanel

            self._composition = CompositionPanel(self)
            children = list(self.dust_box.children)
            children[1] = self._composition
            self.dust_box.children = children
        return self._composition

    def _on_dust_open(self, change):
        if change["new"] == 0:
            self.mixture   # noqa: B018 - builds the editor
        elif change["new"] == 1:
            self.composition   # noqa: B018 - builds the panel

    def _edit(self, **changes):
        if self.deck.syncing:
            return
        if not guarded(self.deck.state, lambda: self.deck.state.update_ring(self.index, **changes)):
            self.sync(self.index, self.deck.state.scene.rings[self.index])

    def _modulate(self):
        c1, s1 = Ring.modulation(self.amplitude.value, self.angle.value)
        self._edit(c1=c1, s1=s1)

    def sync(self, index, ring):
        """Show ``ring`` as ring number ``index``."""
        self.index = index
        colour = ring_colour(index)
        self.swatch.value = (f"<span style='display:inline-block;width:12px;height:12px;border-radius:6px;"
                             f"background:{colour};margin-right:4px'></span>")
        if self.name.value != ring.name:
            self.name.value = ring.name
        if self.enabled.value != ring.enabled:
            self.enabled.value = ring.enabled
        for name, c in self.controls.items():
            c.set_value(getattr(ring, name))
        # An equilibrium ring takes no T_in or q, and follows its front instead of r_in.
        self.power_law_box.layout.display = "none" if ring.is_equilibrium else None
        following = ring.inner_edge == "sublimation"
        self.controls["r_in"].slider.disabled = following
        self.controls["r_in"].number.disabled = following
        self.temperature.sync(ring, self.deck.state.scene.star)
        # Angle is undefined at zero amplitude: keep the one shown.
        if not math.isclose(self.amplitude.value, ring.modulation_amplitude, abs_tol=1e-9):
            self.amplitude.set_value(ring.modulation_amplitude)
        if ring.modulation_amplitude > 0 and not math.isclose(
                (self.angle.value - ring.modulation_angle + 180) % 360 - 180, 0.0, abs_tol=1e-6):
            self.angle.set_value(ring.modulation_angle)
        if ring.dust is not self.mixture_dust:
            if self._mixture is not None:
                self._mixture.sync(ring.dust)
            if self._composition is not None:
                self._composition.sync(ring)
        self.mixture_dust = ring.dust

    mixture_dust = None


class RingDeck(w.VBox):
    """The ring cards of the state's scene, rebuilt when rings are added or removed.

    Parameters
    ----------
    state : ExplorerState
    comparison : callable, optional
        Returns the :class:`~diskexplorer.fitting.Comparison` of the data of the moment, or
        None without data; the cards' composition solves judge against it.
    runner : {"thread", "sync"} or JobRunner
        How the composition solves run (one job at a time for the whole deck).
    """

    def __init__(self, state, comparison=None, runner="thread"):
        from ..state.jobs import JobRunner

        self.state = state
        self.comparison = comparison or (lambda: None)
        self.runner = runner if isinstance(runner, JobRunner) else JobRunner(runner)
        self.syncing = EchoGuard()
        self.cards = []
        self.add_button = w.Button(description="add a ring", icon="plus", layout={"width": "140px"})
        self.add_button.on_click(lambda b: guarded(state, state.add_ring))
        self.count = w.HTML()
        self.card_box = w.VBox()
        head = w.HTML("<div class='dx-section-title'>rings</div>")
        super().__init__([head, w.HBox([self.add_button, self.count]), self.card_box])
        state.observe(lambda ch: self.sync(), "scene")
        self.sync()

    def sync(self):
        """Match the cards to the state's rings (rebuild if their number changed)."""
        rings = self.state.scene.rings
        with self.syncing:
            if len(rings) != len(self.cards):
                self.cards = [RingCard(self, k, r) for k, r in enumerate(rings)]
                self.card_box.children = self.cards
            else:
                for k, (card, ring) in enumerate(zip(self.cards, rings)):
                    card.sync(k, ring)
        self.count.value = f"<span style='color:{MUTED}'>{len(rings)} ring(s)</span>"
