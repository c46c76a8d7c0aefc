"""Starting points and sessions read the same wherever and by whichever process they are read.

κ tables are stored by a path relative to the document (or absolute), re-expressed when a
document is written into another folder; species registered in this process travel inside
the document (their κ table, or their n, k with density), so a fresh process started in
another folder, where a formal fit runs, judges the document to the same χ², bit for bit.
All optical constants and tables here are invented.
"""
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from diskexplorer import KappaTable, Ring, Scene, SeedError, Star
from diskexplorer.dust import DustMix, register_species, unregister_species, user_species
from diskexplorer.fitting import export_start, read_start, write_start
from diskexplorer.fitting.session_document import decode_session, read_session, session_document, write_session
from diskexplorer.testing import assert_scenes_equal, make_oifits

TABLE_SPECIES = "invented_table_dust"
NK_SPECIES = "invented_nk_dust"


@pytest.fixture
def work(tmp_path, monkeypatch):
    """A working folder (the current one) with a κ table under ``tables/`` and data under ``obs/``."""
    folder = tmp_path / "work"
    (folder / "tables").mkdir(parents=True)
    (folder / "obs").mkdir()
    lam = np.geomspace(0.3, 200.0, 60)
    np.savetxt(folder / "tables" / "ring_kappa.txt",
               np.column_stack([lam, 900.0 * (lam / 10.0) ** -1.1 + 400.0 * np.exp(-((lam - 10.5) / 1.8) ** 2)]),
               header="wavelength_um kappa_cm2_g (invented)")
    np.savetxt(folder / "tables" / "species_kappa.txt",
               np.column_stack([lam, 1500.0 * (lam / 10.0) ** -0.9]), header="wavelength_um kappa_cm2_g (invented)")
    nk = np.geomspace(0.5, 60.0, 80)
    np.savetxt(folder / "tables" / "species.nk",
               np.column_stack([nk, 1.55 + 0.15 * np.sin(nk / 7.0), 0.02 + 0.9 * np.exp(-((nk - 9.8) / 1.6) ** 2)]),
               header="wavelength_um n k (invented)")
    make_oifits(folder / "obs", "night_K.fits", band="K", seed=11)
    make_oifits(folder / "obs", "night_N.fits", band="N", seed=12)
    monkeypatch.chdir(folder)
    yield folder
    monkeypatch.chdir(tmp_path)


@pytest.fixture
def species(work):
    """Two species registered in this process: one from a κ table, one from n, k and a density."""
    register_species(TABLE_SPECIES, kappa="tables/species_kappa.txt", source="invented table")
    register_species(NK_SPECIES, nk="tables/species.nk", density=3.1, source="invented n, k", f_max=0.7)
    yield
    unregister_species(TABLE_SPECIES)
    unregister_species(NK_SPECIES)


def _scene():
    """A scene using a relative κ-table path and both registered species."""
    return Scene(distance=150.0, inclination=35.0, position_angle=20.0, star=Star(7600.0, 2.1, mass=2.0), rings=(
        Ring(r_in=0.3, r_out=0.8, t_in=1450.0, name="table ring", dust=KappaTable.from_file("tables/ring_kappa.txt")),
        Ring(r_in=1.0, r_out=3.0, t_in=700.0, name="species ring",
             dust=DustMix({TABLE_SPECIES: 0.4, NK_SPECIES: 0.35, "olivine_glass": 0.25}, grain_size=0.1)),
        Ring(r_in=4.0, r_out=9.0, t_in=260.0, name="cde ring", dust=DustMix({(NK_SPECIES, None, "cde"): 1.0}))))


def _document():
    return export_start(_scene(), free=["rings.1.t_in"],
                        data={"oifits": [os.path.abspath("obs/night_K.fits"), os.path.abspath("obs/night_N.fits")]})


def test_a_relative_kappa_table_written_into_another_folder_still_resolves(species, work, tmp_path, monkeypatch):
    doc = _document()
    assert doc["scene"]["rings"][0]["dust"]["path"] == os.path.join("tables", "ring_kappa.txt")
    (tmp_path / "docs").mkdir()
    path = write_start(tmp_path / "docs" / "start.json", doc)
    stored = json.loads(Path(path).read_text())["scene"]["rings"][0]["dust"]["path"]
    assert stored == os.path.join("..", "work", "tables", "ring_kappa.txt")
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    start = read_start(path)
    assert start.scene.rings[0].dust.source == str(work / "tables" / "ring_kappa.txt")
    # A document read from a file and written into a third folder still leads to the table.
    (tmp_path / "third").mkdir()
    again = read_start(write_start(tmp_path / "third" / "moved.json", start.document))
    np.testing.assert_array_equal(again.scene.rings[0].dust.values, start.scene.rings[0].dust.values)
    moved = json.loads((tmp_path / "third" / "moved.json").read_text())["scene"]["rings"][0]["dust"]["path"]
    assert os.path.normpath(os.path.join(tmp_path / "third", moved)) == str(work / "tables" / "ring_kappa.txt")


