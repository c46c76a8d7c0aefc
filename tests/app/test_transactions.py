"""Restoring a session, importing a starting point, loading and removing data: all or nothing.

Each refused action must leave the whole state as it was (scene, data sets, filters, target,
view, pins, fit set-up), change no trait but the message, and say why in the message,
naming the file. Data that the explorer cannot compute are refused by name before they are
taken, so a load either works or changes nothing.
"""
import json

import numpy as np
import pytest

from diskexplorer.app.state import frames
from diskexplorer.app.state.sessions import VIEW_SETTINGS, SessionContents, session_of_state, write_session
from diskexplorer.data import write_oifits
from diskexplorer.errors import DiskExplorerError
from diskexplorer.fitting import export_start, write_start
from diskexplorer.fitting.scene_codec import scene_entries
from diskexplorer.testing import make_oifits, make_observations
from explorer_helpers import make_app

#: Files whose data the patched frame refuses to compute (see ``poisoned``).
POISON = "poison"


def snapshot(state):
    """Everything a refused action must leave as it was, in comparable form."""
    return {
        "scene": json.dumps(scene_entries(state.scene), sort_keys=True),
        "data_sets": [(id(d), d.kind, d.label, d.source, d.bandpass) for d in state.data_sets],
        "held": [id(state.observations), id(state.photometry), id(state.spectrum)],
        "data_sources": json.dumps(state.data_sources, sort_keys=True),
        "filters": (state.band_filter, state.instrument_filter, state.baseline_range, state.target),
        "view": {k: getattr(state, k) for k in VIEW_SETTINGS},
        "pins": [(p["name"], json.dumps(scene_entries(p["scene"]), sort_keys=True)) for p in state.pins],
        "fit_setup": json.dumps(state.fit_setup, sort_keys=True),
    }


class Watch:
    """The names of the traits that changed (the message aside) while it watched."""

    def __init__(self, state):
        self.state, self.names = state, []
        state.observe(self._seen)

    def _seen(self, change):
        if change["name"] != "message":
            self.names.append(change["name"])

    def close(self):
        self.state.unobserve(self._seen)
        return self.names


def assert_refused(app, action, *fragments):
    """Run ``action``; it must fail (False or a DiskExplorerError), change nothing and say why."""
    before = snapshot(app.state)
    watch = Watch(app.state)
    try:
        outcome = action()
    except DiskExplorerError:
        outcome = False
    changed = watch.close()
    assert outcome is False
    assert changed == [], f"a refused action changed {changed}"
    assert snapshot(app.state) == before
    for fragment in fragments:
        assert fragment in app.state.message, (fragment, app.state.message)
    return app.state.message


@pytest.fixture
def app(material, tmp_path):
    """An explorer with an OIFITS file, a filter, a pin and a fit set-up: a state worth keeping."""
    a = make_app(material, workdir=tmp_path)
    st = a.state
    assert st.load_files([str(make_oifits(tmp_path, "kept_K.fits", band="K", seed=4))], add=True)
    st.set_filters(baseline_range=(0.0, 150.0))
    st.update_scene(inclination=33.0)
    st.pin("kept")
    st.set_view(log_vis2=True, t_sub=1450.0)
    st.set_fit_setup({"free": ["rings.0.t_in"], "weights": {"vis2": 2.0}})
    a.flush()
    return a


@pytest.fixture
def poisoned(monkeypatch):
    """Make the frame of any data from a file named ``poison*`` fail as broken data do in the engine."""
    real = frames.make_frame

    def make_frame(scene, view, position_angle):
        files = view.observations.files if view.observations is not None else ()
        if any(POISON in str(f) for f in files):
            raise ValueError("Number of samples, -9223372036854775807, must be non-negative")
        return real(scene, view, position_angle)

    monkeypatch.setattr(frames, "make_frame", make_frame)


# --------------------------------------------------------------------------- sessions
def _good_session(app, tmp_path):
    path = write_session(tmp_path / "good.json", session_of_state(app.state))
    return json.loads(path.read_text())


def _edit(path, value):
    def edit(doc):
        node = doc
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    return edit


