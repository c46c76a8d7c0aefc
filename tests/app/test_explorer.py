"""Headless tests of the explorer: controls → state → figures, rings, data, pins, sessions."""
import json
import math

import ipywidgets as w
import numpy as np
import pytest

from diskexplorer.sample import demo_scene, load_sample_data
from diskexplorer.physics.parameters import parameter_specs
from diskexplorer.physics.ring import Ring
from diskexplorer.app.figures.base import drawn_dots
from diskexplorer.app.figures.interferometry import MAX_DRAWN
from explorer_helpers import settle

@pytest.fixture(scope="module")
def material():
    """The sample's scene and data (these tests use its files and instruments)."""
    return demo_scene(), load_sample_data()





def ring_sed(app, index):
    comp = app.figures["sed"].components
    return np.asarray(comp.y)[list(comp.labels).index(app.frame.scene.rings and
                                                      __import__("diskexplorer").observables.scene.ring_labels(
                                                          app.state.scene.rings)[index])]


def test_opens_with_data_and_figures(app):
    assert app.view is not None and app.frame.result is not None
    assert 0 < drawn_dots(app.figures["vis2"].data)[0].size <= app.view.vis2["freq"].size
    assert np.asarray(app.figures["vis2"].curve.y).ndim == 2
    assert "total" in app.chi2.widget.value


def test_raising_t_in_raises_its_sed_and_lowers_vis2(app):
    card = app.ring_deck.cards[0]
    sed_before = np.nan_to_num(ring_sed(app, 0))
    k_band = app.view.vis2["wavelength"] < 2.5
    v2_before = app.frame.result.model["vis2"][k_band].copy()
    drawn_before = np.asarray(app.figures["vis2"].model.y).copy()
    t_old = app.state.scene.rings[0].t_in
    card.controls["t_in"].slider.value = t_old + 300.0
    assert app.state.scene.rings[0].t_in == pytest.approx(t_old + 300.0)
    assert card.controls["t_in"].number.value == pytest.approx(t_old + 300.0)
    settle(app)
    sed_after = np.nan_to_num(ring_sed(app, 0))
    assert np.all(sed_after >= sed_before) and np.sum(sed_after) > 1.2 * np.sum(sed_before)
    v2_after = app.frame.result.model["vis2"][k_band]
    assert not np.array_equal(np.asarray(app.figures["vis2"].model.y), drawn_before, equal_nan=True)
    assert v2_after.mean() < v2_before.mean()


def test_number_box_drives_slider_and_state(app):
    c = app.geometry_panel.controls["inclination"]
    c.number.value = 22.5
    assert c.slider.value == pytest.approx(22.5)
    assert app.state.scene.inclination == pytest.approx(22.5)


def test_sliders_generated_from_parameter_specs(app):
    specs = parameter_specs(Ring)
    card = app.ring_deck.cards[0]
    for name, c in card.controls.items():
        spec = specs[name]
        if spec.scale == "log":
            assert isinstance(c.slider, w.FloatLogSlider)
            assert c.slider.min <= math.log10(spec.bounds[0]) + 1e-9
            assert c.slider.max >= math.log10(spec.bounds[1]) - 1e-9
        else:
            assert isinstance(c.slider, w.FloatSlider)
            assert c.slider.min <= spec.bounds[0] and c.slider.max >= spec.bounds[1]
        assert spec.label.split("_")[0] in c.label.value


def test_invalid_value_shows_message_and_keeps_state(app):
    card = app.ring_deck.cards[0]
    before = app.state.scene
    card.controls["r_in"].number.value = before.rings[0].r_out * 2  # r_in > r_out is not a ring
    assert app.state.scene is before
    assert "r_in" in app.message_area.value
    assert card.controls["r_in"].value == pytest.approx(before.rings[0].r_in)


