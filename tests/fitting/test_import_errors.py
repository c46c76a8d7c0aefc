"""Broken starting-point documents: each defect gives its own clear SeedError naming the entry."""
import copy
import json

import pytest

from diskexplorer import Ring, Scene, SeedError, Star
from diskexplorer.dust import DustMix
from diskexplorer.fitting import export_start, read_start


def _good():
    scene = Scene(star=Star(), rings=[
        Ring(r_in=0.3, r_out=0.6, t_in=1500.0, name="inner"),
        Ring(r_in=1.0, r_out=3.0, t_in=700.0, name="outer",
             dust=DustMix({"olivine_glass": 0.7, "forsterite": 0.3}, grain_size=1.5))])
    return json.loads(json.dumps(export_start(scene, free=["rings.1.t_in"], data={"oifits": ["a.fits"]})))


GOOD = _good()


def _set(path, value):
    def edit(doc):
        node = doc
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    return edit


def _delete(path):
    def edit(doc):
        node = doc
        for key in path[:-1]:
            node = node[key]
        del node[path[-1]]
    return edit


R1 = ["scene", "rings", 1]
# (name, edit of a good document, expected message pattern)
CASES = [
    ("value outside bounds", _set(R1 + ["t_in", "value"], 3000.0),
     r"^rings\.1\.t_in: value 3000 K is outside its bounds \[50, 2500\] K$"),
    ("missing value", _delete(R1 + ["t_in", "value"]), r"^rings\.1\.t_in: missing field 'value'"),
    ("missing parameter", _delete(R1 + ["q"]), r"^rings\.1: missing field 'q'"),
    ("missing scene", _delete(["scene"]), r"^document: missing field 'scene'"),
    ("unknown key", _set(R1 + ["t_in", "fixed"], True),
     r"^rings\.1\.t_in: unknown key 'fixed'; allowed: value, unit, free, bounds, prior"),
    ("unknown top-level key", _set(["fit_options"], {}), r"^document: unknown key 'fit_options'"),
    ("unknown species", _set(R1 + ["dust", "components", 0, "species"], "unobtainium"),
     r"^rings\.1\.dust\.components\.0\.species: unknown species 'unobtainium'; known: .*forsterite"),
    ("wrong unit", _set(R1 + ["t_in", "unit"], "m"),
     r"^rings\.1\.t_in: unit 'm' does not convert to 'K' \(expected a temperature\)"),
    ("unparseable unit", _set(R1 + ["r_in", "unit"], "furlongs per fortnight"),
     r"^rings\.1\.r_in: unit 'furlongs per fortnight' is not a unit astropy understands"),
    ("newer schema", _set(["schema"], "diskexplorer.start/7"),
     r"^document: schema: 'diskexplorer.start/7' is newer than this diskexplorer reads .*update diskexplorer"),
    ("foreign schema", _set(["schema"], "something-else/1"), r"is not a diskexplorer starting point"),
    ("no schema", _delete(["schema"]), r"^document: schema: missing field 'schema'"),
    ("wrong type", _set(R1 + ["t_in", "value"], "hot"), r"^rings\.1\.t_in\.value: expected a number, got a string .hot.$"),
    ("radii out of order", _set(R1 + ["r_in", "value"], 3.5), r"^rings\.1\.r_in: 3\.5 au must be smaller than rings\.1\.r_out = 3 au"),
    ("bounds outside valid range", _set(["scene", "geometry", "inclination", "bounds"], [-10.0, 80.0]),
     r"^geometry\.inclination: bounds \[-10, 80\] deg leave the physically allowed range \[0, 90\) deg"),
    ("bounds reversed", _set(R1 + ["t_in", "bounds"], [2000.0, 100.0]), r"lower < upper"),
    ("outside valid range", _set(["scene", "distance", "value"], -5.0),
     r"^distance: value -5 pc is outside the physically allowed range \(0, inf\) pc"),
    ("bad prior kind", _set(R1 + ["t_in", "prior"], {"kind": "cauchy"}),
     r"^rings\.1\.t_in\.prior\.kind: 'cauchy' is not one of 'uniform', 'log-uniform', 'normal'"),
    ("normal prior without sigma", _set(R1 + ["t_in", "prior"], {"kind": "normal", "mean": 700.0}),
     r"^rings\.1\.t_in\.prior: missing field 'sigma'"),
    ("log-uniform prior at zero", _set(["scene", "geometry", "inclination", "prior"], {"kind": "log-uniform"}),
     r"^geometry\.inclination\.prior: log-uniform prior needs a positive lower bound"),
    ("unknown dust kind", _set(R1 + ["dust"], {"kind": "magic"}), r"^rings\.1\.dust\.kind: 'magic' is not one of"),
    ("bad shape", _set(R1 + ["dust", "shape"], "cube"), r"^rings\.1\.dust\.shape: 'cube' is not one of 'dhs', 'mie', 'cde'"),
    ("unknown data key", _set(["data", "oifits", 0, "band"], "K"), r"^data\.oifits\.0: unknown key 'band'"),
]


@pytest.mark.parametrize("name, edit, pattern", CASES, ids=[c[0] for c in CASES])
def test_broken_document_is_refused_with_a_clear_message(name, edit, pattern):
    doc = copy.deepcopy(GOOD)
    edit(doc)
    with pytest.raises(SeedError, match=pattern):
        read_start(doc)


def test_messages_are_distinct():
    seen = {}
    for name, edit, _ in CASES:
        doc = copy.deepcopy(GOOD)
        edit(doc)
        with pytest.raises(SeedError) as info:
            read_start(doc)
        seen.setdefault(str(info.value), name)
    assert len(seen) == len(CASES)


def test_json_syntax_error_names_file_line_and_column(tmp_path):
    path = tmp_path / "broken.json"
    path.write_text('{\n  "schema": "diskexplorer.start/1",\n  "scene": {,\n}\n')
    with pytest.raises(SeedError, match=r"broken\.json: line 3, column 13: not valid JSON"):
        read_start(path)


def test_errors_from_a_file_name_the_file(tmp_path):
    doc = copy.deepcopy(GOOD)
    doc["scene"]["rings"][1]["t_in"]["value"] = 3000.0
    path = tmp_path / "seed.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(SeedError, match=r"seed\.json: rings\.1\.t_in: value 3000 K is outside its bounds"):
        read_start(path)


def test_missing_file():
    with pytest.raises(SeedError, match="no such starting-point file"):
        read_start("/nonexistent/start.json")


def test_good_document_reads():
    start = read_start(copy.deepcopy(GOOD))
    assert start.paths == ["rings.1.t_in"]
    assert start.scene.rings[0].dust is None
    assert start.scene.rings[1].dust == DustMix({"olivine_glass": 0.7, "forsterite": 0.3}, grain_size=1.5)