def test_registered_species_are_written_into_the_document(species):
    doc = _document()
    written = doc["scene"]["species"]
    assert set(written) == {TABLE_SPECIES, NK_SPECIES}    # built-in species are not written
    assert written[TABLE_SPECIES]["kind"] == "kappa_table" and len(written[TABLE_SPECIES]["kappa"]) == 60
    nk = written[NK_SPECIES]
    assert nk["kind"] == "optical_constants" and nk["density"] == {"value": 3.1, "unit": "g / cm3"}
    assert nk["f_max"] == 0.7 and len(nk["constants"]) == 1 and len(nk["constants"][0]["k"]) == 80
    assert "species" not in export_start(Scene(rings=(Ring(dust=DustMix({"olivine_glass": 1.0})),)))["scene"]


_JUDGE = textwrap.dedent("""
    import json, sys
    from diskexplorer.dust import user_species
    from diskexplorer.fitting import read_start
    assert not user_species(), "a fresh process has no registered species"
    start = read_start(sys.argv[1])
    result = start.comparison().compare(start.scene)
    print(json.dumps({"total": repr(result.total), "chi2": {k: repr(v) for k, v in result.chi2.items()},
                      "species": sorted(user_species())}))
""")


def _judged_in_a_fresh_process(path, cwd):
    env = {k: v for k, v in os.environ.items() if not k.startswith("DISKEXPLORER_")}
    proc = subprocess.run([sys.executable, "-c", _JUDGE, str(path)], cwd=str(cwd), capture_output=True, text=True,
                          timeout=300, env=env, check=False)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout.strip().splitlines()[-1])


def test_a_fresh_process_in_another_folder_judges_the_document_identically(species, work, tmp_path):
    (tmp_path / "docs").mkdir()
    path = write_start(tmp_path / "docs" / "start.json", _document())
    start = read_start(path)
    here = start.comparison().compare(start.scene)
    assert np.isfinite(here.total)
    other = tmp_path / "other"
    other.mkdir()
    there = _judged_in_a_fresh_process(path, other)
    assert there["species"] == sorted([NK_SPECIES, TABLE_SPECIES])
    assert there["total"] == repr(here.total)
    assert there["chi2"] == {k: repr(v) for k, v in here.chi2.items()}


def test_a_session_keeps_registered_species_and_relative_tables(species, work, tmp_path, monkeypatch):
    scene = _scene()
    (tmp_path / "sessions").mkdir()
    path = write_session(tmp_path / "sessions" / "s.json", session_document(scene, pins=[("pinned", scene)]))
    stored = read_session(path)
    assert set(stored["scene"]["species"]) == set(stored["pins"][0]["scene"]["species"]) == {TABLE_SPECIES, NK_SPECIES}
    unregister_species(TABLE_SPECIES)
    unregister_species(NK_SPECIES)
    monkeypatch.chdir(tmp_path)
    contents = decode_session(stored, base_dir=path.parent)
    assert set(user_species()) >= {TABLE_SPECIES, NK_SPECIES}
    mixed = contents.scene.rings[1].dust
    np.testing.assert_array_equal(mixed.kappa([2.2, 10.0, 30.0]), scene.rings[1].dust.kappa([2.2, 10.0, 30.0]))
    assert_scenes_equal(contents.scene.replace(rings=contents.scene.rings[1:]), scene.replace(rings=scene.rings[1:]))


def test_a_species_registered_here_with_other_data_is_not_overwritten(species, work):
    doc = json.loads(json.dumps(_document()))
    doc["scene"]["species"][TABLE_SPECIES]["kappa"][0] *= 1.5
    before = user_species()[TABLE_SPECIES]
    with pytest.raises(SeedError, match=rf"species\.{TABLE_SPECIES}: a species of this name is registered in this "
                                        "process with other data"):
        read_start(doc)
    assert user_species()[TABLE_SPECIES] is before


def test_a_refused_document_leaves_no_species_behind(work):
    register_species(TABLE_SPECIES, kappa="tables/species_kappa.txt")
    register_species(NK_SPECIES, nk="tables/species.nk", density=3.1)
    doc = json.loads(json.dumps(_document()))
    unregister_species(TABLE_SPECIES)
    unregister_species(NK_SPECIES)
    doc["scene"]["rings"][2]["t_in"]["value"] = -5.0
    with pytest.raises(SeedError, match=r"rings\.2\.t_in"):
        read_start(doc)
    assert not {TABLE_SPECIES, NK_SPECIES} & set(user_species())
    # The same document without the defect registers both.
    doc["scene"]["rings"][2]["t_in"]["value"] = 260.0
    try:
        read_start(doc)
        assert {TABLE_SPECIES, NK_SPECIES} <= set(user_species())
    finally:
        unregister_species(TABLE_SPECIES)
        unregister_species(NK_SPECIES)


@pytest.mark.parametrize("edit, pattern", [
    (lambda s: s.update(density={"value": -1.0, "unit": "g / cm3"}), r"species\.invented_nk_dust\.density"),
    (lambda s: s.update(constants="abc"), r"species\.invented_nk_dust\.constants: expected an array, got a string"),
    (lambda s: s["constants"][0].update(k=[0.1] * 79 + [-0.5]), r"species\.invented_nk_dust: .*k must be ≥ 0"),
    (lambda s: s.update(kind="magic"), r"species\.invented_nk_dust\.kind: 'magic' is not one of"),
])
def test_a_bad_species_entry_is_named(species, work, edit, pattern):
    doc = json.loads(json.dumps(_document()))
    unregister_species(NK_SPECIES)
    edit(doc["scene"]["species"][NK_SPECIES])
    with pytest.raises(SeedError, match=pattern):
        read_start(doc)
    assert NK_SPECIES not in user_species()
