"""Registering a dust species of the user's from the app's data tab."""
import numpy as np
import pytest

from diskexplorer.sample import demo_scene, load_sample_data
from diskexplorer.dust import unregister_species
from explorer_helpers import make_app, settle


@pytest.fixture
def app():
    a = make_app((demo_scene(), load_sample_data()))
    settle(a)
    yield a
    for name in ("grey_test_dust",):
        try:
            unregister_species(name)
        except Exception:  # noqa: BLE001 - not registered in a failing test
            pass


def test_added_species_appears_in_mixtures_and_changes_the_model(app, tmp_path):
    table = tmp_path / "grey.txt"
    lam = np.geomspace(0.2, 200.0, 60)
    np.savetxt(table, np.column_stack([lam, np.full(lam.size, 50.0)]), header="wavelength_um kappa_cm2_g")
    opened = app.ring_deck.cards[-1].mixture   # one editor built before, the others after
    form = app.data_page.species_form
    form.name.value = "grey_test_dust"
    form.source_kind.value = "kappa"
    form.path.value = str(table)
    assert form.add()
    assert "grey_test_dust" in app.state.message
    assert "grey_test_dust" in opened.fraction_controls
    card = next(c for c in app.ring_deck.cards if hasattr(app.state.scene.rings[c.index].dust, "fractions"))
    editor = card.mixture
    assert "grey_test_dust" in editor.fraction_controls
    before = app.state.scene.rings[card.index].dust
    editor.fraction_controls["grey_test_dust"].slider.value = 0.5
    settle(app)
    after = app.state.scene.rings[card.index].dust
    assert after != before
    names = {k if isinstance(k, str) else k[0] for k, _ in after.fractions}
    assert "grey_test_dust" in names
    assert sum(f for _, f in after.fractions) == pytest.approx(1.0)


def test_bad_species_file_shows_a_message_and_changes_nothing(app, tmp_path):
    bad = tmp_path / "bad_nk.txt"
    bad.write_text("# wavelength n k\n1.0 1.5 0.1\n2.0 1.5 -0.2\n3.0 1.5 0.1\n")
    scene = app.state.scene
    form = app.data_page.species_form
    form.name.value = "broken_dust"
    form.source_kind.value = "nk"
    form.path.value = str(bad)
    assert not form.add()
    assert app.state.message.startswith("error") and "bad_nk.txt" in app.state.message
    assert app.state.scene is scene
    assert all("broken_dust" not in c.mixture.fraction_controls for c in app.ring_deck.cards)
