"""Headless tests of the controls: step grids that contain the value, displayed digits, ARIA
companions, the mixture editor's explicit normalisation, and the band of a dust-free model."""
import math

import ipywidgets as w
import numpy as np
import pytest

from diskexplorer.app.controls.param_control import ParamControl, nice_step
from diskexplorer.app.figures.sed import BAND_TITLE
from diskexplorer.app.controls.ring_cards import NORMALISATION_NOTE
from diskexplorer.observables.spectrum import NO_DUST_BAND
from diskexplorer.physics.parameters import DEFAULT_DIGITS, parameter_specs, round_significant
from diskexplorer.physics.ring import Ring
from diskexplorer.observables.scene import Scene
from diskexplorer.sample import demo_scene
from explorer_helpers import settle

SPECTRUM_PAGE = 1


@pytest.fixture
def app_scene():
    """The ``app`` fixture starts from the sample's scene (its rings and dust), on ``material``'s data."""
    return demo_scene()



def all_controls(app):
    """Every ParamControl of the app, by a readable name."""
    out = {f"star.{k}": c for k, c in app.star_panel.controls.items()}
    out.update({f"geometry.{k}": c for k, c in app.geometry_panel.controls.items()})
    out["extended_fraction"] = app.extended_panel.control if hasattr(app, "extended_panel") else None
    for i, card in enumerate(app.ring_deck.cards):
        out.update({f"rings.{i}.{k}": c for k, c in card.controls.items()})
        out[f"rings.{i}.amplitude"] = card.amplitude
        out[f"rings.{i}.angle"] = card.angle
        out.update({f"rings.{i}.dust.{k}": c for k, c in card.mixture.fraction_controls.items()})
    out.update(curve_pa=app.curve_pa, image_wl=app.image_wl, profile_wl=app.profile_wl)
    return {k: c for k, c in out.items() if c is not None}


def page_step(c, steps):
    """The value the page sends after ``steps`` arrow presses from the current grid point.

    noUiSlider counts steps from the slider's minimum in its own floating point; the
    last bits of a sum of steps differ from ours, which is what this imitates.
    """
    s = c.slider
    n = round(((math.log10(c.value) if isinstance(s, w.FloatLogSlider) else c.value) - s.min) / s.step)
    coord = s.min + (n + steps) * s.step * (1 + 3e-16)
    return 10.0 ** coord if isinstance(s, w.FloatLogSlider) else coord


# --- step grids ----------------------------------------------------------------------------

@pytest.mark.parametrize("span, steps, expect", [
    (2450.0, 200, 10.0),     # T_in bounds 50–2500 K
    (4.0, 300, 0.01),        # r_in: four decades
    (85.0, 200, 0.5),        # inclination
    (360.0, 200, 2.0),       # position angle
    (1.5, 200, 0.01),        # q 0–1.5: 0.0075 is nearer 0.01 than 0.005 in ratio
    (0.0, 200, 1.0),         # a degenerate range still gets a step
])
def test_nice_step(span, steps, expect):
    assert nice_step(span, steps) == expect


def test_issue_examples_return_exactly(app):
    # T_in 1480 → 1495.5 → 1483.25 and r_in 0.34 → 0.3476 → 0.3371 before.
    card = app.ring_deck.cards[0]
    t_in, r_in = card.controls["t_in"], card.controls["r_in"]
    assert app.state.scene.rings[0].t_in == 1480.0 and app.state.scene.rings[0].r_in == 0.34
    t_in.slider.value = page_step(t_in, +1)
    assert app.state.scene.rings[0].t_in == 1490.0
    t_in.slider.value = page_step(t_in, -1)
    assert app.state.scene.rings[0].t_in == 1480.0
    r_in.slider.value = page_step(r_in, +1)
    assert app.state.scene.rings[0].r_in == pytest.approx(0.34 * 10 ** r_in.step, rel=1e-12)
    r_in.slider.value = page_step(r_in, -1)
    assert app.state.scene.rings[0].r_in == 0.34