BAD_SESSIONS = {
    # Values the first restore assigned after it had already replaced the data.
    "view of the wrong type": _edit(["view", "log_vis2"], "yes"),
    "negative wavelength of the image": _edit(["view", "image_wavelength"], -2.0),
    "pins as an object": _edit(["pins"], {"a": 1}),
    "data as a list": _edit(["data"], [1]),
    "oifits as a number": _edit(["data", "oifits"], 5),
    "filters as a list": _edit(["filters"], [1]),
    "bands as a number": _edit(["filters", "bands"], 5),
    "scene as a list": _edit(["scene"], []),
    "rings as a string": _edit(["scene", "rings"], "abc"),
    "fit set-up as a list": _edit(["fit_setup"], [1]),
    "baseline range reversed": _edit(["filters", "baseline_range_m"], [90.0, 10.0]),
}


@pytest.mark.parametrize("name", list(BAD_SESSIONS))
def test_a_refused_session_restore_changes_nothing(app, tmp_path, name):
    doc = _good_session(app, tmp_path)
    BAD_SESSIONS[name](doc)
    (tmp_path / "bad.json").write_text(json.dumps(doc))
    box = app.session_box
    box.path.value = "bad.json"
    assert_refused(app, box.restore, "session not restored", "bad.json")


@pytest.mark.parametrize("text", ["[" * 100_000 + "]" * 100_000,
                                  '{"schema": "diskexplorer-session/2", "scene": {"distance": ' + "9" * 5000 + "}}",
                                  "{not json"],
                         ids=["deeply nested", "5000 digits", "not json"])
def test_a_session_file_that_is_not_json_within_bounds_changes_nothing(app, tmp_path, text):
    (tmp_path / "bad.json").write_text(text)
    app.session_box.path.value = "bad.json"
    assert_refused(app, app.session_box.restore, "session not restored", "bad.json")


@pytest.mark.parametrize("bad", [{"baseline_range": ("near", "far")}, {"view": {"log_vis2": "yes"}}],
                         ids=["baseline range of words", "view of the wrong type"])
def test_a_session_the_state_refuses_midway_leaves_the_data(app, material, bad):
    # The first restore dropped the data before it met a bad value (here: contents built
    # in code, not decoded from a file) and left the explorer without them.
    contents = SessionContents(scene=material[0], data={"oifits": [], "photometry": None, "spectrum": None},
                               **bad)
    msg = assert_refused(app, lambda: app.state.restore_session(contents, source="s.json"), "session not restored")
    assert "s.json" in msg


def test_a_session_whose_data_cannot_be_computed_is_refused_whole(app, tmp_path, poisoned):
    poison = make_oifits(tmp_path, f"{POISON}_K.fits", band="K", seed=5)
    doc = _good_session(app, tmp_path)
    doc["data"]["oifits"] = [str(poison)]
    (tmp_path / "poison_session.json").write_text(json.dumps(doc))
    app.session_box.path.value = "poison_session.json"
    msg = assert_refused(app, app.session_box.restore, "session not restored", "poison_session.json",
                         "cannot be computed")
    assert "Number of samples" in msg
    # The explorer still computes.
    app.state.update_ring(0, t_in=1300.0)
    assert np.isfinite(app.judgement().total)


def test_a_good_session_is_still_restored_whole(app, tmp_path):
    doc = _good_session(app, tmp_path)
    app.state.drop_data(None)
    app.state.set_filters(baseline_range=(0.0, float("inf")))
    app.state.unpin(0)
    (tmp_path / "good.json").write_text(json.dumps(doc))
    app.session_box.path.value = "good.json"
    assert app.session_box.restore(), app.state.message
    assert [d.label for d in app.state.data_sets] == ["kept_K.fits"]
    assert app.state.baseline_range == (0.0, 150.0) and [p["name"] for p in app.state.pins] == ["kept"]


# --------------------------------------------------------------------------- data
def test_a_load_that_cannot_be_computed_is_refused_by_name(app, tmp_path, poisoned):
    poison = make_oifits(tmp_path, f"{POISON}_H.fits", band="H", seed=6)
    good = make_oifits(tmp_path, "also_K.fits", band="K", seed=7)
    msg = assert_refused(app, lambda: app.state.load_files([str(good), str(poison)], add=True),
                         "not loaded", str(poison), "cannot be computed")
    assert "also_K.fits" not in msg    # the file that breaks it is named, not its company
    assert_refused(app, lambda: app.state.load_files([str(poison)], add=False), str(poison))
    # Opening the explorer with such data refuses them by name too.
    from diskexplorer.app import explore
    from diskexplorer.app.state.debounce import ManualScheduler

    with pytest.raises(DiskExplorerError, match=f"{POISON}_H.fits: cannot be computed"):
        explore(data=[str(poison)], scheduler=ManualScheduler(), jobs="sync", workdir=tmp_path)


