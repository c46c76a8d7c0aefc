"""Starting-point documents: export, the shipped schema, write/read round trips, paths."""
import json

import jsonschema
import numpy as np
import pytest

from diskexplorer import KappaTable, PhotosphereTable, PowerLawOpacity, Ring, Scene, SeedError, Star
from diskexplorer.dust import DustMix
from diskexplorer.errors import ParameterError
from diskexplorer.fitting import (SCHEMA_ID, export_start, free_parameters, initial_walkers, load_schema,
                                  parameter_paths, read_start, scene_from_vector, vector_from_scene,
                                  write_start)
from diskexplorer.fitting.paths import canonical_path
from diskexplorer.fitting.start_schema import build_schema


@pytest.fixture
def kappa_file(tmp_path):
    path = tmp_path / "kappa.txt"
    path.write_text("# wavelength um, kappa cm2/g\n1.0 2000\n10.0 800\n100.0 50\n")
    return str(path)


def rich_scene(kappa_file):
    """Every dust kind the document knows: DustMix (with a per-component override),
    PowerLawOpacity, a κ table file, an in-memory κ table and None."""
    mix = DustMix({"olivine_glass": 0.55, "forsterite": 0.3, ("silica", 0.1, "cde"): 0.15}, grain_size=1.5)
    return Scene(distance=123.4, star=Star(t_eff=7250.0, luminosity=11.0, mass=1.8), inclination=37.5,
                 position_angle=-12.0, extended_fraction=0.05, rings=[
                     Ring(r_in=0.21, r_out=0.45, t_in=1620.0, q=0.4, dust=None, name="inner", c1=0.2, s1=-0.1),
                     Ring(r_in=0.5, r_out=1.7, t_in=1100.0, sigma_in=2e-3, dust=mix, name="mid"),
                     Ring(r_in=2.0, r_out=4.0, t_in=400.0, dust=PowerLawOpacity(900.0, 10.0, 1.3), name="pl"),
                     Ring(r_in=4.5, r_out=9.0, t_in=200.0, dust=KappaTable.from_file(kappa_file), name="file"),
                     Ring(r_in=9.5, r_out=20.0, t_in=90.0, enabled=False, name="inline",
                          dust=KappaTable([1.0, 10.0], [1500.0, 700.0], label="mine"))])


def assert_same_scene(a, b):
    assert a.replace(rings=()) == b.replace(rings=())
    assert len(a.rings) == len(b.rings)
    for ra, rb in zip(a.rings, b.rings):
        if isinstance(ra.dust, KappaTable):
            # KappaTable compares by identity: compare its content instead.
            assert type(rb.dust) is KappaTable and ra.dust.label == rb.dust.label
            assert ra.dust.source == rb.dust.source
            np.testing.assert_array_equal(ra.dust.wavelength, rb.dust.wavelength)
            np.testing.assert_array_equal(ra.dust.values, rb.dust.values)
            ra, rb = ra.__class__(**{**ra.__dict__, "dust": None}), rb.__class__(**{**rb.__dict__, "dust": None})
        assert ra == rb


def test_round_trip_is_exact(tmp_path, kappa_file):
    scene = rich_scene(kappa_file)
    doc = export_start(scene, free=["rings[inner].r_in", "geometry.inclination", "star.t_eff"],
                       bounds={"geometry.inclination": (20, 60)},
                       priors={"star.t_eff": ("normal", 7200.0, 150.0)})
    path = write_start(tmp_path / "start.json", doc)
    start = read_start(path)
    assert start.scene is not scene
    assert_same_scene(scene, start.scene)
    assert start.scene.rings[1].dust == scene.rings[1].dust      # DustMix by value, bit for bit
    assert start.paths == ["geometry.inclination", "star.t_eff", "rings.0.r_in"]
    inc = start.parameters["geometry.inclination"]
    assert (inc.lo, inc.hi, inc.value) == (20.0, 60.0, 37.5)
    assert start.parameters["star.t_eff"].prior.kind == "normal"
    assert start.parameters["rings.0.r_in"].prior.kind == "log-uniform"     # declared log scale
    # exporting the read scene again gives the same document (up to the time stamp)
    again = export_start(start.scene, free=start.paths, bounds={"geometry.inclination": (20, 60)},
                         priors={"star.t_eff": ("normal", 7200.0, 150.0)})
    assert {**again, "created": None} == {**doc, "created": None}


def test_round_trip_without_star_and_rings():
    scene = Scene(distance=80.0, star=None, rings=())
    start = read_start(json.loads(json.dumps(export_start(scene))))
    assert start.scene == scene and start.free == []


def test_exported_documents_validate_against_the_shipped_schema(kappa_file):
    schema = load_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    scene = rich_scene(kappa_file)
    for free in ([], parameter_paths(scene)):
        doc = export_start(scene, free=free, data={"oifits": ["a.fits"], "photometry": "sed.csv"})
        jsonschema.validate(json.loads(json.dumps(doc)), schema)
        assert doc["schema"] == SCHEMA_ID


