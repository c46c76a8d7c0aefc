"""Headless tests of the starting-point panel: table → state → document, save, import, refinement."""
import json
import time

import pytest

from diskexplorer.fitting import Comparison, read_start
from explorer_helpers import make_app, settle

START_PAGE = 3


def _app(material, jobs="sync"):
    app = make_app(material, jobs=jobs)
    app.figure_tabs.selected_index = START_PAGE
    return app


@pytest.fixture
def app(material):
    return _app(material)



def test_rows_follow_the_parameter_declarations(app):
    from diskexplorer.fitting import parameter_paths

    panel = app.start_page
    assert list(panel.rows) == parameter_paths(app.state.scene)
    row = panel.rows["rings.0.r_in"]
    assert (row.lo.value, row.hi.value) == pytest.approx((0.02, 200.0))  # declared default bounds
    assert row.prior.value == "log-uniform" and not row.free.value
    assert panel.document is not None and panel.document_error == ""


def test_ticking_free_and_editing_a_bound_changes_the_live_document(app):
    panel = app.start_page
    before = json.dumps(panel.document["scene"])
    panel.rows["rings.0.r_in"].free.value = True
    panel.rows["geometry.inclination"].free.value = True
    panel.rows["geometry.inclination"].lo.value = 20.0
    panel.rows["geometry.inclination"].hi.value = 50.0
    assert app.state.fit_setup["free"] == ["rings.0.r_in", "geometry.inclination"]  # the table writes the state
    settle(app)
    doc = panel.document
    assert json.dumps(doc["scene"]) != before
    assert doc["scene"]["geometry"]["inclination"]["bounds"] == [20.0, 50.0]
    assert doc["scene"]["rings"][0]["r_in"]["free"] is True
    assert "&quot;bounds&quot;: [\n   20.0" in panel.viewer.value or "20.0" in panel.viewer.value
    start = read_start(doc)  # the live document is a valid starting point
    assert start.paths == ["geometry.inclination", "rings.0.r_in"]
    assert (start.parameters["geometry.inclination"].lo, start.parameters["geometry.inclination"].hi) == (20.0, 50.0)


def test_normal_prior_and_bad_bounds(app):
    panel = app.start_page
    row = panel.rows["rings.0.t_in"]
    row.prior.value = "normal"
    settle(app)
    prior = panel.document["scene"]["rings"][0]["t_in"]["prior"]
    assert prior["kind"] == "normal" and prior["mean"] == pytest.approx(app.state.scene.rings[0].t_in)
    assert row.mean.layout.visibility == "visible"
    row.lo.value = app.state.scene.rings[0].t_in + 10.0  # the value now lies below its bounds
    settle(app)
    assert panel.document is None and "rings.0.t_in" in panel.document_error
    assert "no document" in panel.viewer.value


def test_save_asks_before_overwriting_and_keeps_the_file(app, tmp_path):
    panel = app.start_page
    path = tmp_path / "start.json"
    panel.path.value = str(path)
    panel.rows["rings.0.r_in"].free.value = True
    assert panel.save()
    first = path.read_text()
    assert read_start(str(path)).paths == ["rings.0.r_in"]
    assert "def log_probability" in panel.snippet and str(path) in panel.snippet
    panel.view.value = "snippet"
    assert "log_probability" in panel.viewer.value
    app.geometry_panel.controls["inclination"].number.value = 44.0
    assert not panel.save()  # exists: asks, file untouched
    assert panel.confirm.layout.display != "none" and path.read_text() == first
    panel.save_button.click()  # a second click on save still does not overwrite
    assert path.read_text() == first
    panel.keep_button.click()
    assert panel.confirm.layout.display == "none" and path.read_text() == first
    panel.save_button.click()
    panel.overwrite_button.click()
    assert json.loads(path.read_text())["scene"]["geometry"]["inclination"]["value"] == pytest.approx(44.0)


def test_import_of_a_broken_document_changes_nothing(app, tmp_path):
    panel = app.start_page
    panel.rows["distance"].free.value = True
    scene, setup = app.state.scene, dict(app.state.fit_setup)
    bad_json = tmp_path / "broken.json"
    bad_json.write_text('{"schema": "diskexplorer.start/1", "scene": ')
    panel.path.value = str(bad_json)
    panel.import_button.click()
    assert "not imported" in app.message_area.value and "broken.json" in app.message_area.value
    assert app.state.scene is scene and app.state.fit_setup == setup
    doc = panel.build_document()
    doc["scene"]["rings"][0]["t_in"]["value"] = 99999.0  # outside its bounds
    assert not panel.import_start(doc)
    assert "rings.0.t_in" in app.message_area.value
    assert app.state.scene is scene and app.state.fit_setup == setup
    assert not panel.import_start(str(tmp_path / "missing.json"))
    assert app.state.scene is scene


