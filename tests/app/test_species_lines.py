"""The spectrum page and the correlated-flux figure draw each dust species' share on request.

The values drawn are those of diskexplorer.observables.species_parts (checked against the
mixture rule in tests/observables/test_species_parts.py); here: what is drawn, when, and
that it follows the model.
"""
import numpy as np

from diskexplorer.observables.species_parts import species_coherent_flux, species_spectra
from explorer_helpers import build_app, settle


def test_the_spectrum_shows_each_species_when_asked_and_follows_the_model():
    app = build_app()
    settle(app)
    fig = app.figures["spectrum"]
    assert not fig.species.visible
    fig.show_species.value = True
    assert fig.species.visible
    want = species_spectra(app.state.scene, fig.wavelength)
    assert list(fig.species.labels) == list(want)
    np.testing.assert_allclose(np.asarray(fig.species.y), np.vstack(list(want.values())))
    assert all(label in fig.species_key.value for label in want)   # the key beside the box, not a legend
    app.ring_deck.cards[0].controls["t_in"].slider.value = 1350.0
    settle(app)
    moved = species_spectra(app.state.scene, fig.wavelength)
    np.testing.assert_allclose(np.asarray(fig.species.y), np.vstack(list(moved.values())))
    fig.show_species.value = False
    assert not fig.species.visible and fig.species_key.value == ""


def test_the_correlated_flux_figure_splits_one_chosen_baseline_by_species():
    app = build_app()
    settle(app)
    fig = app.figures["corrflux"]
    labels = [label for label, k in fig.species_of.options if k >= 0]
    n_band = next(k for label, k in fig.species_of.options if label.startswith("QT-N"))
    fig.species_of.value = n_band
    assert fig.species.visible and all(f"({labels[n_band]})" in s for s in fig.species.labels)
    vis2 = app.view.observations.vis2
    idx = app.view.baselines[n_band]["index"]
    u, v, wl = (vis2[k].values[idx] for k in ("u", "v", "wavelength"))
    want = species_coherent_flux(app.state.scene, u, v, wl)
    order = np.argsort(wl)
    np.testing.assert_allclose(np.asarray(fig.species.y), np.vstack([np.abs(c)[order] for c in want.values()]))
    # the choice survives a filter that keeps the baseline, and "none" hides the lines
    app.state.set_filters(baseline_range=(0.0, 300.0))
    settle(app)
    assert fig.species_of.label == labels[n_band]
    fig.species_of.value = -1
    assert not fig.species.visible
