"""Headless tests of equilibrium temperatures in the app: ring cards, structure page, derived panel."""
import numpy as np
import pytest

from diskexplorer.physics import derived
from explorer_helpers import make_app, settle

STRUCTURE_PAGE, DERIVED_PAGE = 2, 5





def test_card_switches_temperature_mode(app):
    card = app.ring_deck.cards[0]
    assert card.temperature.mode.value == "power_law"
    assert card.temperature.equilibrium_box.layout.display == "none"
    card.temperature.mode.value = "equilibrium"
    ring = app.state.scene.rings[0]
    assert ring.temperature_mode == "equilibrium"
    card = app.ring_deck.cards[0]
    # T_in and q are hidden, the species' sublimation temperatures shown with their defaults
    assert card.power_law_box.layout.display == "none"
    assert card.controls["t_in"] in card.power_law_box.children and card.controls["q"] in card.power_law_box.children
    assert app.ring_deck.cards[1].power_law_box.layout.display is None
    assert card.temperature.equilibrium_box.layout.display is None
    assert {n: c.value for n, c in card.temperature.controls.items()} == ring.sublimation_temperatures()
    assert "front at" in card.temperature.front.value
    settle(app)
    # follow the sublimation front: r_in locked, the front in the card
    card.temperature.follow.value = True
    ring = app.state.scene.rings[0]
    assert ring.inner_edge == "sublimation"
    assert app.ring_deck.cards[0].controls["r_in"].slider.disabled
    front = ring.sublimation_front(app.state.scene.star)
    assert f"{front:.4g} au" in app.ring_deck.cards[0].temperature.front.value
    # edit a sublimation temperature through its control
    app.ring_deck.cards[0].temperature.controls["iron"].number.value = 1700.0
    assert dict(app.state.scene.rings[0].sublimation)["iron"] == 1700.0
    settle(app)
    # back to the power law: the inner edge returns to r_in
    app.ring_deck.cards[0].temperature.mode.value = "power_law"
    ring = app.state.scene.rings[0]
    assert ring.temperature_mode == "power_law" and ring.inner_edge == "fixed"
    settle(app)


def test_equilibrium_refused_without_a_star(material):
    app = make_app(material, scene=material[0].replace(star=None))
    card = app.ring_deck.cards[0]
    card.temperature.mode.value = "equilibrium"
    assert app.state.scene.rings[0].temperature_mode == "power_law"
    assert card.temperature.mode.value == "power_law"
    assert "need a star" in app.state.message


def test_structure_page_draws_each_species_temperature(app):
    app.state.update_ring(0, temperature_mode="equilibrium")
    settle(app)
    app.figure_tabs.selected_index = STRUCTURE_PAGE
    settle(app)
    lines = app.figures["profiles"].species_lines
    scene = app.state.scene
    names = [p.name for p in scene.rings[0].species()]
    assert lines.visible and list(lines.labels) == [f"inner: {n}" for n in names]
    r = np.asarray(lines.x)[0]
    expected = scene.dust_temperature(0, r)
    inside = (r >= scene.rings[0].r_in) & (r <= scene.rings[0].r_out)
    for row, name in zip(np.asarray(lines.y), names):
        np.testing.assert_allclose(row[inside], expected[name][inside], rtol=1e-12)
        assert np.all(np.isnan(row[~inside]))


def test_derived_panel_lists_each_species_sublimation_radius(app):
    app.figure_tabs.selected_index = DERIVED_PAGE
    panel = app.derived_page
    rows = panel.numbers["species"]
    scene = app.state.scene
    expected = derived.species_sublimation_radii(scene)
    assert [(r["ring_name"], r["species"]) for r in rows] == [(r["ring_name"], r["species"]) for r in expected]
    radii = scene.rings[0].sublimation_radii(scene.star)
    for r in rows:
        if r["ring"] == 0:
            assert r["r_sub"] == pytest.approx(radii[r["species"]], rel=1e-12)
    assert "dx-derived-species" in panel.table.value
    assert f"<b>{rows[0]['r_sub']:.4g}</b>" in panel.table.value