def test_import_sets_scene_and_table(app, tmp_path):
    panel = app.start_page
    panel.rows["rings.1.t_in"].free.value = True
    panel.rows["rings.1.t_in"].hi.value = 900.0
    path = tmp_path / "seed.json"
    panel.path.value = str(path)
    assert panel.save()
    t_saved = app.state.scene.rings[1].t_in
    app.ring_deck.cards[1].controls["t_in"].number.value = t_saved + 50.0
    panel.rows["rings.1.t_in"].free.value = False
    settle(app)
    panel.import_button.click()
    assert "imported" in app.message_area.value
    assert app.state.scene.rings[1].t_in == pytest.approx(t_saved)
    assert app.ring_deck.cards[1].controls["t_in"].value == pytest.approx(t_saved)
    settle(app)
    assert panel.rows["rings.1.t_in"].free.value and panel.rows["rings.1.t_in"].hi.value == 900.0


def test_refinement_lowers_chi2_and_waits_for_accept(app):
    panel = app.start_page
    card = app.ring_deck.cards[0]
    card.controls["t_in"].number.value = app.state.scene.rings[0].t_in - 150.0  # perturb
    settle(app)
    perturbed = app.state.scene
    panel.rows["rings.0.t_in"].free.value = True
    panel.rows["rings.0.r_in"].free.value = True
    assert panel.refine_now()
    res = panel.refine_result
    assert res.chi2_after < 0.9 * res.chi2_before
    assert app.state.scene is perturbed  # nothing changes before accept
    assert card.controls["t_in"].value == pytest.approx(perturbed.rings[0].t_in)
    assert "χ²" in panel.result_html.value and "rings.0.t_in" in panel.result_html.value
    assert panel.result_actions.layout.display != "none"
    panel.accept_button.click()
    t_new = {p.path: p.value for p in res.parameters}["rings.0.t_in"]
    assert app.state.scene.rings[0].t_in == pytest.approx(t_new)
    assert card.controls["t_in"].value == pytest.approx(t_new)
    settle(app)
    assert app.frame.result.total == pytest.approx(res.chi2_after, rel=1e-9)
    assert panel.refine_result is None and panel.result_actions.layout.display == "none"


def test_discard_drops_the_result(app):
    panel = app.start_page
    panel.rows["rings.0.t_in"].free.value = True
    scene = app.state.scene
    panel.refine_now()
    panel.discard_button.click()
    assert panel.refine_result is None and app.state.scene is scene


def test_weights_go_into_state_and_document(app):
    panel = app.start_page
    panel.weights["photometry"].value = 0.0
    assert app.state.fit_setup["weights"] == {"photometry": 0.0}
    settle(app)
    assert panel.document["data"]["weights"]["photometry"] == 0.0


class _SlowComparison(Comparison):
    """The real comparison, 20 ms slower per model, counting its calls."""

    calls = 0

    def compare(self, scene):
        type(self).calls += 1
        time.sleep(0.02)
        return super().compare(scene)


def test_cancel_stops_a_background_refinement(material):
    app = _app(material, jobs="thread")
    panel = app.start_page
    view = app.view
    slow = _SlowComparison(view.observations, view.photometry, view.spectrum)
    panel._comparison = lambda: slow
    for p in ("rings.0.t_in", "rings.0.r_in", "rings.0.q", "rings.1.t_in"):
        panel.rows[p].free.value = True
    scene = app.state.scene
    panel.refine_button.click()
    assert panel.runner.busy and panel.refine_button.disabled
    t0 = time.time()
    while _SlowComparison.calls < 4 and time.time() - t0 < 10:
        time.sleep(0.01)
    panel.cancel_button.click()
    assert panel.runner.wait(10)
    res = panel.refine_result
    assert res is not None and not res.success and "cancelled" in res.message
    assert res.nfev < 50 and app.state.scene is scene
    assert not panel.refine_button.disabled and panel.cancel_button.disabled


def test_session_keeps_the_fit_setup(app, tmp_path):
    panel = app.start_page
    panel.rows["rings.0.r_in"].free.value = True
    panel.rows["rings.0.r_in"].hi.value = 1.0
    sess = app.session_box
    sess.path.value = str(tmp_path / "s.json")
    assert sess.save()
    saved = json.loads((tmp_path / "s.json").read_text())["fit_setup"]
    assert saved["free"] == ["rings.0.r_in"] and saved["bounds"]["rings.0.r_in"][1] == 1.0
    panel.fix_all_button.click()
    assert app.state.fit_setup["free"] == []
    assert sess.restore()
    settle(app)
    assert app.state.fit_setup["free"] == ["rings.0.r_in"] and panel.rows["rings.0.r_in"].free.value


def test_baseline_selection_goes_into_the_document(material):
    from diskexplorer.app.pages.start_page import describe_state_data
    from diskexplorer.app.state.explorer_state import ExplorerState

    state = ExplorerState(data_sources={"oifits": ["night1.fits"]}, baseline_range=(20.0, float("inf")))
    desc, notes = describe_state_data(state)
    assert desc.oifits[0]["baseline_range"] == [20.0, None] and notes == []
    state.baseline_range = (0.0, float("inf"))          # no selection: nothing recorded
    assert describe_state_data(state)[0].oifits[0]["baseline_range"] is None