def test_add_duplicate_and_remove_rings(app):
    n = len(app.state.scene.rings)
    app.ring_deck.add_button.click()
    settle(app)
    assert len(app.ring_deck.cards) == n + 1 == len(app.state.scene.rings)
    new_name = app.state.scene.rings[-1].name
    assert new_name in list(app.figures["sed"].components.labels)
    app.ring_deck.cards[0].duplicate_button.click()
    settle(app)
    assert len(app.ring_deck.cards) == n + 2
    assert app.state.scene.rings[1].name.endswith("copy")
    app.ring_deck.cards[-1].remove_button.click()
    settle(app)
    assert len(app.ring_deck.cards) == n + 1
    assert new_name not in list(app.figures["sed"].components.labels)
    assert len(np.asarray(app.figures["sed"].components.y)) == n + 1 + 3  # star, rings, extended, total


def test_enable_toggle_zeroes_the_ring(app):
    card = app.ring_deck.cards[1]
    card.enabled.value = False
    settle(app)
    assert not app.state.scene.rings[1].enabled
    # Zero flux is not drawn on a log axis: no segment, only the lone end point that keeps
    # bqplot's label placement finite (figures.base.finite_ends), which draws no stroke.
    assert np.isfinite(ring_sed(app, 1)).sum() <= 1


def test_modulation_controls_set_c1_s1(app):
    card = app.ring_deck.cards[0]
    card.amplitude.slider.value = 0.5
    card.angle.slider.value = 90.0
    ring = app.state.scene.rings[0]
    assert ring.c1 == pytest.approx(0.0, abs=1e-9) and ring.s1 == pytest.approx(0.5)
    settle(app)
    assert np.nanmax(np.abs(app.figures["t3"].model.y)) > 0.1


def test_mixture_fractions_stay_normalised(app):
    mix = app.ring_deck.cards[0].mixture
    mix.fraction_controls["forsterite"].slider.value = 0.5
    shown = mix.fractions
    assert sum(shown.values()) == pytest.approx(1.0, abs=1e-5)
    assert shown["forsterite"] == pytest.approx(0.5)
    dust = app.state.scene.rings[0].dust
    assert sum(f for _, f in dust.fractions) == pytest.approx(1.0)
    assert dict(dust.fractions)["forsterite"] == pytest.approx(0.5, abs=1e-5)
    mix.fraction_controls["iron"].number.value = 1.0
    assert app.state.scene.rings[0].dust.fractions == (("iron", 1.0),)
    mix.shape.value = "cde"
    assert app.state.scene.rings[0].dust.shape == "cde" and mix.size.disabled


def test_renormalise_edge_cases():
    from diskexplorer.app.controls.ring_cards import renormalise
    assert renormalise({"a": 1.0, "b": 0.0, "c": 0.0}, "a", 0.4) == pytest.approx({"a": 0.4, "b": 0.3, "c": 0.3})
    out = renormalise({"a": 0.5, "b": 0.3, "c": 0.2}, "b", 0.9)
    assert sum(out.values()) == pytest.approx(1.0) and out["a"] / out["c"] == pytest.approx(2.5)


def test_bad_upload_shows_message_and_changes_nothing(app):
    settle(app)
    obs, scene, calls = app.state.observations, app.state.scene, app.debouncer.calls
    marks = np.asarray(app.figures["vis2"].data.y).copy()
    app.data_page.upload.value = ({"name": "broken.fits", "type": "application/fits", "size": 7,
                                    "content": memoryview(b"garbage"),
                                    "last_modified": __import__("datetime").datetime.now(__import__("datetime").timezone.utc)},)
    assert "broken.fits" in app.message_area.value
    assert app.state.observations is obs and app.state.scene is scene
    settle(app)
    assert app.debouncer.calls == calls
    assert np.array_equal(np.asarray(app.figures["vis2"].data.y), marks, equal_nan=True)


