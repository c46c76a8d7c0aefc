"""Sessions keep everything the explorer holds, in every form a scene can take."""
import json
import math
import os

import numpy as np
import pytest

from diskexplorer.app.state.sessions import (SESSION_SCHEMA, VIEW_SETTINGS, decode_session, read_session,
                                             session_of_state, write_session)
from diskexplorer.dust import DustMix
from diskexplorer.errors import DiskExplorerError, SeedError
from diskexplorer.fitting.session_document import session_document
from diskexplorer.observables.scene import Scene
from diskexplorer.physics.opacity import KappaTable, PowerLawOpacity
from diskexplorer.physics.ring import Ring
from diskexplorer.physics.star import PhotosphereTable, Star
from diskexplorer.sample import SAMPLE_FILES, load_sample_data, sample_data_dir
from diskexplorer.testing import assert_scenes_equal
from explorer_helpers import build_app


def _scene(kappa_path):
    # Invented opacities and photosphere: the three forms the first session layout lost.
    photosphere = PhotosphereTable([0.4, 1.0, 2.2, 5.0, 12.0], [30.0, 40.0, 20.0, 5.0, 0.9],
                                   reference_distance=100.0, label="invented photosphere")
    return Scene(distance=155.0, inclination=38.0, position_angle=110.0,
                 star=Star(7600.0, 2.3, mass=2.1, photosphere=photosphere),
                 rings=(Ring(r_in=0.4, r_out=1.1, t_in=1450.0, name="table ring",
                             dust=KappaTable.from_file(kappa_path)),
                        Ring(r_in=3.0, r_out=7.0, t_in=320.0, name="power-law ring",
                             dust=PowerLawOpacity(kappa_ref=900.0, wavelength_ref=10.0, beta=1.1)),
                        Ring(r_in=8.0, r_out=12.0, t_in=150.0, name="mixture ring",
                             dust=DustMix({"olivine_glass": 0.8, "forsterite": 0.2}, grain_size=1.5))))


@pytest.fixture
def kappa_path(tmp_path):
    path = tmp_path / "kappa_invented.txt"
    np.savetxt(path, [[1.0, 2000.0], [5.0, 1200.0], [10.0, 2600.0], [20.0, 700.0]])
    return path


def _app(scene, folder, data=None):
    return build_app(load_sample_data() if data is None else data, scene, workdir=folder)


def test_a_session_of_table_power_law_and_photosphere_round_trips_equal(kappa_path, tmp_path):
    scene = _scene(kappa_path)
    a = _app(scene, tmp_path)
    st = a.state
    st.pin("as opened")
    st.update_ring(1, t_in=330.0)
    st.set_filters(bands=("N",), baseline_range=(10.0, 90.0))
    st.set_view(curve_position_angle=33.0, log_vis2=True, t_sub=1400.0)
    st.set_fit_setup({"free": ["rings.0.t_in"], "bounds": {"rings.0.t_in": [1000.0, 1900.0]},
                      "priors": {"rings.0.t_in": {"kind": "normal", "mean": 1450.0, "sigma": 50.0}},
                      "weights": {"spectrum": 2.0}})
    st.set_bandpass(1, False)
    a.flush()
    path = write_session(tmp_path / "s.json", session_of_state(st))
    doc = read_session(path)
    assert doc["schema"] == SESSION_SCHEMA
    contents = decode_session(doc, base_dir=tmp_path)
    assert_scenes_equal(contents.scene, st.scene)
    assert [n for n, _ in contents.pins] == ["as opened"]
    assert_scenes_equal(contents.pins[0][1], scene, "pin")
    assert (contents.bands, contents.instruments, contents.baseline_range) == (("N",), (), (10.0, 90.0))
    assert contents.view == {k: getattr(st, k) for k in VIEW_SETTINGS}
    assert contents.fit_setup == st.fit_setup
    off = tuple(d.source for d in st.data_sets if d.kind == "oifits" and not d.bandpass)
    assert len(off) == 1 and contents.bandpass_off == off

    b = _app(Scene(distance=100.0), tmp_path, data=[])
    assert b.state.restore_session(contents) == []
    b.flush()
    assert_scenes_equal(b.state.scene, st.scene)
    assert_scenes_equal(b.state.pins[0]["scene"], st.pins[0]["scene"], "pin")
    assert (b.state.band_filter, b.state.baseline_range) == (("N",), (10.0, 90.0))
    assert (b.state.curve_position_angle, b.state.log_vis2, b.state.t_sub) == (33.0, True, 1400.0)
    assert b.state.fit_setup == st.fit_setup
    assert [d.bandpass for d in b.state.data_sets if d.kind == "oifits"] == [True, False, True]
    assert b.judgement().total == pytest.approx(a.judgement().total, rel=1e-12)


def test_the_session_box_restores_through_the_state(kappa_path, tmp_path):
    a = _app(_scene(kappa_path), tmp_path)
    box = a.session_box
    box.path.value = "mine.json"
    assert box.save() and (tmp_path / "mine.json").exists()
    b = _app(Scene(distance=100.0), tmp_path, data=[])
    b.session_box.path.value = "mine.json"
    assert b.session_box.restore(), b.state.message
    assert_scenes_equal(b.state.scene, a.state.scene)
    assert "session restored from" in b.state.message