def test_every_control_steps_away_and_back_exactly(app):
    for name, c in all_controls(app).items():
        start = c.value
        got = []
        c._callback = got.append       # the value each control would hand to the state
        c.slider.value = page_step(c, +1)
        c.slider.value = page_step(c, -1)
        assert got and got[-1] == start, (name, start, got)
        assert c.value == start, name


def test_grid_contains_values_set_from_elsewhere(app):
    card = app.ring_deck.cards[0]
    c = card.controls["t_in"]
    c.number.value = 1483.27               # typed
    assert app.state.scene.rings[0].t_in == 1483.27
    assert c.slider.value == 1483.27 and c._grid.index(1483.27) == 0
    c.slider.value = page_step(c, +3)
    assert app.state.scene.rings[0].t_in == pytest.approx(1513.27, abs=1e-9)
    c.slider.value = page_step(c, -3)
    assert app.state.scene.rings[0].t_in == 1483.27
    # From the state (a fit, a session): the grid moves to the new value.
    app.state.update_ring(0, r_in=0.3123456)
    r_in = card.controls["r_in"]
    assert r_in.value == 0.3123456 and r_in.slider.value == 0.3123456
    assert r_in._grid.index(0.3123456) == 0
    r_in.slider.value = page_step(r_in, -2)
    r_in.slider.value = page_step(r_in, +2)
    assert app.state.scene.rings[0].r_in == 0.3123456


def test_slider_range_covers_the_bounds_and_reaches_valid_ends(app):
    c = app.geometry_panel.controls["inclination"]
    c.number.value = 33.3                  # off the 0.5° grid that starts at 0
    spec = parameter_specs(Scene)["inclination"]
    assert c.slider.min <= spec.bounds[0] and c.slider.max >= spec.bounds[1]
    c.slider.value = c.slider.min          # dragged to the far left: exactly 0, not 0.3 or −0.2
    assert app.state.scene.inclination == 0.0
    c.slider.value = page_step(c, +1)
    assert app.state.scene.inclination == pytest.approx(0.3, abs=1e-12)
    c.slider.value = c.slider.min
    assert app.state.scene.inclination == 0.0


def test_range_widens_for_values_outside_the_bounds():
    spec = parameter_specs(Ring)["t_in"]
    c = ParamControl(spec, 2600.0, lambda v: None)
    assert c.slider.max >= 2600.0 and c._grid.index(2600.0) == 0
    c.set_value(20.0)
    assert c.slider.min <= 20.0 and c._grid.index(20.0) == 0


# --- displayed digits ----------------------------------------------------------------------

def _significant(x):
    digits = f"{abs(x):.15g}".replace(".", "").lstrip("0").split("e")[0]
    return len(digits.rstrip("0")) or 1


def test_number_boxes_show_bounded_digits(app):
    app.state.update_ring(0, r_in=0.347612345678, t_in=1483.2716, sigma_in=1.23456789e-5)
    app.state.update_scene(inclination=41.123456789)
    for name, c in all_controls(app).items():
        assert _significant(c.number.value) <= c.spec.digits, (name, c.number.value)
        assert c.number.value == round_significant(c.value, c.spec.digits), name
    card = app.ring_deck.cards[0]
    assert card.controls["r_in"].number.value == 0.3476
    assert card.controls["r_in"].value == 0.347612345678      # the value itself is exact
    assert card.controls["sigma_in"].number.value == 1.235e-5
    assert "0.347612345678" in card.controls["r_in"].label.value   # in the label's title


def test_digits_are_declared_with_the_parameter():
    spec = parameter_specs(Ring)["t_in"]
    assert spec.digits == DEFAULT_DIGITS == 4
    assert spec.rounded(1483.2716) == 1483.0
    assert round_significant(0.0, 3) == 0.0 and math.isnan(round_significant(float("nan"), 3))
    assert round_significant(-0.00123456, 3) == -0.00123


# --- what assistive technology is told ---------------------------------------------------

