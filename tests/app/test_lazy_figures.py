"""Figures of pages not yet opened are made when their page is first built, and then show
the data, model and pins of that moment."""
import numpy as np
import pytest

from diskexplorer.app.state.model_views import sed_curves
from diskexplorer.sample import demo_scene
from explorer_helpers import settle

HIDDEN = ("sed", "spectrum", "image", "profiles")


@pytest.fixture
def app_scene():
    """The ``app`` fixture starts from the sample's scene (its rings and dust), on ``material``'s data."""
    return demo_scene()



def test_only_the_first_pages_figures_exist_at_start(app):
    assert [n for n in HIDDEN if app.figures.built(n)] == []
    assert all(app.figures.built(n) for n in ("vis2", "t3", "corrflux_data", "diffphi", "corrflux"))
    assert set(HIDDEN) <= set(app.figures.keys())
    with pytest.raises(KeyError, match="no figure 'nope'"):
        app.figures["nope"]


def test_a_late_figure_shows_the_model_data_and_pins_of_the_moment(app):
    app.state.pin("first")
    settle(app)
    card = app.ring_deck.cards[0]
    card.controls["t_in"].number.value = 1300.0
    settle(app)
    assert not app.figures.built("sed")
    app.figure_tabs.selected_index = app.PAGES["spectra"]
    sed, spectrum = app.figures["sed"], app.figures["spectrum"]
    assert app.figures.built("sed") and app.figures.built("spectrum")
    # the model of now (T_in = 1300 K), against an independent evaluation of the scene
    assert app.state.scene.rings[0].t_in == pytest.approx(1300.0)
    total = sed_curves(app.state.scene)["total"]
    row = list(sed.components.labels).index("total")
    np.testing.assert_allclose(np.asarray(sed.components.y)[row], np.where(total > 0, total, np.nan), rtol=1e-12)
    # the data, and the pin made before the figure existed
    assert np.asarray(sed.points.x).size == app.view.photometry["wavelength"].size > 0
    assert sed.pins.visible and sed.pins.labels == ["first"] and np.isfinite(np.asarray(sed.pins.y)).any()
    np.testing.assert_array_equal(spectrum.wavelength, app.view.spectrum["wavelength"].values)
    assert np.asarray(spectrum.components.y).shape[1] == spectrum.wavelength.size
    # and from then on it follows the sliders
    card.controls["t_in"].number.value = 1600.0
    settle(app)
    total = sed_curves(app.state.scene)["total"]
    np.testing.assert_allclose(np.asarray(sed.components.y)[row], np.where(total > 0, total, np.nan), rtol=1e-12)


def test_structure_figures_are_made_and_computed_when_their_page_opens(app):
    app.ring_deck.cards[0].controls["r_in"].number.value = 0.3
    settle(app)
    assert not app.figures.built("image")
    app.figure_tabs.selected_index = app.PAGES["structure"]
    image = app.figures["image"]
    assert app.frame.image is not None and np.asarray(image.heat.color).shape[0] > 2
    assert app.frame.profiles is not None and not app._structure_stale
