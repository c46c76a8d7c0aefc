"""The ring card's composition section: solve in the background job runner, accept through
the state, and the table of iron against carbon (widgets without a browser, jobs="sync")."""
from __future__ import annotations

import numpy as np
import pytest

from diskexplorer.dust import DustMix

from explorer_helpers import make_app, settle


@pytest.fixture
def app(material):
    scene, _ = material
    inner = scene.rings[0]
    # A wrong start: the solve must move the fractions back towards the scene's.
    wrong = scene.with_ring(0, dust=DustMix({"olivine_glass": 0.3, "forsterite": 0.3, "iron": 0.4},
                                            grain_size=inner.dust.grain_size, shape=inner.dust.shape))
    app = make_app(material, scene=wrong)
    settle(app)
    return app


def test_the_section_is_built_on_first_open(app):
    card = app.ring_deck.cards[0]
    assert card._composition is None
    card.dust_box.selected_index = 1
    assert card._composition is not None and card.dust_box.children[1] is card.composition
    assert set(card.composition.components.value) == {"olivine_glass", "forsterite", "iron"}


def test_solve_shows_the_result_and_accept_applies_it(app):
    card = app.ring_deck.cards[0]
    panel = card.composition
    before = app.state.scene
    panel.solve_button.click()              # jobs="sync": the solve runs at once
    res = panel.result
    assert res is not None and res.chi2_after < res.chi2_before
    assert app.state.scene is before        # nothing applied yet
    text = panel.result_html.value
    assert "χ²" in text and "olivine_glass" in text and "±" in text
    assert panel.result_actions.layout.display is None
    # the same press compared iron with carbon as the featureless absorber
    assert panel.alternatives is not None and "with iron" in panel.compare_html.value
    assert panel.progress.value.startswith("compared:")
    panel.accept_button.click()
    dust = app.state.scene.rings[0].dust
    solved = dict(zip(res.rings[0].components, res.rings[0].fractions))
    for key, f in dust.fractions:
        assert f == pytest.approx(solved[key])
    assert app.state.scene.rings[0].sigma_in == before.rings[0].sigma_in   # Σ_in was held
    assert "composition of ring inner accepted" in app.state.message
    assert panel.result is None and panel.result_actions.layout.display == "none"
    settle(app)
    # the mixture editor, opened now, shows the accepted fractions
    shown = card.mixture.fractions
    assert shown["iron"] == pytest.approx(solved["iron"], abs=1e-3)


def test_discard_keeps_the_model(app):
    panel = app.ring_deck.cards[0].composition
    before = app.state.scene
    panel.solve_now()
    panel.discard_button.click()
    assert app.state.scene is before and panel.result is None


def test_iron_against_carbon_table(app):
    panel = app.ring_deck.cards[0].composition
    assert panel.swap.value == "iron:amorphous_carbon"
    panel.compare_button.click()
    res = panel.alternatives
    names = [r["name"] for r in res.rows]
    assert names == ["with iron", "with amorphous_carbon"]
    html = panel.compare_html.value
    assert "ΔBIC" in html and "ΔAIC" in html and "with amorphous_carbon" in html
    assert min(r["delta_bic"] for r in res.rows) == 0
    assert np.isfinite([r["reduced_chi2"] for r in res.rows]).all()


def test_drop_one_table(app):
    panel = app.ring_deck.cards[0].composition
    panel.drop_button.click()
    rows = panel.drop.rows
    assert [r["component"] for r in rows] == list(panel.components.value)
    assert "Δχ²" in panel.drop_html.value and "ΔBIC" in panel.drop_html.value
    assert panel.progress.value == "drop-one test done"


def test_refusals_go_to_the_message_area(app):
    panel = app.ring_deck.cards[0].composition
    panel.components.value = ()
    assert not panel.start_solve()
    assert "choose at least one candidate species" in app.state.message
    panel.components.value = ("olivine_glass",)
    assert not panel.start_drop_one()
    assert "at least two candidate species" in app.state.message
    panel.components.value = ("olivine_glass", "forsterite")
    panel.swap.value = "pyroxene_glass"
    assert not panel.start_compare()
    assert "expected SPECIES:SPECIES" in app.state.message


def test_without_data_the_solve_is_refused(material):
    scene, _ = material
    app = make_app((scene, []))
    settle(app)
    panel = app.ring_deck.cards[0].composition
    assert not panel.start_solve()
    assert "load data to solve the composition against" in app.state.message


def test_in_a_background_thread(material):
    scene, _ = material
    app = make_app(material, jobs="thread")
    settle(app)
    panel = app.ring_deck.cards[0].composition
    assert panel.runner.mode == "thread"
    assert panel.start_solve()
    assert panel.runner.wait(60)
    assert panel.result is not None and not panel.solve_button.disabled
    assert panel.result.chi2_after <= panel.result.chi2_before