def test_a_session_of_the_first_layout_still_reads(tmp_path):
    # Written by the first layout (a plain scene form, mixtures only); kept readable.
    old = {"schema": "diskexplorer-session/1",
           "scene": {"distance": 160.0, "inclination": 40.0, "position_angle": 120.0, "extended_fraction": 0.0,
                     "star": {"t_eff": 7900.0, "radius": 2.4, "mass": 2.0, "uniform_disk": True},
                     "rings": [{"r_in": 0.35, "r_out": 1.0, "t_in": 1480.0, "q": 0.55, "sigma_in": 0.002, "p": 1.0,
                                "c1": 0.0, "s1": 0.0, "name": "inner", "enabled": True,
                                "dust": {"kind": "mixture", "fractions": [["olivine_glass", 0.7], ["iron", 0.3]],
                                         "grain_size": 1.5, "shape": "dhs"}}]},
           "data": {"oifits": [str(sample_data_dir() / SAMPLE_FILES["oifits"][0])]},
           "filters": {"bands": ["K"], "instruments": [], "baseline_range_m": [0.0, None]},
           "view": {"log_vis2": True}, "pins": [], "fit_setup": {}}
    path = tmp_path / "old.json"
    path.write_text(json.dumps(old))
    contents = decode_session(read_session(path))
    ring = contents.scene.rings[0]
    assert ring.name == "inner" and dict(ring.dust.fractions) == {"olivine_glass": 0.7, "iron": 0.3}
    assert contents.bands == ("K",) and contents.baseline_range == (0.0, math.inf)
    assert contents.view == {"log_vis2": True}


@pytest.mark.parametrize("text, fragment", [
    ("{not json", "line 1, column 2: not valid JSON"),
    (json.dumps({"schema": "diskexplorer.start/1"}), "schema 'diskexplorer.start/1' is not one of"),
    (json.dumps([1, 2]), "schema None"),
])
def test_a_file_that_is_not_a_session_is_refused_by_name(tmp_path, text, fragment):
    path = tmp_path / "broken.json"
    path.write_text(text)
    with pytest.raises(DiskExplorerError, match=fragment) as info:
        read_session(path)
    assert "broken.json" in str(info.value)


def test_a_relative_kappa_table_path_is_stored_from_the_session_folder(tmp_path, monkeypatch):
    # The table is read by a path relative to the working folder; the session lives
    # elsewhere and is read from a third folder.
    work = tmp_path / "work"
    (work / "tables").mkdir(parents=True)
    np.savetxt(work / "tables" / "k.txt", [[1.0, 2000.0], [5.0, 1200.0], [10.0, 2600.0], [20.0, 700.0]])
    monkeypatch.chdir(work)
    scene = Scene(distance=150.0, rings=(Ring(r_in=0.5, r_out=2.0, t_in=900.0, name="table",
                                              dust=KappaTable.from_file(os.path.join("tables", "k.txt"))),))
    folder = tmp_path / "sessions"
    folder.mkdir()
    doc = session_document(scene, pins=[("pinned", scene)])
    path = write_session(folder / "s.json", doc)
    assert doc["scene"]["rings"][0]["dust"]["path"] == os.path.join("tables", "k.txt")   # not modified
    stored = read_session(path)
    expected = os.path.join("..", "work", "tables", "k.txt")
    assert stored["scene"]["rings"][0]["dust"]["path"] == stored["pins"][0]["scene"]["rings"][0]["dust"]["path"] \
        == expected
    monkeypatch.chdir(tmp_path)
    contents = decode_session(stored, base_dir=folder)
    assert_scenes_equal(contents.scene, scene)
    assert_scenes_equal(contents.pins[0][1], scene, "pin")


def _edit_kind(doc):
    doc["scene"]["rings"][0]["dust"]["kind"] = "magic"


def _drop_pin_rings(doc):
    del doc["pins"][0]["scene"]["rings"]


def _negative_distance(doc):
    doc["scene"]["distance"]["value"] = -5.0


def _unsupported_legacy_dust(doc):
    doc["schema"] = "diskexplorer-session/1"
    doc["scene"] = {"distance": 140.0, "inclination": 30.0, "position_angle": 0.0, "star": None,
                    "rings": [{"r_in": 0.3, "r_out": 1.0, "dust": {"kind": "unsupported", "label": "my table"}}]}


# (edit of a good document, expected message: the document, the entry's path, what was expected)
BAD_ENTRIES = [
    (_edit_kind, r"^session s\.json: scene: rings\.0\.dust\.kind: 'magic' is not one of 'mixture'"),
    (_drop_pin_rings, r"^session s\.json: pins\.0\.scene: missing field 'rings'"),
    (_negative_distance, r"^session s\.json: scene: distance: value -5 pc is outside the physically allowed range"),
    (_unsupported_legacy_dust,
     r"^session s\.json: scene: rings\.0\.dust: 'my table' was not saved by the first session layout"),
]


@pytest.mark.parametrize("edit, pattern", BAD_ENTRIES, ids=[e.__name__.strip("_") for e, _ in BAD_ENTRIES])
def test_a_bad_scene_entry_is_named_with_the_document(edit, pattern):
    scene = Scene(distance=140.0, rings=(Ring(r_in=0.3, r_out=1.0, t_in=1400.0,
                                              dust=DustMix({"olivine_glass": 1.0})),))
    doc = json.loads(json.dumps(session_document(scene, pins=[("pinned", scene)])))
    edit(doc)
    with pytest.raises(SeedError, match=pattern):
        decode_session(doc, where="session s.json")


def test_a_refused_restore_from_the_box_changes_nothing(tmp_path):
    a = _app(Scene(distance=100.0), tmp_path, data=[])
    (tmp_path / "bad.json").write_text(json.dumps({"schema": SESSION_SCHEMA, "scene": {"distance": "far"}}))
    before = a.state.scene
    a.session_box.path.value = "bad.json"
    assert not a.session_box.restore()
    assert a.state.scene is before and "session not restored" in a.state.message and "bad.json" in a.state.message
