"""Mass fractions in the explorer: start-page rows, the document, refinement, sessions, scan note.

Sources: the rules are ours (fitting/paths.py, fitting/vector.py, app/pages/start_page.py
and scan_page.py docstrings); the scene and data are diskexplorer.testing's synthetic ones.
"""
import json
import math

import pytest

from diskexplorer.app.state.sessions import decode_session, session_of_state
from diskexplorer.fitting import read_start
from diskexplorer.fitting.start_document import document_entry
from explorer_helpers import make_app, settle

START_PAGE, SCAN_PAGE = 3, 4
IRON, FORSTERITE = "rings.0.dust.iron", "rings.0.dust.forsterite"


@pytest.fixture
def app(material):
    app = make_app(material, jobs="sync")
    app.figure_tabs.selected_index = START_PAGE
    return app


def test_fractions_are_listed_with_free_boxes_bounds_and_dirichlet_priors(app):
    panel = app.start_page
    fractions = [p for p in panel.rows if ".dust." in p]
    scene = app.state.scene
    expected = [f"rings.{k}.dust.{key}" for k, ring in enumerate(scene.rings) for key, _ in ring.dust.fractions]
    assert fractions == expected
    row = panel.rows[IRON]
    assert (row.lo.value, row.hi.value) == (0.0, 1.0)
    assert row.prior.options == ("dirichlet",) and row.prior.value == "dirichlet"
    assert row.mean.value == 1.0 and row.mean.layout.visibility == "visible"   # α, flat by default
    assert not row.free.value
    assert row.value.value == "0.15"


def test_free_fractions_and_a_concentration_reach_the_document(app):
    panel = app.start_page
    panel.rows[IRON].free.value = True
    panel.rows[FORSTERITE].free.value = True
    panel.rows[IRON].mean.value = 3.0
    settle(app)
    assert app.state.fit_setup["priors"][IRON] == {"kind": "dirichlet", "concentration": 3.0}
    doc = panel.document
    assert document_entry(doc, IRON)["free"] is True
    assert document_entry(doc, IRON)["prior"] == {"kind": "dirichlet", "concentration": 3.0}
    start = read_start(doc)
    assert set(start.paths) == {IRON, FORSTERITE}


def test_a_lone_free_fraction_says_why_there_is_no_document(app):
    panel = app.start_page
    panel.rows[IRON].free.value = True
    settle(app)
    assert panel.document is None and "only free mass fraction" in panel.document_error


def test_refined_fractions_are_accepted_with_the_sum_kept(app):
    panel = app.start_page
    panel.rows[IRON].free.value = True
    panel.rows[FORSTERITE].free.value = True
    settle(app)
    assert panel.refine_now()
    res = panel.refine_result
    assert res is not None and res.chi2_after <= res.chi2_before
    assert panel.accept()
    fractions = dict(app.state.scene.rings[0].dust.fractions)
    assert math.fsum(fractions.values()) == pytest.approx(1.0, abs=1e-12)
    assert fractions["olivine_glass"] == 0.6          # the fixed fraction stays


def test_sessions_keep_free_fractions_and_their_priors(app):
    panel = app.start_page
    panel.rows[IRON].free.value = True
    panel.rows[FORSTERITE].free.value = True
    panel.rows[FORSTERITE].mean.value = 2.5
    settle(app)
    doc = json.loads(json.dumps(session_of_state(app.state)))
    contents = decode_session(doc)
    assert set(contents.fit_setup["free"]) == {IRON, FORSTERITE}
    assert contents.fit_setup["priors"][FORSTERITE] == {"kind": "dirichlet", "concentration": 2.5}
    assert contents.scene == app.state.scene


def test_the_scan_page_notes_the_proportional_rule(material):
    app = make_app(material, jobs="sync")
    app.scan_page.warm = False
    app.figure_tabs.selected_index = SCAN_PAGE
    panel = app.scan_page
    assert panel.fraction_note.layout.display == "none"
    panel.x_axis.path.value = IRON
    assert panel.fraction_note.layout.display is None
    assert "rescaled proportionally" in panel.fraction_note.value and IRON in panel.fraction_note.value
    panel.x_axis.path.value = "rings.0.r_in"
    assert panel.fraction_note.layout.display == "none"


def test_importing_a_document_brings_free_fractions_and_concentrations(app):
    from diskexplorer.fitting import export_start

    doc = export_start(app.state.scene, free=[IRON, FORSTERITE], priors={IRON: ("dirichlet", 4.0)})
    panel = app.start_page
    assert panel.import_start(doc)
    settle(app)
    assert set(panel.free_paths) == {IRON, FORSTERITE}
    assert panel.rows[IRON].free.value and panel.rows[IRON].mean.value == 4.0
    assert panel.rows[FORSTERITE].mean.value == 1.0
