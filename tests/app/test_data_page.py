"""The user's own data in the explorer: explore(data=...), the data tab's list, warnings, removal.

Files are not the sample: synthetic OIFITS of other invented arrays, wavelengths and
instruments written by the project's writer (diskexplorer.testing.make_oifits), invented
photometry and spectrum tables, and the public OIFITS test files in tests/reference/oifits
(sources in the README there).
"""
import gzip
import shutil

import numpy as np
import pytest

from _reference import oifits_path
from diskexplorer.app.state.data_sets import DataSet, read_data_set
from diskexplorer.app.figures.interferometry import wavelength_colours
from diskexplorer.data.oifits import read_oifits
from diskexplorer.errors import DataError
from diskexplorer.fitting.comparison import Comparison
from diskexplorer.sample import demo_scene, load_sample_data
from diskexplorer.testing import make_oifits
from diskexplorer.app.figures.base import drawn_dots
from explorer_helpers import build_app, settle

# An invented K-band instrument with 8 channels at 2.0–2.35 µm and an L-band one with 6, on
# an array of its own (the sample has neither these wavelengths nor this array).
K_WAVES = np.linspace(2.0, 2.35, 8)
L_WAVES = np.linspace(3.45, 3.95, 6)
PHOTOMETRY = ("# invented photometry of a synthetic source\n"
              "band,wavelength,value,error,unit\n"
              "J,,6.10,0.03,mag\nH,,5.62,0.03,mag\nKs,,5.01,0.03,mag\n"
              ",10.0,2.4,0.2,Jy\n")
SPECTRUM = ("# invented N-band spectrum of a synthetic source\n"
            "wavelength [um],flux [Jy],error [Jy]\n"
            + "".join(f"{w:.2f},{2.0 + 0.3 * np.exp(-((w - 9.8) / 0.8) ** 2):.4f},0.05\n"
                      for w in np.linspace(8.0, 13.0, 26)))



@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """A folder of the user's: two OIFITS files of other arrays, photometry, a spectrum, a note."""
    d = tmp_path_factory.mktemp("my_data")
    make_oifits(d, "night_k.fits", n_telescopes=6, n_exposures=5, wavelengths=K_WAVES, insname="OTHER_K",
                arrname="OTHER_ARRAY", target="SIM-DISK-2", diameter_mas=1.2, seed=3)
    make_oifits(d, "night_n.fits", n_telescopes=4, n_exposures=4, n_channels=12, band="N", insname="OTHER_N",
                arrname="OTHER_ARRAY_2", target="SIM-DISK-2", diameter_mas=15.0, seed=4)
    (d / "sed.csv").write_text(PHOTOMETRY)
    (d / "nband.txt").write_text(SPECTRUM)
    (d / "README.md").write_text("# my observations\nNotes on the nights.\n")
    return d


@pytest.fixture(scope="module")
def other(tmp_path_factory):
    """A second realistic file with other wavelengths: 8 channels at 2.0–2.35 µm plus 6 in L."""
    d = tmp_path_factory.mktemp("other")
    from diskexplorer.data.observations import ObservationSet
    from diskexplorer.data.oifits_write import write_oifits
    from diskexplorer.testing import make_observations

    k = make_observations(n_telescopes=6, n_exposures=5, wavelengths=K_WAVES, insname="ARRAY3_K",
                          arrname="ARRAY3", target="SIM-DISK-3", seed=5)
    lb = make_observations(n_telescopes=4, n_exposures=3, wavelengths=L_WAVES, insname="ARRAY3_L",
                           arrname="ARRAY3_L", target="SIM-DISK-3", seed=6)
    path = d / "array3_kl.fits"
    write_oifits(path, ObservationSet.concat([k, lb]), date="2024-01-01T00:00:00")
    return path


# ---------------------------------------------------------------- explore(data=...)
def test_one_oifits_file_loads_nothing_of_the_sample(files):
    path = files / "night_k.fits"
    app = build_app(str(path))
    st = app.state
    assert [d.label for d in st.data_sets] == ["night_k.fits"]
    assert st.photometry is None and st.spectrum is None
    assert st.data_sources == {"oifits": [str(path)]}
    result = app.judgement()
    assert set(result.chi2) <= {"vis2", "t3phi", "t3amp"} and result.npoints["vis2"] == 600
    ref = Comparison(read_oifits(str(path))).compare(demo_scene())
    assert result.total == pytest.approx(ref.total)
    assert app.state.scene == demo_scene()  # documented default starting scene
    assert app.figures["sed"].points.x.size == 0 or not np.isfinite(np.asarray(app.figures["sed"].points.y)).any()


