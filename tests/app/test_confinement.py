"""A served page reads only its folders and saves only into its working folder; a notebook reads anything.

Whoever opens a served page reads and writes as the demo's owner. Its explorer is confined
(``ExplorerState.confine``, set by the served entry): typed paths outside the working folder
and the ``--data`` files and folders are refused with one message that tells nothing about
what is there, and saves cannot leave the working folder.
"""
import json

import pytest

from diskexplorer.app.serving.notebook_entry import explore_served
from diskexplorer.app.state.debounce import ManualScheduler
from diskexplorer.app.state.workdir import OUTSIDE, resolve_user_path, writable_user_path
from diskexplorer.errors import DiskExplorerError
from diskexplorer.fitting import export_start, write_start
from diskexplorer.sample import SAMPLE_FILES, copy_sample_data
from diskexplorer.testing import make_oifits
from explorer_helpers import make_app

SECRET = "SECRET-FIRST-LINE of a private file"


@pytest.fixture
def folders(tmp_path):
    """``(work, data, outside)``: the working folder, a --data folder, and a folder beside them."""
    work, data, outside = tmp_path / "work", tmp_path / "data", tmp_path / "outside"
    for folder in (work, data, outside):
        folder.mkdir()
    (outside / "secret.txt").write_text(SECRET + "\n1 2\n")
    (outside / "private").mkdir()
    (outside / "private" / "listing-would-show-this.fits").write_bytes(b"x")
    # Links inside the working folder that lead out of it.
    (work / "link_to_secret.txt").symlink_to(outside / "secret.txt")
    (work / "link_to_outside").symlink_to(outside, target_is_directory=True)
    make_oifits(data, "given_K.fits", band="K", seed=2)
    return work, data, outside


@pytest.fixture
def served(folders):
    """A served explorer: as the demo's notebook opens it, with --data naming the data folder."""
    work, data, _ = folders
    app = explore_served(environ={"DISKEXPLORER_WORKDIR": str(work), "DISKEXPLORER_DATA": str(data)},
                         scheduler=ManualScheduler(), jobs="sync")
    assert app.state.confined and app.state.read_folders == (str(data),)
    return app


def _outside_paths(folders):
    outside = folders[2]
    return [str(outside / "secret.txt"), "../outside/secret.txt", "link_to_secret.txt", "link_to_outside/secret.txt",
            str(outside / "private"), "link_to_outside", str(outside / "missing.fits"), "../outside/missing.fits",
            "~/anything.json", "/etc/passwd", "/etc/shadow", "/nonexistent/folder/"]


def test_paths_outside_are_refused_alike_whatever_is_there(folders):
    work, data, outside = folders
    answers = set()
    for typed in _outside_paths(folders):
        with pytest.raises(DiskExplorerError) as info:
            resolve_user_path(typed, work, confined=True, readable=[data])
        message = str(info.value)
        assert message == f"{typed}: {OUTSIDE}"
        answers.add(message.removeprefix(typed))
    # One answer for an existing file, a folder, a link and nothing at all.
    assert answers == {f": {OUTSIDE}"}
    # Inside: the working folder, the --data folder, a --data file itself; links followed.
    assert resolve_user_path("sub/new.json", work, confined=True) == work.resolve() / "sub" / "new.json"
    assert resolve_user_path(str(data / "given_K.fits"), work, confined=True, readable=[data]).name == "given_K.fits"
    only_file = data / "given_K.fits"
    assert resolve_user_path(str(only_file), work, confined=True, readable=[only_file]) == only_file.resolve()
    with pytest.raises(DiskExplorerError, match=OUTSIDE):
        resolve_user_path(str(data / "other.fits"), work, confined=True, readable=[only_file])
    # Not confined (a notebook): every path, as typed.
    assert resolve_user_path(str(outside / "secret.txt"), work) == outside / "secret.txt"


@pytest.mark.parametrize("typed", ["../escaped_session.json", "link_to_outside/escaped.json", "/tmp/escaped.json",
                                   "~/escaped.json", "data_link/escaped.json"])
def test_saves_cannot_leave_the_working_folder(folders, typed):
    work, data, _ = folders
    (work / "data_link").symlink_to(data, target_is_directory=True)
    with pytest.raises(DiskExplorerError, match="outside the working folder"):
        writable_user_path(typed, work, confined=True)
    assert writable_user_path("sub/../saved.json", work, confined=True) == work.resolve() / "saved.json"
    # A notebook user saves where they like.
    assert writable_user_path(typed, work) is not None


def _no_content(message, folders):
    """Nothing of the files outside, nor whether or what they are, is in ``message``."""
    assert SECRET not in message and "SECRET" not in message
    assert "listing-would-show-this" not in message
    assert "root:" not in message
    for word in ("exists", "no such", "not found", "is a folder", "directory", "first line"):
        assert word not in message.lower(), (word, message)


