"""Hostile documents: each starting point or session ends in a SeedError naming the document and the entry.

Python's JSON parser recurses per level (``RecursionError``), refuses integers of more than
4 300 digits (``ValueError``), reads ``NaN`` and ``Infinity``; a scene given as a list or
rings as a string reached code that assumed objects. Every such document is refused before
any field is used, with the document's name and the path of the bad entry.
"""
import copy
import json
import os

import pytest

from diskexplorer import Ring, Scene, SeedError, Star
from diskexplorer.cli import main
from diskexplorer.dust import DustMix
from diskexplorer.fitting import export_start, json_limits, read_start
from diskexplorer.fitting.session_document import decode_session, read_session, session_document

SCENE = Scene(star=Star(), rings=(Ring(r_in=0.3, r_out=0.6, t_in=1500.0, name="inner"),
                                  Ring(r_in=1.0, r_out=3.0, t_in=700.0, name="outer",
                                       dust=DustMix({"olivine_glass": 0.7, "forsterite": 0.3}, grain_size=1.5))))
START = json.loads(json.dumps(export_start(SCENE, free=["rings.1.t_in"])))
SESSION = json.loads(json.dumps(session_document(SCENE, pins=[("pinned", SCENE)])))
LEGACY = {"schema": "diskexplorer-session/1",
          "scene": {"distance": 150.0, "inclination": 30.0, "position_angle": 10.0, "star": None,
                    "rings": [{"r_in": 0.3, "r_out": 1.0, "name": "a",
                               "dust": {"kind": "mixture", "fractions": [["olivine_glass", 1.0]],
                                        "grain_size": 0.1, "shape": "dhs"}}]}}


def _edited(doc, path, value):
    doc = copy.deepcopy(doc)
    node = doc
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    return json.dumps(doc)


def _with_number(doc, text):
    """``doc`` as JSON with the value of its first parameter entry replaced by ``text`` verbatim."""
    out = json.dumps(doc)
    at = out.index('"value": ') + len('"value": ')
    end = out.index(",", at)
    return out[:at] + text + out[end:]


DEEP = "[" * 100_000 + "]" * 100_000

# (name, text of the file, expected message after "<file>: ")
START_CASES = [
    ("deeply nested", DEEP, r"nested deeper than 32 levels"),
    ("deeply nested inside", json.dumps(START)[:-1] + ', "x": ' + DEEP + "}", r"nested deeper than 32 levels"),
    ("scene as a list", _edited(START, ["scene"], []), r"scene: expected an object, got an array"),
    ("rings as a string", _edited(START, ["scene", "rings"], "abc"), r"rings: expected an array, got a string 'abc'"),
    ("dust as a list", _edited(START, ["scene", "rings", 1, "dust"], [1, 2]),
     r"rings\.1\.dust: expected an object or null, got an array"),
    ("junk fractions", _edited(START, ["scene", "rings", 1, "dust", "components"], 5),
     r"rings\.1\.dust\.components: expected an array, got a number 5"),
    ("junk component", _edited(START, ["scene", "rings", 1, "dust", "components", 0], "olivine"),
     r"rings\.1\.dust\.components\.0: expected an object, got a string 'olivine'"),
    ("5000 digits", _with_number(START, "9" * 5000), r"distance\.value: a number of 5,000 digits; at most 300"),
    ("400 digits in bounds", _edited(START, ["scene", "rings", 1, "t_in", "bounds"], [1, 10 ** 400]),
     r"rings\.1\.t_in\.bounds\.1: a number of 401 digits"),
    ("NaN", _with_number(START, "NaN"), r"distance\.value: nan is not a finite number"),
    ("Infinity", _with_number(START, "-Infinity"), r"distance\.value: -inf is not a finite number"),
    ("1e999", _with_number(START, "1e999"), r"distance\.value: inf is not a finite number"),
    ("huge accuracy", _edited(START, ["settings", "accuracy"], 10 ** 6), r"settings\.accuracy: 1000000 is greater"),
    ("an array", "[1, 2]", r"a starting point is a JSON object, found an array"),
    ("a string", '"start"', r"a starting point is a JSON object, found a string"),
]


@pytest.mark.parametrize("name, text, pattern", START_CASES, ids=[c[0] for c in START_CASES])
def test_a_hostile_starting_point_file_is_refused_by_name_and_entry(tmp_path, name, text, pattern):
    path = tmp_path / "start.json"
    path.write_text(text)
    with pytest.raises(SeedError, match=rf"^{path}: {pattern}"):
        read_start(path)


def _in_memory(cases):
    """The cases Python can build as a dict from their text (not too deep, digits within its limit)."""
    out = []
    for name, text, pattern in cases:
        try:
            doc = json.loads(text)
        except (RecursionError, ValueError):
            continue
        if isinstance(doc, dict):
            out.append((name, doc, pattern))
    return out


IN_MEMORY = _in_memory(START_CASES)


@pytest.mark.parametrize("name, doc, pattern", IN_MEMORY, ids=[c[0] for c in IN_MEMORY])
def test_the_same_documents_built_in_memory_are_refused(name, doc, pattern):
    # As the schema's messages for a document in memory: the entry alone.
    with pytest.raises(SeedError, match=rf"^{pattern.replace('401 digits', 'about 401 digits')}"):
        read_start(doc)


def test_documents_deeper_than_python_can_recurse_are_refused_in_memory_too():
    doc = node = {}
    for _ in range(50_000):
        node["a"] = {}
        node = node["a"]
    with pytest.raises(SeedError, match=r"^a\.a\..*: nested deeper than 32 levels"):
        read_start(doc)
    with pytest.raises(SeedError, match=r"^session: nested deeper than 32 levels|^session: .*nested deeper"):
        decode_session({"schema": "diskexplorer-session/2", "scene": doc})