def test_a_folder_is_read_by_content_and_its_note_is_skipped(files):
    app = build_app(files)
    kinds = sorted((d.kind, d.label) for d in app.state.data_sets)
    assert kinds == [("oifits", "night_k.fits"), ("oifits", "night_n.fits"), ("photometry", "sed.csv"),
                     ("spectrum", "nband.txt")]
    assert "README.md" in app.message_area.value and "skipped" in app.message_area.value
    result = app.judgement()
    assert result.npoints["photometry"] == 4 and result.npoints["spectrum"] == 26
    obs = read_oifits([str(files / "night_k.fits"), str(files / "night_n.fits")])
    from diskexplorer.data import read_photometry, read_spectrum
    ref = Comparison(obs, read_photometry(files / "sed.csv"), read_spectrum(files / "nband.txt")).compare(demo_scene())
    assert result.total == pytest.approx(ref.total)


def test_a_list_of_paths_relative_to_the_working_folder(files):
    app = build_app(["night_n.fits", "sed.csv"], workdir=files)
    assert [(d.kind, d.source) for d in app.state.data_sets] == [
        ("oifits", str(files / "night_n.fits")), ("photometry", str(files / "sed.csv"))]
    assert app.state.spectrum is None


def test_gzip_compressed_public_file(tmp_path):
    src = oifits_path("v2/Alp_Vic--MIRC_H.fits")
    gz = tmp_path / "alp_vic.fits.gz"
    with open(src, "rb") as fin, gzip.open(gz, "wb") as fout:
        shutil.copyfileobj(fin, fout)
    app = build_app(gz)
    assert app.judgement().npoints["vis2"] == read_oifits(str(src)).n_points("vis2")


def test_an_observation_set_and_an_empty_list(files):
    obs = read_oifits(str(files / "night_k.fits"))
    app = build_app(obs)
    assert len(app.state.data_sets) == 1 and app.state.data_sets[0].source == str(files / "night_k.fits")
    assert app.state.photometry is None and app.judgement().npoints["vis2"] == 600
    empty = build_app([])
    assert empty.state.data_sets == () and empty.judgement() is None
    assert "no data" in empty.chi2.widget.value


def test_the_sample_dict_gives_one_data_set_per_file():
    data = load_sample_data()
    app = build_app(dict(data), scene=demo_scene())
    labels = [d.label for d in app.state.data_sets]
    assert labels == ["aurelis_QT-HK.fits", "aurelis_QT-LM.fits", "aurelis_QT-N.fits", "aurelis_photometry.csv",
                      "aurelis_nband_spectrum.csv"]
    ref = Comparison(data["observations"], data["photometry"], data["spectrum"]).compare(demo_scene())
    assert app.judgement().total == pytest.approx(ref.total)
    assert app.judgement().npoints == ref.npoints


@pytest.mark.parametrize("bad, match", [
    ("missing.fits", r"missing\.fits: no such data file"),
    (42, "expected a path, a list of paths"),
    ([1.5], "must hold paths"),
])
def test_bad_data_arguments_are_refused(tmp_path, bad, match):
    if isinstance(bad, str):
        bad = tmp_path / bad
    with pytest.raises(DataError, match=match):
        build_app(bad)


def test_two_photometry_tables_are_refused_by_name(files, tmp_path):
    (tmp_path / "a.csv").write_text(PHOTOMETRY)
    (tmp_path / "b.csv").write_text(PHOTOMETRY)
    with pytest.raises(DataError, match=r"2 photometry files .*a\.csv.*b\.csv"):
        build_app(tmp_path)


def test_judgement_follows_the_model_and_the_filters(files):
    app = build_app(files)
    res0 = app.judgement()
    assert res0 is app.chi2.live
    app.ring_deck.cards[0].controls["t_in"].slider.value = app.state.scene.rings[0].t_in + 250.0
    res1 = app.judgement()  # the pending change is computed first
    assert res1 is not res0 and res1 is app.chi2.live
    ref = Comparison(app.view.observations, app.state.photometry, app.state.spectrum).compare(app.state.scene)
    assert res1.total == pytest.approx(ref.total)
    app.data_page.bands.value = ("N",)
    settle(app)
    n_band = read_oifits(str(files / "night_n.fits")).n_points("vis2")
    assert app.judgement().npoints["vis2"] == n_band


# ---------------------------------------------------------------- the data tab
def _row(app, label):
    return next(r for r in app.data_page.rows.children if getattr(r, "data_set", None) is not None
                and r.data_set.label == label)