def test_bad_path_and_good_path(app, tmp_path):
    # A photometry table of the user's, copied out of the sample into a folder of their own.
    from diskexplorer.sample import copy_sample_data, SAMPLE_FILES

    copy_sample_data(tmp_path / "mine")
    good = tmp_path / "mine" / SAMPLE_FILES["photometry"]
    before = app.state.data_sets
    app.data_page.kind.value = "photometry"
    app.data_page.path.value = str(tmp_path / "missing.csv")
    app.data_page.load_button.click()
    assert "missing.csv" in app.message_area.value and "not loaded" in app.message_area.value
    assert app.state.data_sets == before   # a refused load changes nothing
    app.data_page.path.value = str(good)
    app.data_page.load_button.click()
    assert "loaded photometry" in app.message_area.value
    assert app.state.data_sources["photometry"] == str(good)
    assert [d.source for d in app.state.data_sets if d.kind == "photometry"] == [str(good)]


def test_filters_select_points(app):
    n_all = app.view.vis2["freq"].size
    app.data_page.bands.value = ("N",)
    settle(app)
    n_n = app.view.vis2["freq"].size
    assert 0 < n_n < n_all
    assert drawn_dots(app.figures["vis2"].data)[0].size == (n_n if n_n <= MAX_DRAWN else len(range(0, n_n, math.ceil(n_n / MAX_DRAWN))))
    assert app.view.vis2["wavelength"].min() > 7.0
    app.data_page.bands.value = ()
    app.data_page.baselines.value = (0.0, 50.0)
    settle(app)
    assert app.view.vis2["freq"].size < n_all


def test_ten_quick_changes_one_recompute(app):
    settle(app)
    calls, n = app.debouncer.calls, len(app.timings)
    c = app.geometry_panel.controls["inclination"]
    for k in range(10):
        c.slider.value = 20.0 + k
    assert app.debouncer.calls == calls  # nothing yet: waiting for the burst to end
    settle(app)
    assert app.debouncer.calls == calls + 1 and len(app.timings) == n + 1
    assert app.state.scene.inclination == pytest.approx(29.0)


def test_style_change_recomputes_nothing(app):
    settle(app)
    res = app.frame.result
    app.toggles["log_vis2"].value = True
    settle(app)
    assert app.recompute_log[-1] == ["style"] and app.frame.result is res
    import bqplot as bq
    assert isinstance(app.figures["vis2"].ay.scale, bq.LogScale)
    assert all(m.scales["y"] is app.figures["vis2"].ay.scale for m in app.figures["vis2"].figure.marks)


def test_curve_position_angle_only_redraws_curve(app):
    settle(app)
    y0 = np.asarray(app.figures["vis2"].curve.y).copy()
    model = app.frame.result
    app.curve_pa.slider.value = (app.state.curve_position_angle + 90) % 180
    settle(app)
    assert "model" not in app.recompute_log[-1] and app.frame.result is model
    assert not np.allclose(np.asarray(app.figures["vis2"].curve.y), y0)


def test_structure_views_follow_their_page(app):
    img0 = np.asarray(app.figures["image"].heat.color).copy()
    app.figure_tabs.selected_index = 2
    img1 = np.asarray(app.figures["image"].heat.color)
    assert img1.shape != img0.shape or not np.array_equal(img1, img0)
    n_rings = len(app.state.scene.rings)
    assert np.asarray(app.figures["image"].outlines.x).shape[0] == 2 * n_rings
    app.image_wl.slider.value = 3.5
    settle(app)
    assert "3.5 µm" in app.figures["image"].figure.title
    prof = np.asarray(app.figures["profiles"].parts["temperature"]["line"].y)
    assert prof.shape[0] == n_rings


def test_pins_overlay_and_chi2(app):
    app.pin_board.name.value = "hot rim"
    app.pin_board.pin_button.click()
    settle(app)
    assert app.state.pins[0]["name"] == "hot rim"
    assert app.figures["sed"].pins.visible and app.figures["vis2"].curve_pins.visible
    assert "hot rim" in app.chi2.widget.value
    app.ring_deck.cards[0].controls["t_in"].slider.value = 1900.0
    settle(app)
    pinned = np.asarray(app.figures["sed"].pins.y)[0]
    live = np.asarray(app.figures["sed"].components.y)[-1]
    assert not np.allclose(np.nan_to_num(pinned), np.nan_to_num(live))
    for k in range(3):
        app.state.pin()
    app.pin_board.pin()  # the fifth is refused with a message
    assert len(app.state.pins) == 4 and "at most 4" in app.message_area.value
    app.pin_board.rows.children[0].children[1].click()
    settle(app)
    assert len(app.state.pins) == 3 and "hot rim" not in app.chi2.widget.value