@pytest.mark.parametrize("typed", ["missing.fits", "notes.txt", "folder_without_data"])
def test_a_load_that_cannot_be_read_changes_nothing(app, tmp_path, typed):
    (tmp_path / "notes.txt").write_text("a note, not a table\n")
    (tmp_path / "folder_without_data").mkdir()
    assert_refused(app, lambda: app.state.load_files([typed], add=True), "not loaded", typed)


@pytest.mark.parametrize("column, value", [("vis2", np.nan), ("vis2", 1e300), ("vis2_err", 0.0), ("u", np.inf)])
def test_damaged_values_either_load_and_compute_or_change_nothing(app, tmp_path, column, value):
    obs = make_observations(band="K", seed=9)
    obs.vis2[column].values.flat[:7] = value
    path = tmp_path / f"damaged_{column}.fits"
    write_oifits(path, obs)
    before = snapshot(app.state)
    if app.state.load_files([str(path)], add=True):
        assert np.isfinite(app.judgement().total)
    else:
        assert snapshot(app.state) == before and path.name in app.state.message


def test_a_removal_that_cannot_be_computed_changes_nothing(app, tmp_path, monkeypatch):
    real = frames.make_frame

    def no_empty_views(scene, view, position_angle):
        if view.observations is None:
            raise ValueError("nothing to draw")
        return real(scene, view, position_angle)

    monkeypatch.setattr(frames, "make_frame", no_empty_views)
    assert_refused(app, lambda: app.state.drop_data(None), "not removed", "nothing to draw")
    oifits = [k for k, d in enumerate(app.state.data_sets) if d.kind == "oifits"]
    for index in oifits[1:]:
        assert app.state.drop_data(index)
    assert_refused(app, lambda: app.state.drop_data(oifits[0]), "not removed")


# --------------------------------------------------------------------------- starting points
BAD_STARTS = {
    "deeply nested": "[" * 100_000 + "]" * 100_000,
    "scene as a list": json.dumps({"schema": "diskexplorer.start/1", "scene": []}),
    "5000 digits": '{"schema": "diskexplorer.start/1", "scene": {"distance": {"value": ' + "7" * 5000
                   + ', "unit": "pc"}}}',
    "not json": "{nope",
}


@pytest.mark.parametrize("name", list(BAD_STARTS))
def test_a_refused_import_changes_nothing(app, tmp_path, name):
    (tmp_path / "start.json").write_text(BAD_STARTS[name])
    panel = app.start_page
    panel.path.value = "start.json"
    assert_refused(app, panel.import_start, "starting point not imported", "start.json")


def test_an_import_whose_scene_cannot_be_computed_changes_nothing(app, tmp_path, monkeypatch):
    real = frames.make_frame
    scene = app.state.scene.replace(distance=321.0)
    write_start(tmp_path / "far.json", export_start(scene, free=["distance"]))

    def refuse_far(s, view, position_angle):
        if s.distance == 321.0:
            raise FloatingPointError("overflow in the engine")
        return real(s, view, position_angle)

    monkeypatch.setattr(frames, "make_frame", refuse_far)
    app.start_page.path.value = "far.json"
    assert_refused(app, app.start_page.import_start, "starting point not imported", "overflow in the engine")


def test_an_imported_species_is_offered_by_the_mixture_editor(app, tmp_path):
    from diskexplorer.dust import DustMix, register_species, unregister_species

    np.savetxt(tmp_path / "k.txt", np.column_stack([np.geomspace(0.3, 200.0, 30), np.full(30, 700.0)]))
    editor = app.ring_deck.cards[0].mixture          # built before the species exists
    register_species("imported_grey_dust", kappa=tmp_path / "k.txt")
    try:
        scene = app.state.scene.with_ring(0, dust=DustMix({"imported_grey_dust": 0.4, "olivine_glass": 0.6}))
        write_start(tmp_path / "grey.json", export_start(scene))
    finally:
        unregister_species("imported_grey_dust")
    app.start_page.path.value = "grey.json"
    try:
        assert app.start_page.import_start(), app.state.message
        app.flush()
        assert editor.fractions["imported_grey_dust"] == pytest.approx(0.4)
        assert np.isfinite(app.judgement().total)
    finally:
        unregister_species("imported_grey_dust")
