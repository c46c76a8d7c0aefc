"""Headless tests of the derived-quantities panel."""

import pytest

from diskexplorer.physics import derived
from explorer_helpers import settle

DERIVED_PAGE = 5





def test_hidden_until_shown(app):
    assert app.derived_page.numbers is None  # nothing computed while its page is hidden
    app.figure_tabs.selected_index = DERIVED_PAGE
    assert app.derived_page.numbers is not None


def test_table_shows_the_sublimation_radius_of_the_star(app):
    app.figure_tabs.selected_index = DERIVED_PAGE
    star = app.state.scene.star
    r_sub = derived.sublimation_radius(star.luminosity, t_sub=1500.0, q_r=1.0)
    panel = app.derived_page
    assert panel.numbers["star"]["r_sub"] == pytest.approx(r_sub, rel=1e-12)
    assert f"<b class='dx-rsub'>{r_sub:.4g}</b> au" in panel.table.value
    panel.inputs["t_sub"].value = 2000.0
    panel.inputs["q_r"].value = 4.0
    assert app.state.t_sub == 2000.0 and app.state.q_r == 4.0  # the inputs write the state
    settle(app)
    assert app.recompute_log[-1] == ["derived"]  # only this panel is refreshed
    r2 = derived.sublimation_radius(star.luminosity, t_sub=2000.0, q_r=4.0)
    assert f"<b class='dx-rsub'>{r2:.4g}</b> au" in panel.table.value


def test_table_follows_the_scene(app):
    app.figure_tabs.selected_index = DERIVED_PAGE
    panel = app.derived_page
    app.star_panel.controls["t_eff"].number.value = 9000.0
    settle(app)
    r_sub = derived.sublimation_radius(app.state.scene.star.luminosity)
    assert f"{r_sub:.4g}</b> au" in panel.table.value
    ring = app.state.scene.rings[0]
    assert f"{derived.dust_mass(ring):.3g}" in panel.table.value


def test_gap_planet_mass_and_validity_note(app):
    app.figure_tabs.selected_index = DERIVED_PAGE
    panel = app.derived_page
    gaps = derived.gaps_of(app.state.scene, aspect_ratio=0.05, alpha=1e-3)
    assert len(gaps) == 1
    assert f"<b>{gaps[0].planet_mass:.3g}</b>" in panel.table.value
    assert "Kanagawa et al. (2016" in panel.table.value
    panel.inputs["gap_alpha"].value = 0.2  # outside the relation's calibration range
    settle(app)
    assert "outside the calibrated range" in panel.table.value
    assert "alpha = 0.2" in panel.table.value