def test_pins_overlay_profiles_image_and_correlated_flux(app):
    app.state.pin()
    settle(app)
    prof = app.figures["profiles"].parts["temperature"]["pin_line"]
    assert prof.visible and np.isfinite(np.asarray(prof.y, float)).any()
    outlines = app.figures["image"].pin_outlines
    n_edges = 2 * sum(r.enabled for r in app.state.scene.rings)
    assert outlines.visible and np.asarray(outlines.x).shape[0] == n_edges
    corr = app.figures["corrflux"].pin_lines
    assert corr.visible and np.allclose(np.asarray(corr.y, float), np.asarray(app.figures["corrflux"].lines.y, float),
                                        equal_nan=True)
    # moving the live ring leaves the pinned overlays where they were
    pinned_t = np.asarray(prof.y, float).copy()
    app.ring_deck.cards[0].controls["t_in"].slider.value = app.state.scene.rings[0].t_in + 200.0
    settle(app)
    np.testing.assert_array_equal(np.asarray(prof.y, float), pinned_t)
    assert not np.allclose(np.asarray(corr.y, float), np.asarray(app.figures["corrflux"].lines.y, float),
                           equal_nan=True)


def test_session_save_confirm_restore(app, tmp_path):
    path = tmp_path / "s.json"
    panel = app.session_box
    panel.path.value = str(path)
    app.state.pin("first")
    app.geometry_panel.controls["inclination"].slider.value = 33.0
    assert panel.save()
    doc = json.loads(path.read_text())
    assert doc["scene"]["geometry"]["inclination"]["value"] == pytest.approx(33.0)
    assert doc["pins"][0]["name"] == "first"
    app.geometry_panel.controls["inclination"].slider.value = 12.0
    assert not panel.save()  # exists: asks first, file untouched
    assert panel.confirm.layout.display != "none"
    assert json.loads(path.read_text())["scene"]["geometry"]["inclination"]["value"] == pytest.approx(33.0)
    panel.cancel_button.click()
    assert panel.confirm.layout.display == "none"
    panel.overwrite_button.click()
    assert json.loads(path.read_text())["scene"]["geometry"]["inclination"]["value"] == pytest.approx(12.0)
    panel.path.value = str(path)
    path.write_text(json.dumps(doc))
    assert panel.restore()
    settle(app)
    assert app.state.scene.inclination == pytest.approx(33.0)
    assert app.geometry_panel.controls["inclination"].value == pytest.approx(33.0)
    assert [p["name"] for p in app.state.pins] == ["first"]


def test_star_luminosity_mode(app):
    panel = app.star_panel
    panel.size_by.value = "luminosity"
    panel.controls["luminosity"].number.value = 30.0
    assert app.state.scene.star.luminosity == pytest.approx(30.0, rel=1e-6)
    assert panel.controls["radius"].value == pytest.approx(app.state.scene.star.radius)


def test_slider_snap_from_browser_does_not_move_the_model(app):
    c = app.star_panel.controls["t_eff"]
    before = app.state.scene
    step = c.slider.step
    c.slider.value = c.value * 10 ** (0.3 * step)  # what the front end's rounding sends back
    assert app.state.scene is before and c.value == pytest.approx(before.star.t_eff)
    c.slider.value = c.value * 10 ** (1.0 * step)  # one real arrow-key step
    assert app.state.scene.star.t_eff > before.star.t_eff


def test_opening_chi2_matches_the_core(app, material):
    from diskexplorer.fitting.comparison import Comparison
    scene, data = material
    ref = Comparison(data["observations"], data["photometry"], data["spectrum"]).compare(scene)
    assert app.frame.result.total == pytest.approx(ref.total)
