"""The explorer with correlated fluxes, differential phases and the channel-bandpass switch."""
import numpy as np
import pytest

from diskexplorer.app.pages.start_page import describe_state_data
from diskexplorer.sample import load_sample_data
from diskexplorer.testing import synthetic_data, synthetic_scene
from diskexplorer.app.figures.base import drawn_dots
from explorer_helpers import build_app


@pytest.fixture(scope="module")
def app():
    a = build_app()
    a.flush()
    return a


def test_figures_of_the_new_kinds_show_the_sample_and_its_model(app):
    f = app.figures
    assert f["corrflux_data"].widget.layout.display == "" and f["diffphi"].widget.layout.display == ""
    # the sample has no normalised |V|: that figure stays hidden
    assert f["visamp"].widget.layout.display == "none"
    result = app.judgement()
    fig = f["diffphi"]
    rows = fig._rows
    model = np.asarray(result.model["diffphi"])[rows]
    assert np.isfinite(model).all()
    # the drawn data are the differential phases at the wavelengths on the x axis
    vis = app.view.observations.vis
    np.testing.assert_array_equal(fig._points["freq"], vis["wavelength"].values[rows])
    x, y, _ = drawn_dots(fig.data)
    assert sorted(zip(x, y)) == sorted(zip(vis["wavelength"].values[rows], vis["visphi"].values[rows]))
    assert len(fig.model.x) > 0 and len(fig.residuals.x) > 0
    assert fig.ax.label == "λ [µm]"


def test_chi2_table_lists_the_kinds_with_their_weights(app):
    html = app.chi2.widget.value
    for label in ("correlated flux", "differential phase", "weight"):
        assert label in html
    assert "0 (not in total)" in html
    assert "weight 0, left out of the total: triple amplitude" in html


def test_bandpass_switch_per_file_changes_chi2_and_is_exported():
    a = build_app()
    a.flush()
    before = a.judgement()
    rows = [r for r in a.data_page.rows.children if getattr(r, "bandpass", None) is not None]
    assert [r.data_set.label for r in rows] == ["aurelis_QT-HK.fits", "aurelis_QT-LM.fits", "aurelis_QT-N.fits"]
    assert all(r.bandpass.value for r in rows)
    rows[2].bandpass.value = False
    a.flush()
    after = a.judgement()
    # the N-band file was simulated with channel averages: the monochromatic model is worse
    assert after.chi2["diffphi"] > before.chi2["diffphi"] + 50
    assert after.chi2["vis2"] != before.chi2["vis2"]
    assert "bandpass off" in a.message_area.value or "bandpass off" in str(a.state.message)
    entries = describe_state_data(a.state)[0].as_dict()["oifits"]
    assert [e["bandpass"] for e in entries] == [True, True, False]
    # switching back restores the χ² exactly
    rows = [r for r in a.data_page.rows.children if getattr(r, "bandpass", None) is not None]
    rows[2].bandpass.value = True
    a.flush()
    assert a.judgement().total == pytest.approx(before.total, rel=1e-12)


def test_data_without_the_new_kinds_hide_their_figures():
    a = build_app(synthetic_data(), synthetic_scene())
    a.flush()
    assert all(a.figures[k].widget.layout.display == "none" for k in ("visamp", "corrflux_data", "diffphi"))
    assert "differential phase" not in a.chi2.widget.value
    # and they come back when such data are added
    a.data_page.path.value = load_sample_data()["paths"]["oifits"][2]
    a.data_page.load_paths()
    a.flush()
    assert a.figures["diffphi"].widget.layout.display == ""


def test_start_page_weighs_the_new_kinds_and_exports_them(app):
    panel = app.start_page
    assert {"corrflux", "diffphi", "visamp"} <= set(panel.weights)
    panel.weights["diffphi"].value = 0.25
    doc = panel.build_document()
    assert doc["data"]["weights"]["diffphi"] == 0.25
    assert set(doc["judgement"]["chi2"]) >= {"corrflux", "diffphi"}
    assert [e["bandpass"] for e in doc["data"]["oifits"]] == [True, True, True]
    panel.weights["diffphi"].value = 1.0


def test_a_session_keeps_the_bandpass_switch(tmp_path):
    from diskexplorer.app.state.sessions import decode_session, read_session, session_of_state, write_session

    a = build_app(workdir=tmp_path)
    a.flush()
    a.data_page.set_bandpass(1, False)
    a.flush()
    off = a.judgement().total
    write_session(tmp_path / "s.json", session_of_state(a.state))
    b = build_app(workdir=tmp_path)
    b.flush()
    b.state.restore_session(decode_session(read_session(tmp_path / "s.json")))
    b.flush()
    assert [d.bandpass for d in b.state.data_sets if d.kind == "oifits"] == [True, False, True]
    assert b.judgement().total == pytest.approx(off, rel=1e-12)