def test_a_served_page_reads_nothing_outside_and_says_nothing_about_it(served, folders):
    st = served.state
    before = [d.label for d in st.data_sets]
    for typed in _outside_paths(folders):
        assert not st.load_files([typed], add=True)
        assert st.message == f"not loaded: {typed}: {OUTSIDE}"
        _no_content(st.message, folders)
    assert [d.label for d in st.data_sets] == before == ["given_K.fits"]
    # Its own folders read as before.
    work, data, _ = folders
    copy_sample_data(work / "obs")
    assert st.load_files([f"obs/{SAMPLE_FILES['photometry']}"], add=True), st.message
    assert st.load_files([str(data)], add=True), st.message


def test_a_served_page_saves_only_into_its_folder(served, folders):
    work, _, outside = folders
    for name, box in (("session", served.session_box), ("start", served.start_page.save_box)):
        for typed in ("../escaped_session.json", str(outside / "escaped.json"), "link_to_outside/escaped.json"):
            box.path.value = typed
            assert not box.save()
            assert "outside the working folder" in served.state.message
        box.path.value = f"kept_{name}.json"
        assert box.save(), served.state.message
        assert (work / f"kept_{name}.json").is_file()
    assert sorted(p.name for p in outside.iterdir()) == ["private", "secret.txt"]
    assert not (work.parent / "escaped_session.json").exists()


def test_a_served_page_imports_and_restores_only_inside(served, folders):
    work, _, outside = folders
    st = served.state
    # Documents outside: refused before they are opened.
    write_start(outside / "start.json", export_start(st.scene))
    served.start_page.path.value = str(outside / "start.json")
    assert not served.start_page.import_start()
    assert f"{outside / 'start.json'}: {OUTSIDE}" in st.message
    served.session_box.path.value = "../outside/session.json"
    assert not served.session_box.restore()
    assert OUTSIDE in st.message
    # A document inside that names a κ table outside (absolute, relative, through a link).
    for given in (str(outside / "secret.txt"), "../outside/secret.txt", "link_to_secret.txt", "/etc/passwd"):
        doc = export_start(st.scene)
        doc["scene"]["rings"][0]["dust"] = {"kind": "kappa_table", "path": given}
        (work / "table_start.json").write_text(json.dumps(doc))
        served.start_page.path.value = "table_start.json"
        assert not served.start_page.import_start()
        assert OUTSIDE in st.message
        _no_content(st.message, folders)
    # A session inside whose data are outside: those are not read, and not described.
    served.session_box.path.value = "mine.json"
    assert served.session_box.save()
    doc = json.loads((work / "mine.json").read_text())
    doc["data"] = {"oifits": [str(outside / "private")], "photometry": str(outside / "secret.txt")}
    (work / "mine.json").write_text(json.dumps(doc))
    assert served.session_box.restore()
    assert st.data_sets == () and st.message.count(OUTSIDE) == 2
    _no_content(st.message, folders)


def test_a_served_page_adds_species_only_from_inside(served, folders):
    _, _, outside = folders
    form = served.data_page.species_form
    form.name.value, form.source_kind.value, form.path.value = "outside_dust", "kappa", str(outside / "secret.txt")
    assert not form.add()
    assert OUTSIDE in served.state.message
    _no_content(served.state.message, folders)


def test_uploads_are_read_by_a_served_page(served):
    from diskexplorer.sample import sample_data_dir

    content = (sample_data_dir() / SAMPLE_FILES["photometry"]).read_bytes()
    assert served.data_page.load_uploaded([{"name": "uploaded.csv", "content": content}]), served.state.message


def test_a_notebook_user_keeps_full_access(material, folders):
    work, _, outside = folders
    app = make_app(material, workdir=work)
    assert not app.state.confined
    path = make_oifits(outside, "elsewhere_K.fits", band="K", seed=3)
    assert app.state.load_files([str(path)], add=True), app.state.message
    app.session_box.path.value = str(outside / "saved.json")
    assert app.session_box.save()
    assert (outside / "saved.json").is_file()
    app.session_box.path.value = "link_to_outside/saved_through_link.json"
    assert app.session_box.save()
    assert (outside / "saved_through_link.json").is_file()


def test_a_folder_inside_does_not_lead_out_through_its_links(served, folders):
    # A folder the page may read holds a link to a data file outside: the link is skipped
    # before it is opened, and nothing says what it points to.
    work, _, outside = folders
    make_oifits(outside, "outside_K.fits", band="K", seed=5)
    (work / "night").mkdir()
    make_oifits(work / "night", "inside_K.fits", band="K", seed=6)
    (work / "night" / "link_K.fits").symlink_to(outside / "outside_K.fits")
    st = served.state
    assert st.load_files(["night"], add=True), st.message
    labels = [d.label for d in st.data_sets]
    assert "inside_K.fits" in labels and "link_K.fits" not in labels and "outside_K.fits" not in labels
    assert "link_K.fits: skipped: not readable here" in st.message or "not readable here" in st.message
    _no_content(st.message, folders)
    assert "outside_K" not in st.message
