"""One codec of a scene: every form a scene can take survives writing and reading unchanged.

The documents are the project's own (``fitting/scene_codec.py``); equality is checked field
by field with :func:`diskexplorer.testing.assert_scenes_equal`.
"""
import json
import os

import numpy as np
import pytest

from diskexplorer.dust import DustMix, register_species, unregister_species
from diskexplorer.errors import SeedError
from diskexplorer.fitting.scene_codec import scene_entries, scene_from_entries
from diskexplorer.observables.scene import Scene
from diskexplorer.physics.opacity import KappaTable, PowerLawOpacity
from diskexplorer.physics.ring import Ring
from diskexplorer.physics.star import PhotosphereTable, Star
from diskexplorer.testing import assert_scenes_equal

# Invented opacities and photosphere for the round trips (not measurements).
LAM = np.array([1.0, 3.0, 8.0, 10.0, 13.0, 30.0])
KAPPA = np.array([3000.0, 1500.0, 900.0, 2500.0, 1100.0, 300.0])


def _through_json(scene, base_dir=None):
    return scene_from_entries(json.loads(json.dumps(scene_entries(scene))), base_dir)[0]


def _scene(*rings, star=None):
    return Scene(distance=140.0, inclination=35.0, position_angle=70.0, extended_fraction=0.05,
                 star=star or Star(6500.0, 2.1, mass=1.8), rings=tuple(rings))


@pytest.fixture
def kappa_file(tmp_path):
    path = tmp_path / "tables" / "grey_kappa.txt"
    path.parent.mkdir()
    np.savetxt(path, np.column_stack([LAM, KAPPA]), header="wavelength_um kappa_cm2_g")
    return path


CASES = {
    "mixture with per-component sizes and shapes": lambda: Ring(
        r_in=0.3, r_out=1.2, t_in=1400.0, name="rim",
        dust=DustMix([("olivine_glass", 0.5), (("forsterite", 0.1, "cde"), 0.2), ("iron", 0.3)],
                     grain_size=1.5, shape="dhs")),
    "power-law opacity": lambda: Ring(r_in=2.0, r_out=6.0, t_in=300.0, name="outer",
                                      dust=PowerLawOpacity(kappa_ref=800.0, wavelength_ref=10.0, beta=1.3)),
    "inline κ table": lambda: Ring(r_in=1.0, r_out=3.0, t_in=600.0, name="mid",
                                   dust=KappaTable(LAM, KAPPA, label="invented κ")),
    "opaque ring": lambda: Ring(r_in=0.5, r_out=0.8, t_in=1200.0, name="wall", dust=None),
    "equilibrium ring with a sublimation override": lambda: Ring(
        r_in=0.2, r_out=3.0, t_in=1500.0, name="hot", temperature_mode="equilibrium", inner_edge="sublimation",
        sublimation={"iron": 1850.0}, dust=DustMix({"iron": 0.3, "olivine_glass": 0.7}, grain_size=0.1)),
}


@pytest.mark.parametrize("case", CASES)
def test_ring_forms_round_trip(case):
    scene = _scene(CASES[case]())
    assert_scenes_equal(_through_json(scene), scene)


def test_a_photosphere_table_round_trips():
    table = PhotosphereTable([0.5, 1.0, 2.0, 5.0], [12.0, 20.0, 9.0, 2.0], reference_distance=100.0,
                             label="invented photosphere")
    scene = _scene(CASES["opaque ring"](), star=Star(7000.0, 2.0, mass=2.0, photosphere=table, uniform_disk=False))
    assert_scenes_equal(_through_json(scene), scene)


@pytest.mark.parametrize("given", ["absolute", "relative"])
def test_a_kappa_table_file_is_stored_by_path_and_read_from_another_folder(given, kappa_file, tmp_path,
                                                                          monkeypatch):
    # A relative path is read against the folder the document gives (its own folder).
    monkeypatch.chdir(tmp_path)
    path = os.fspath(kappa_file) if given == "absolute" else os.path.join("tables", "grey_kappa.txt")
    scene = _scene(Ring(r_in=1.0, r_out=3.0, t_in=600.0, name="file", dust=KappaTable.from_file(path)))
    entries = json.loads(json.dumps(scene_entries(scene)))
    assert entries["rings"][0]["dust"] == {"kind": "kappa_table", "path": path, "label": "grey_kappa.txt"}
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    assert_scenes_equal(scene_from_entries(entries, base_dir=tmp_path)[0], scene)
    if given == "relative":
        with pytest.raises(SeedError, match=r"rings\.0\.dust: .*grey_kappa\.txt: cannot read κ table"):
            scene_from_entries(entries, base_dir=elsewhere)


def test_a_registered_species_is_stored_by_name():
    register_species("codec_test_grey", kappa=np.column_stack([LAM, KAPPA]), overwrite=True)
    try:
        scene = _scene(Ring(r_in=1.0, r_out=2.0, t_in=700.0, dust=DustMix({"codec_test_grey": 0.4,
                                                                          "olivine_glass": 0.6})))
        assert_scenes_equal(_through_json(scene), scene)
    finally:
        unregister_species("codec_test_grey")
    with pytest.raises(SeedError, match="codec_test_grey"):
        _through_json(scene)


def test_the_comparison_helper_names_the_difference():
    scene = _scene(CASES["inline κ table"]())
    other = _scene(Ring(r_in=1.0, r_out=3.0, t_in=600.0, name="mid", dust=KappaTable(LAM, KAPPA * 1.01,
                                                                                         label="invented κ")))
    with pytest.raises(AssertionError, match=r"scene.rings\[0\].dust.values"):
        assert_scenes_equal(other, scene)