def test_size_and_encoding_are_bounded(tmp_path, monkeypatch):
    monkeypatch.setattr(json_limits, "MAX_DOCUMENT_BYTES", 4096)
    big = tmp_path / "big.json"
    big.write_text(json.dumps(START, indent=4) + " " * 2000)
    with pytest.raises(SeedError, match=rf"^{big}: larger than 4,096 bytes"):
        read_start(big)
    with pytest.raises(SeedError, match=rf"^session {big}: larger than 4,096 bytes"):
        read_session(big)
    latin = tmp_path / "latin.json"
    latin.write_bytes(b'{"schema": "diskexplorer.start/1", "title": "\xe9"}')
    with pytest.raises(SeedError, match=rf"^{latin}: not UTF-8 text \(byte 45\)"):
        read_start(latin)


def test_a_fifo_is_not_read(tmp_path):
    fifo = tmp_path / "pipe.json"
    os.mkfifo(fifo)
    with pytest.raises(SeedError, match=r"not a regular file"):
        read_start(fifo)


SESSION_CASES = [
    ("deeply nested", DEEP, r"nested deeper than 32 levels"),
    ("scene as a list", _edited(SESSION, ["scene"], []), r"scene: expected an object, got an array"),
    ("rings as a string", _edited(SESSION, ["scene", "rings"], "abc"),
     r"scene: rings: expected an array, got a string 'abc'"),
    ("pins as an object", _edited(SESSION, ["pins"], {"a": 1}), r"pins: expected an array or null, got an object"),
    ("pin as a number", _edited(SESSION, ["pins", 0], 3), r"pins\.0: expected an object, got a number 3"),
    ("pin scene as a string", _edited(SESSION, ["pins", 0, "scene"], "x"),
     r"pins\.0\.scene: expected an object, got a string 'x'"),
    ("data as a list", _edited(SESSION, ["data"], [1]), r"data: expected an object or null, got an array"),
    ("oifits as a number", _edited(SESSION, ["data", "oifits"], 5),
     r"data\.oifits: expected a string or an array or null, got a number 5"),
    ("filters as a list", _edited(SESSION, ["filters"], [1]), r"filters: expected an object or null, got an array"),
    ("bands as a number", _edited(SESSION, ["filters", "bands"], 5),
     r"filters\.bands: expected an array or null, got a number 5"),
    ("view as a list", _edited(SESSION, ["view"], [1]), r"view: expected an object or null, got an array"),
    ("view of the wrong type", _edited(SESSION, ["view"], {"log_vis2": "yes"}),
     r"view\.log_vis2: expected a boolean, got a string 'yes'"),
    ("fit set-up as a list", _edited(SESSION, ["fit_setup"], [1]),
     r"fit_setup: expected an object or null, got an array"),
    ("bandpass switches as a number", _edited(SESSION, ["bandpass_off"], 5),
     r"bandpass_off: expected an array or null, got a number 5"),
    ("5000 digits", _with_number(SESSION, "9" * 5000), r"scene\.distance\.value: a number of 5,000 digits"),
    ("junk fractions, first layout", _edited(LEGACY, ["scene", "rings", 0, "dust", "fractions"], 5),
     r"scene: rings\.0\.dust\.fractions: expected an array, got a number 5"),
    ("junk fraction pair, first layout", _edited(LEGACY, ["scene", "rings", 0, "dust", "fractions"], [[1, 2, 3]]),
     r"scene: rings\.0\.dust\.fractions\.0"),
    ("dust as a string, first layout", _edited(LEGACY, ["scene", "rings", 0, "dust"], "abc"),
     r"scene: rings\.0\.dust: expected null or an object, got a string 'abc'"),
    ("rings as a string, first layout", _edited(LEGACY, ["scene", "rings"], "abc"),
     r"scene: rings: expected an array, got a string 'abc'"),
    ("not a session", json.dumps([1, 2]), r"schema None is not one of"),
]


@pytest.mark.parametrize("name, text, pattern", SESSION_CASES, ids=[c[0] for c in SESSION_CASES])
def test_a_hostile_session_file_is_refused_by_name_and_entry(tmp_path, name, text, pattern):
    path = tmp_path / "s.json"
    path.write_text(text)
    with pytest.raises(SeedError, match=rf"^session {path}: {pattern}"):
        decode_session(read_session(path), base_dir=tmp_path, where=f"session {path}")


def test_the_good_documents_still_read(tmp_path):
    assert read_start(copy.deepcopy(START)).paths == ["rings.1.t_in"]
    assert decode_session(copy.deepcopy(SESSION)).pins[0][0] == "pinned"
    assert decode_session(copy.deepcopy(LEGACY)).scene.rings[0].name == "a"


@pytest.mark.parametrize("text", [DEEP, _with_number(START, "9" * 5000),
                                  _edited(SESSION, ["pins"], {"a": 1})], ids=["deep", "digits", "session pins"])
def test_evaluate_refuses_them_in_one_line(tmp_path, capsys, text):
    path = tmp_path / "doc.json"
    path.write_text(text)
    assert main(["evaluate", str(path), "--out", str(tmp_path / "out")]) == 1
    err = capsys.readouterr().err.strip()
    assert "Traceback" not in err and "doc.json" in err and len(err.splitlines()) == 1
    assert not (tmp_path / "out").exists()