def test_every_slider_has_an_aria_companion_in_its_unit(app):
    for name, c in all_controls(app).items():
        a = c.aria
        assert a in c.children and a.layout.display == "none"
        assert a.log == (c.spec.scale == "log"), name
        assert (a.min_coord, a.max_coord) == (c.slider.min, c.slider.max), name
        assert c.spec.label in a.label and c.spec.description in a.label
        assert a.digits == c.spec.digits
    r_in = app.ring_deck.cards[0].controls["r_in"]
    assert r_in.aria.unit == "au" and r_in.aria.log
    assert app.star_panel.controls["radius"].aria.unit == "solar radii"
    # The companion follows the grid when it moves.
    r_in.number.value = 0.31
    assert (r_in.aria.min_coord, r_in.aria.max_coord) == (r_in.slider.min, r_in.slider.max)


# --- the mixture editor ----------------------------------------------------------------------

def test_mixture_editor_is_built_when_its_section_opens_and_shows_the_current_dust(app):
    from diskexplorer.dust import DustMix

    card = app.ring_deck.cards[0]
    # a new page gets only the collapsed section (its editor's 80 widgets are not sent)
    assert not card.mixture_built and len(card.dust_box.children[0].children) == 0
    # the ring's dust changes while the editor does not exist yet (a session, a start)
    app.state.update_ring(0, dust=DustMix({"forsterite": 0.25, "olivine_glass": 0.75}, grain_size=0.1))
    assert not card.mixture_built
    card.dust_box.selected_index = 0
    assert card.mixture_built and card.dust_box.children == (card.mixture,)
    assert card.mixture.fractions["forsterite"] == pytest.approx(0.25)
    assert card.mixture.fractions["olivine_glass"] == pytest.approx(0.75)
    # and it edits the ring from then on
    card.mixture.fraction_controls["forsterite"].number.value = 0.5
    assert dict(app.state.scene.rings[0].dust.fractions)["forsterite"] == pytest.approx(0.5)
    assert not app.ring_deck.cards[1].mixture_built


def test_mixture_editor_refuses_a_fraction_outside_0_1_and_says_so(app):
    mix = app.ring_deck.cards[0].mixture
    before = app.state.scene.rings[0].dust
    shown = mix.fractions
    mix.fraction_controls["forsterite"].number.value = 5.0
    assert app.state.scene.rings[0].dust == before
    assert mix.fractions == shown
    assert "forsterite = 5" in app.state.message and "outside [0, 1]" in app.state.message
    assert NORMALISATION_NOTE in mix.sum_label.value


def test_mixture_editor_normalises_visibly(app):
    mix = app.ring_deck.cards[0].mixture
    mix.fraction_controls["forsterite"].number.value = 0.5
    dust = dict(app.state.scene.rings[0].dust.fractions)
    assert dust["forsterite"] == pytest.approx(0.5)
    # The others keep their proportions (0.55 : 0.2 : 0.1) in the remaining half.
    assert dust["olivine_glass"] == pytest.approx(0.5 * 0.55 / 0.85)
    assert sum(dust.values()) == pytest.approx(1.0, abs=1e-12)
    assert mix.fraction_controls["olivine_glass"].value == pytest.approx(0.5 * 0.55 / 0.85)
    assert "sum of mass fractions: 1.000" in mix.sum_label.value
    # A renormalised fraction slides to exactly 0 (the grid's end stands for the valid end).
    c = mix.fraction_controls["olivine_glass"]
    c.slider.value = c.slider.min
    assert "olivine_glass" not in dict(app.state.scene.rings[0].dust.fractions)


# --- the silicate band of a model without dust -------------------------------------------------

def test_band_figure_says_no_band_for_a_dust_free_model(app):
    app.figure_tabs.selected_index = SPECTRUM_PAGE
    settle(app)
    fig = app.figures["spectrum"]
    assert fig.band_figure.title == BAND_TITLE
    drawn = np.asarray(fig.band_model.y)
    assert drawn.size and np.nanmax(drawn) > 1.1                      # the dusty sample has a band
    for i in range(len(app.state.scene.rings)):
        app.state.update_ring(i, dust=None)
    settle(app)
    assert NO_DUST_BAND in fig.band_figure.title
    assert np.asarray(fig.band_model.y).size == 0
    assert np.asarray(fig.band_data.y).size > 0                        # the data's band stays
    app.state.update_ring(0, dust="olivine_glass")
    settle(app)
    assert fig.band_figure.title == BAND_TITLE and np.asarray(fig.band_model.y).size > 0