def test_shipped_schema_is_generated_from_the_declarations():
    # Regenerate with: python -m diskexplorer.fitting.start_schema
    assert load_schema() == json.loads(json.dumps(build_schema()))


def test_every_declared_parameter_has_an_entry(kappa_file):
    scene = rich_scene(kappa_file)
    doc = export_start(scene)
    paths = parameter_paths(scene)
    assert "rings.4.sigma_in" in paths and "extended.fraction" in paths and "star.radius" in paths
    e = doc["scene"]["rings"][2]["t_in"]
    assert e == {"value": 400.0, "unit": "K", "free": False, "bounds": [50.0, 2500.0],
                 "prior": {"kind": "uniform"}}
    # default bounds widen to hold a value outside the declared ones (PA = −12° < 0°)
    assert doc["scene"]["geometry"]["position_angle"]["bounds"] == [-12.0, 360.0]
    assert doc["scene"]["extended"]["fraction"]["bounds"] == [0.0, 0.9]


def test_judgement_and_data_are_recorded():
    from diskexplorer.fitting import Comparison

    from fitting_cases import synthetic_data, true_scene

    scene = true_scene()
    obs, phot = synthetic_data(scene)
    result = Comparison(obs, phot).compare(scene.replace(inclination=45.0))
    data = {"oifits": [{"path": "n1.fits", "bands": ["K"], "error_floor": {"vis2_relative": 0.05}}],
            "photometry": {"path": "sed.csv", "a_v": 0.4}, "weights": {"t3phi": 2.0}}
    doc = export_start(scene, data=data, comparison_result=result)
    assert doc["judgement"]["total"] == pytest.approx(result.total)
    assert set(doc["judgement"]["chi2"]) == {"vis2", "t3phi", "t3amp", "photometry"}
    start = read_start(json.loads(json.dumps(doc)))
    assert start.data.oifits[0]["error_floor"] == {"vis2_relative": 0.05}
    assert start.data.photometry["a_v"] == 0.4 and start.data.weights == {"t3phi": 2.0}


def test_write_refuses_to_overwrite(tmp_path):
    doc = export_start(Scene(rings=[Ring()]))
    path = tmp_path / "s.json"
    write_start(path, doc)
    before = path.read_text()
    with pytest.raises(FileExistsError, match="exists already.*overwrite=True"):
        write_start(path, export_start(Scene(distance=50.0)))
    assert path.read_text() == before
    write_start(path, export_start(Scene(distance=50.0)), overwrite=True)
    assert json.loads(path.read_text())["scene"]["distance"]["value"] == 50.0


def test_convertible_units_are_accepted():
    doc = json.loads(json.dumps(export_start(Scene(star=Star(radius=2.0), rings=[Ring(r_in=0.5, r_out=1.0)]))))
    r_out = doc["scene"]["rings"][0]["r_out"]
    r_out.update(value=1.0 * 1.495978707e8, unit="km", bounds=[0.03 * 1.495978707e8, 300 * 1.495978707e8])
    doc["scene"]["geometry"]["inclination"].update(value=np.radians(30.0), unit="rad", bounds=[0.0, 1.4])
    doc["scene"]["rings"][0]["t_in"].update(value=1226.85, unit="deg_C", bounds=[0.0, 2000.0])
    scene = read_start(doc).scene
    assert scene.rings[0].r_out == pytest.approx(1.0, rel=1e-12)
    assert scene.inclination == pytest.approx(30.0, rel=1e-12)
    assert scene.rings[0].t_in == pytest.approx(1500.0, rel=1e-12)


def test_paths_by_name_and_number():
    scene = Scene(rings=[Ring(name="inner"), Ring(r_in=2, r_out=3, name="outer")])
    assert canonical_path(scene, "rings[outer].t_in") == "rings.1.t_in"
    assert canonical_path(scene, "rings.0.q") == "rings.0.q"
    with pytest.raises(SeedError, match=r"rings\[middle\]\.t_in: no ring named 'middle'"):
        canonical_path(scene, "rings[middle].t_in")
    with pytest.raises(SeedError, match="rings.2.t_in: the scene has 2 ring"):
        canonical_path(scene, "rings.2.t_in")
    with pytest.raises(SeedError, match="unknown ring parameter 'temperature'"):
        canonical_path(scene, "rings.0.temperature")
    with pytest.raises(SeedError, match="star.t_eff: the scene has no star"):
        canonical_path(scene, "star.t_eff")
    twins = Scene(rings=[Ring(name="a"), Ring(r_in=2, r_out=3, name="a")])
    with pytest.raises(SeedError, match="ambiguous"):
        canonical_path(twins, "rings[a].t_in")