def test_rows_list_file_kind_points_and_remove_updates_everything(files):
    app = build_app(files)
    rows = app.data_page.rows.children
    assert [r.data_set.label for r in rows] == ["night_k.fits", "night_n.fits", "sed.csv", "nband.txt"]
    text = _row(app, "night_k.fits").text.value
    assert "night_k.fits" in text and "OIFITS" in text and "600 V²" in text
    assert "4 photometric points" in _row(app, "sed.csv").text.value
    assert set(app.data_page.bands.options) == {"K", "N"}
    n_vis2 = app.judgement().npoints["vis2"]
    calls = app.debouncer.calls

    _row(app, "night_n.fits").remove_button.click()
    assert "removed OIFITS: night_n.fits" in app.message_area.value
    settle(app)
    assert app.debouncer.calls == calls + 1 and "data" in app.recompute_log[-1]
    assert app.judgement().npoints["vis2"] == 600 < n_vis2
    assert drawn_dots(app.figures["vis2"].data)[0].size == 600
    assert list(app.data_page.bands.options) == ["K"]
    assert app.state.data_sources["oifits"] == [str(files / "night_k.fits")]

    _row(app, "sed.csv").remove_button.click()
    settle(app)
    assert "photometry" not in app.judgement().chi2 and app.state.photometry is None
    assert "photometry" not in app.state.data_sources

    app.data_page.remove_all()
    settle(app)
    assert app.judgement() is None and "no data loaded" in app.chi2.widget.value
    assert drawn_dots(app.figures["vis2"].data)[0].size == 0
    assert app.data_page.bands.options == () and app.data_page.clear_button.disabled


def test_adding_files_from_the_path_box(files, other):
    app = build_app(files / "night_n.fits")
    panel = app.data_page
    panel.path.value = f"{other}, {files / 'sed.csv'}"
    assert panel.load_paths()
    assert "loaded OIFITS: array3_kl.fits" in app.message_area.value and "photometry: sed.csv" in app.message_area.value
    settle(app)
    assert [d.label for d in app.state.data_sets] == ["night_n.fits", "array3_kl.fits", "sed.csv"]
    assert set(panel.bands.options) == {"K", "L", "N"}
    assert set(panel.instruments.options) == {"OTHER_N", "ARRAY3_K", "ARRAY3_L"}
    # loading a file again replaces it instead of doubling its points
    n = app.judgement().npoints["vis2"]
    panel.path.value = str(other)
    assert panel.load_paths()
    settle(app)
    assert len(app.state.data_sets) == 3 and app.judgement().npoints["vis2"] == n
    # a second photometry table takes the place of the first, and says so
    second = files.parent / "other_sed.csv"
    second.write_text(PHOTOMETRY.replace("2.4,0.2", "2.9,0.2"))
    panel.kind.value = "photometry"
    panel.path.value = str(second)
    assert panel.load_paths()
    assert "replaced sed.csv" in app.message_area.value
    assert [d.label for d in app.state.data_sets if d.kind == "photometry"] == ["other_sed.csv"]


def test_upload_is_recognised_by_content(files):
    app = build_app([])
    content = (files / "night_k.fits").read_bytes()
    import datetime
    app.data_page.upload.value = ({"name": "upload.fits", "type": "application/fits", "size": len(content),
                                    "content": memoryview(content),
                                    "last_modified": datetime.datetime.now(datetime.timezone.utc)},)
    settle(app)
    assert [d.kind for d in app.state.data_sets] == ["oifits"]
    assert app.judgement().npoints["vis2"] == 600


def test_reader_warnings_show_in_the_notice_and_stay_beside_their_data_set(files):
    reversed_file = oifits_path("v2/bad_wave_reversed.fits")
    app = build_app(files / "night_k.fits")
    app.data_page.path.value = str(reversed_file)
    assert app.data_page.load_paths()
    notice = app.message_area.value
    assert "loaded OIFITS: bad_wave_reversed.fits" in notice and "1 warning(s)" in notice and "reversed" in notice
    row = _row(app, "bad_wave_reversed.fits")
    assert "reversed (descending) order" in row.warnings.value
    assert row.data_set.warnings and not _row(app, "night_k.fits").data_set.warnings
    assert _row(app, "night_k.fits").warnings.value == ""
    # another load replaces the message, not the warning beside its data set
    app.data_page.path.value = str(files / "sed.csv")
    assert app.data_page.load_paths()
    assert "reversed" not in app.message_area.value
    assert "reversed (descending) order" in _row(app, "bad_wave_reversed.fits").warnings.value


def test_warnings_of_data_given_to_explore_reach_the_notice():
    app = build_app(oifits_path("v2/bad_wave_reversed.fits"))
    assert "warning" in app.message_area.value and "reversed" in app.message_area.value
    assert "reversed" in app.data_page.rows.children[0].warnings.value


