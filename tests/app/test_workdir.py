"""Files typed into the app's panels go where the user works, never into the package."""
import os
from pathlib import Path

import pytest

import diskexplorer
from diskexplorer.app.state.debounce import ManualScheduler
from diskexplorer.app.state.workdir import resolve_user_path, working_folder, writable_user_path
from diskexplorer.errors import DiskExplorerError
from diskexplorer.fitting import read_start
from explorer_helpers import build_app, make_app

PACKAGE = Path(diskexplorer.__file__).resolve().parent


def test_relative_names_resolve_against_the_working_folder(tmp_path):
    assert resolve_user_path("a/b.json", tmp_path) == tmp_path / "a" / "b.json"
    assert resolve_user_path(str(tmp_path / "c.json"), "/elsewhere") == tmp_path / "c.json"
    assert resolve_user_path("~/x.json", tmp_path) == Path.home() / "x.json"
    assert working_folder(tmp_path) == tmp_path.resolve()
    with pytest.raises(DiskExplorerError, match="no such folder"):
        working_folder(tmp_path / "missing")


def test_the_package_folder_is_never_a_working_folder_nor_a_target(tmp_path, monkeypatch):
    monkeypatch.chdir(PACKAGE / "app")  # where voila starts a kernel for the package's notebook
    assert working_folder() == Path.home().resolve()
    with pytest.raises(DiskExplorerError, match="inside the installed diskexplorer package"):
        writable_user_path(str(PACKAGE / "app" / "start.json"), tmp_path)
    with pytest.raises(DiskExplorerError, match="inside the installed diskexplorer package"):
        writable_user_path("../../diskexplorer/app/x.json", PACKAGE / "app" / "figures")


def test_saves_land_in_the_working_folder_with_the_full_path_shown(material, tmp_path, monkeypatch):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)  # the process's folder is not the user's working folder
    work = tmp_path / "work"
    work.mkdir()
    app = make_app(material, workdir=work)
    assert app.state.workdir == str(work.resolve())

    panel = app.start_page
    panel.path.value = "diskexplorer-start.json"
    assert panel.save()
    target = work.resolve() / "diskexplorer-start.json"
    assert target.is_file() and not (elsewhere / "diskexplorer-start.json").exists()
    assert str(target) in app.state.message
    assert read_start(str(target)).scene is not None
    # an existing file asks first and the question names the full path
    assert not panel.save()
    assert str(target) in panel.confirm.text.value
    # importing by the same relative name reads the file in the working folder
    assert panel.import_start()
    assert str(target) in app.state.message

    session = app.session_box
    session.path.value = "sub/../my-session.json"
    assert session.save()
    assert (work / "my-session.json").is_file()
    assert str(work.resolve() / "my-session.json") in app.state.message
    assert session.restore()
    assert str(work.resolve() / "my-session.json") in app.state.message


def test_a_save_into_the_package_is_refused_and_nothing_is_written(material, tmp_path):
    app = make_app(material, workdir=tmp_path)
    before = sorted(os.listdir(PACKAGE / "app"))
    app.start_page.path.value = str(PACKAGE / "app" / "start.json")
    assert not app.start_page.save()
    assert "inside the installed diskexplorer package" in app.state.message
    app.session_box.path.value = str(PACKAGE / "session.json")
    assert not app.session_box.save()
    assert "inside the installed diskexplorer package" in app.state.message
    assert sorted(os.listdir(PACKAGE / "app")) == before
    assert not (PACKAGE / "session.json").exists()


def test_loads_and_species_files_resolve_against_the_working_folder(material, tmp_path, monkeypatch):
    import numpy as np

    from diskexplorer.dust import unregister_species
    from diskexplorer.sample import SAMPLE_FILES, copy_sample_data

    monkeypatch.chdir(tmp_path)
    work = tmp_path / "work"
    copy_sample_data(work / "obs")
    app = make_app(material, workdir=work)
    assert app.state.load_files([f"obs/{SAMPLE_FILES['photometry']}"], "auto")
    assert str(work.resolve() / "obs" / SAMPLE_FILES["photometry"]) in str(app.state.data_sources)
    lam = np.geomspace(0.2, 200.0, 40)
    np.savetxt(work / "grey.txt", np.column_stack([lam, np.full(lam.size, 30.0)]),
               header="wavelength_um kappa_cm2_g")
    form = app.data_page.species_form
    form.name.value, form.source_kind.value, form.path.value = "grey_workdir_dust", "kappa", "grey.txt"
    try:
        assert form.add(), app.state.message
        assert str(work.resolve() / "grey.txt") in app.state.message
    finally:
        unregister_species("grey_workdir_dust")


def test_served_app_with_bad_data_opens_without_it_and_says_why(tmp_path):
    from diskexplorer.app.serving.notebook_entry import explore_served

    (tmp_path / "broken.fits").write_bytes(b"SIMPLE  =                    T" + b" " * 50)
    app = explore_served(environ={"DISKEXPLORER_WORKDIR": str(tmp_path),
                                  "DISKEXPLORER_DATA": str(tmp_path / "broken.fits")},
                         scheduler=ManualScheduler(), jobs="sync")
    assert "broken.fits" in app.state.message
    assert app.state.observations is None and app.state.photometry is None
    assert app.state.workdir == str(tmp_path.resolve())


def test_restoring_a_session_leaves_exactly_its_data(tmp_path):
    from diskexplorer.sample import SAMPLE_FILES, copy_sample_data

    copy_sample_data(tmp_path / "obs")
    app = build_app(tmp_path / "obs", workdir=tmp_path)
    assert {d.kind for d in app.state.data_sets} == {"oifits", "photometry", "spectrum"}
    # a session that names only one OIFITS file and the photometry
    app.state.set_data_sets([d for d in app.state.data_sets
                             if d.label in (SAMPLE_FILES["oifits"][0], SAMPLE_FILES["photometry"])])
    panel = app.session_box
    panel.path.value = "partial.json"
    assert panel.save()
    assert app.state.photometry is not None
    # the user then loads everything again ...
    assert app.state.load_files(["obs"], "auto")
    assert app.state.spectrum is not None
    # ... and restoring the session brings back exactly the session's data
    assert panel.restore(), app.state.message
    assert sorted(d.label for d in app.state.data_sets) == sorted([SAMPLE_FILES["oifits"][0],
                                                                   SAMPLE_FILES["photometry"]])
    assert app.state.spectrum is None
    app.flush()
    assert "spectrum" not in app.judgement().chi2