def test_vector_round_trip_returns_new_scenes():
    scene = Scene(star=Star(), rings=[Ring(name="inner")], inclination=30.0)
    free = free_parameters(scene, ["rings.0.r_in", "star.t_eff", "geometry.inclination"])
    x = vector_from_scene(scene, free)
    np.testing.assert_array_equal(x, [0.5, 7000.0, 30.0])
    new = scene_from_vector(scene, free, [0.4, 7100.0, 33.0])
    assert (new.rings[0].r_in, new.star.t_eff, new.inclination) == (0.4, 7100.0, 33.0)
    assert (scene.rings[0].r_in, scene.star.t_eff, scene.inclination) == (0.5, 7000.0, 30.0)
    with pytest.raises(ParameterError, match="geometry.inclination: value 88 deg is outside its bounds"):
        scene_from_vector(scene, free, [0.4, 7100.0, 88.0])
    with pytest.raises(ParameterError, match="r_in .* must be smaller than"):
        scene_from_vector(scene, free, [1.5, 7100.0, 33.0])     # r_out = 1 au


def test_initial_walkers_respect_bounds_and_ordering():
    scene = Scene(rings=[Ring(r_in=0.5, r_out=0.5001)], inclination=0.0)
    free = free_parameters(scene, ["rings.0.r_in", "rings.0.r_out", "geometry.inclination"],
                           bounds={"rings.0.r_in": (0.4, 0.6)})
    w = initial_walkers(scene, free, 64, seed=3, spread=1e-2)
    assert w.shape == (64, 3)
    assert np.all(w[:, 0] < w[:, 1])              # r_in < r_out in every walker
    assert np.all((w[:, 2] >= 0.0) & (w[:, 2] <= 85.0))
    np.testing.assert_array_equal(w, initial_walkers(scene, free, 64, seed=3, spread=1e-2))


def test_starting_point_re_exports_its_set_up(kappa_file):
    scene = rich_scene(kappa_file)
    doc = json.loads(json.dumps(export_start(
        scene, free=["rings.1.t_in"], bounds={"rings.1.t_in": (900.0, 1300.0), "distance": (100.0, 150.0)},
        priors={"rings.1.t_in": ("normal", 1000.0, 50.0)}, data={"photometry": "sed.csv"}, accuracy=2)))
    start = read_start(doc)
    moved = start.scene_at([1234.0])
    again = start.to_document(moved)
    assert again["scene"]["rings"][1]["t_in"] == {**doc["scene"]["rings"][1]["t_in"], "value": 1234.0}
    assert again["scene"]["distance"] == doc["scene"]["distance"]
    assert again["data"] == doc["data"] and again["settings"] == {"accuracy": 2}
    assert_same_scene(read_start(again).scene, read_start(doc).scene.with_ring(1, t_in=1234.0))


def test_photosphere_table_round_trip():
    table = PhotosphereTable([1.0, 2.0, 5.0], [3.0, 2.0, 0.5], reference_distance=100.0, label="model atmosphere")
    scene = Scene(star=Star(t_eff=6000.0, radius=1.7, photosphere=table, uniform_disk=False))
    star = read_start(json.loads(json.dumps(export_start(scene)))).scene.star
    assert (star.t_eff, star.radius, star.uniform_disk) == (6000.0, 1.7, False)
    p = star.photosphere
    np.testing.assert_array_equal(p.wavelength, table.wavelength)
    np.testing.assert_array_equal(p.flux, table.flux)
    assert (p.reference_distance, p.label) == (100.0, "model atmosphere")


def test_baseline_range_is_recorded_and_applied(tmp_path):
    # Demo files of our own (sample_data/); the selection must equal select_baseline on them.
    from pathlib import Path

    from diskexplorer.data import read_oifits
    from diskexplorer.fitting.data_description import DataDescription

    path = str(Path(__file__).resolve().parents[2] / "sample_data" / "aurelis_QT-HK.fits")
    desc = DataDescription.from_dict({"oifits": [{"path": path, "baseline_range": [40.0, 100.0]}]})
    obs, _, _ = desc.load()
    ref = read_oifits(path).select_baseline(40.0, 100.0)
    assert 0 < obs.n_points("vis2") == ref.n_points("vis2") < read_oifits(path).n_points("vis2")
    assert obs.n_points("t3") == ref.n_points("t3")
    open_ended, _, _ = DataDescription.from_dict({"oifits": [{"path": path, "baseline_range": [40.0, None]}]}).load()
    assert open_ended.n_points("vis2") == read_oifits(path).select_baseline(40.0).n_points("vis2")
    # it survives the document and validates against the shipped schema
    doc = export_start(Scene(distance=100.0), data=desc.as_dict())
    jsonschema.validate(doc, load_schema())
    assert read_start(json.loads(json.dumps(doc))).data.oifits[0]["baseline_range"] == [40.0, 100.0]


@pytest.mark.parametrize("bad", [[100.0, 40.0], [-1.0, 50.0], [10.0], "40-100", [0.0, float("nan")]])
def test_bad_baseline_range_names_the_field(bad):
    from diskexplorer.fitting.data_description import DataDescription

    with pytest.raises(SeedError, match=r"data\.oifits\.0\.baseline_range"):
        DataDescription.from_dict({"oifits": [{"path": "x.fits", "baseline_range": bad}]})