def test_a_failed_load_keeps_the_earlier_data_and_the_app_usable(files, tmp_path):
    app = build_app(files)
    settle(app)
    before = app.state.data_sets
    obs, result = app.state.observations, app.judgement()
    calls = app.debouncer.calls
    truncated = tmp_path / "cut.fits"
    data = oifits_path("v2/Alp_Vic--MIRC_H.fits").read_bytes()
    truncated.write_bytes(data[: len(data) // 2])
    for bad in (truncated, tmp_path / "missing.fits", files / "README.md"):
        app.data_page.kind.value = "auto"
        app.data_page.path.value = str(bad)
        assert not app.data_page.load_paths()
        assert app.message_area.value and bad.name in app.message_area.value and "not loaded" in app.message_area.value
        assert app.state.data_sets is before and app.state.observations is obs
    assert "truncated or damaged" in _load_message(app, truncated)
    settle(app)
    assert app.debouncer.calls == calls and app.judgement() is result
    # still usable: the model moves and a good file loads
    app.geometry_panel.controls["inclination"].slider.value = app.state.scene.inclination + 7.0
    assert app.judgement() is not result and app.judgement().total != result.total
    app.data_page.path.value = str(oifits_path("v2/Alp_Vic--MIRC_H.fits"))
    assert app.data_page.load_paths()
    settle(app)
    assert len(app.state.data_sets) == len(before) + 1 and "H" in app.data_page.bands.options


def _load_message(app, path):
    app.data_page.path.value = str(path)
    app.data_page.load_paths()
    return app.message_area.value


def test_a_file_forced_to_the_wrong_kind_is_refused_with_its_name(files):
    app = build_app(files / "night_k.fits")
    before = app.state.data_sets
    app.data_page.kind.value = "spectrum"
    app.data_page.path.value = str(files / "sed.csv")
    assert not app.data_page.load_paths()
    assert "sed.csv" in app.message_area.value and app.state.data_sets is before


def test_filters_drop_values_whose_data_are_gone(files, other):
    app = build_app([files / "night_n.fits", other])
    app.data_page.bands.value = ("L",)
    app.data_page.instruments.value = ("ARRAY3_L",)
    settle(app)
    assert app.judgement().npoints["vis2"] == read_oifits(str(other)).select_band("L").n_points("vis2")
    _row(app, "array3_kl.fits").remove_button.click()
    settle(app)
    assert app.state.band_filter == () and app.state.instrument_filter == ()
    assert app.judgement().npoints["vis2"] == read_oifits(str(files / "night_n.fits")).n_points("vis2")


# ---------------------------------------------------------------- per-point marks
def _check_colours(app):
    """The V² and closure-phase point colours are the wavelengths' places on the key."""
    lo, hi = app.view.wavelength_range
    for name in ("vis2", "t3"):
        fig = app.figures[name]
        wl = np.asarray(getattr(app.view, name)["wavelength"])[fig._shown]
        pts = {k: np.asarray(v)[fig._shown] for k, v in getattr(app.view, name).items()}
        # every drawn dot is a point at its place in the colour of its wavelength on the key
        x, y, colours = drawn_dots(fig.data)
        assert x.size == wl.size
        assert sorted(zip(x, y, colours)) == sorted(zip(pts["freq"], pts["value"], wavelength_colours(wl, lo, hi)))
        assert fig.residuals.colors == fig.data.colors
        assert len(set(wavelength_colours(np.unique(wl), lo, hi))) == np.unique(wl).size
        assert f"{lo:.3g} µm" in fig.figure.title and f"{hi:.3g} µm" in fig.figure.title


def test_point_colours_after_loads_and_removals(files, other):
    app = build_app(files / "night_n.fits")
    _check_colours(app)
    app.data_page.path.value = str(other)
    app.data_page.load_paths()
    settle(app)
    _check_colours(app)
    _row(app, "night_n.fits").remove_button.click()
    settle(app)
    assert app.view.wavelength_range == pytest.approx((K_WAVES[0], L_WAVES[-1]), rel=1e-6)
    _check_colours(app)
    app.data_page.path.value = str(files / "night_k.fits")
    app.data_page.load_paths()
    settle(app)
    _check_colours(app)
    _row(app, "array3_kl.fits").remove_button.click()
    settle(app)
    _check_colours(app)
    assert len(set(drawn_dots(app.figures["vis2"].data)[2])) == K_WAVES.size


def test_data_set_describes_itself(files):
    d = read_data_set(files / "nband.txt")
    assert d.kind == "spectrum" and d.label == "nband.txt" and d.describe_points() == "26 spectral samples"
    with pytest.raises(DataError, match="unknown kind"):
        DataSet("image", None)
