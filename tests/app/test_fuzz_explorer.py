"""Damaged inputs fed to a headless explorer: each is taken or refused by name, a refusal
changes nothing, and the explorer computes after every one.

Three doors, as a user meets them:

* data files typed into the data tab (the seeded corpus of damaged OIFITS files, photometry
  and spectra of ``tests/data/test_fuzz_inputs.py``; loaded beside a file already held);
* session files typed into the session box;
* starting-point documents typed into the starting-point page.

Documents are damaged here (seeded): bytes flipped, cut short, a random entry replaced by
junk of another type, a huge or deeply nested value, an entry removed. The larger run:
``DISKEXPLORER_FUZZ_CASES=1500 .venv/bin/python -m pytest tests/app/test_fuzz_explorer.py -s``.
"""
import json
import math
import random
import sys
from collections import Counter
from pathlib import Path

import pytest

from diskexplorer.app.state.sessions import session_of_state, write_session
from diskexplorer.errors import DiskExplorerError
from diskexplorer.fitting import export_start, write_start
from diskexplorer.testing import make_oifits
from explorer_helpers import make_app, settle
from test_transactions import Watch, snapshot

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "data"))
from test_fuzz_inputs import N_CASES, SEED, build_corpus  # noqa: E402

#: Data cases fed to the explorer (a slice of the reader corpus; the readers see all of it).
N_DATA = max(40, N_CASES // 5)
#: Damaged documents of each kind.
N_DOCUMENTS = max(40, N_CASES // 5)

JUNK = ([], {}, "", "abc", None, True, -1, 0, 1e308, -1e308, "9" * 400, [[[[[]]]]], {"a": {"b": {"c": 1}}},
        [1, 2, 3], "../../etc/passwd")


def computes(app):
    """The explorer still recomputes and judges: a finite total (or no data to judge)."""
    settle(app)
    result = app.judgement()
    return result is None or math.isfinite(result.total)


def attempt(app, action, name, counts, failures, what):
    """Run a user action; refused → nothing changed and the message names ``name``."""
    before = snapshot(app.state)
    watch = Watch(app.state)
    try:
        outcome = action()
    except DiskExplorerError:
        outcome = False
    except Exception as exc:  # noqa: BLE001 - a raw error is what the test looks for
        watch.close()
        failures.append(f"{what} {name}: raw {type(exc).__name__}: {exc}"[:300])
        counts["raw"] += 1
        return
    changed = watch.close()
    if outcome is False:
        counts["refused"] += 1
        if changed or snapshot(app.state) != before:
            failures.append(f"{what} {name}: refused but changed {changed}")
        if name not in app.state.message:
            failures.append(f"{what} {name}: the message does not name it: {app.state.message[:200]!r}")
    else:
        counts["taken"] += 1
    if not computes(app):
        failures.append(f"{what} {name}: the explorer no longer computes")


@pytest.fixture(scope="module")
def data_corpus(tmp_path_factory):
    cases = build_corpus(tmp_path_factory.mktemp("fuzz_data"), N_CASES)
    return random.Random(SEED + 1).sample(cases, min(N_DATA, len(cases)))


@pytest.fixture
def app(material, tmp_path):
    a = make_app(material, workdir=tmp_path)
    assert a.state.load_files([str(make_oifits(tmp_path, "kept_K.fits", band="K", seed=4))], add=True)
    a.state.set_filters(baseline_range=(0.0, 150.0))
    settle(a)
    return a


def test_damaged_data_files_are_taken_or_refused_by_name(app, data_corpus):
    counts, failures = Counter(), []
    held = len(app.state.data_sets)
    for case in data_corpus:
        page = app.data_page
        attempt(app, lambda: app.state.load_files([str(case.path)], add=True), case.path.name, counts, failures,
                f"load [{case.how}]")
        while len(app.state.data_sets) > held:   # back to the state worth keeping
            app.state.remove_data_set(len(app.state.data_sets) - 1)
        assert page is app.data_page
    print(f"\nexplorer data loads: {dict(counts)}")
    assert not failures, "\n".join(failures[:20])
    assert counts["refused"] and counts["taken"]


def _damage(rng, text):
    """One damaged variant of a JSON document's text, and how it was damaged."""
    how = rng.choice(["flip", "cut", "junk", "remove", "deep", "huge"])
    if how == "flip":
        data = bytearray(text.encode())
        for _ in range(rng.randint(1, 8)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        return data.decode("utf-8", errors="replace"), how
    if how == "cut":
        return text[:rng.randrange(1, len(text))], how
    doc = json.loads(text)
    nodes = []

    def walk(node, path):
        if isinstance(node, dict):
            for k, v in node.items():
                nodes.append((node, k, path + [k]))
                walk(v, path + [k])
        elif isinstance(node, list):
            for i, v in enumerate(node):
                nodes.append((node, i, path + [i]))
                walk(v, path + [i])

    walk(doc, [])
    parent, key, path = rng.choice(nodes)
    if how == "remove":
        del parent[key]
    elif how == "deep":
        parent[key] = json.loads("[" * 200 + "]" * 200)
    elif how == "huge":
        parent[key] = "HUGE"
        return json.dumps(doc).replace('"HUGE"', "9" * 5000, 1), f"huge at {path}"
    else:
        parent[key] = rng.choice(JUNK)
    return json.dumps(doc), f"{how} at {path}"


def test_damaged_sessions_and_starting_points_change_nothing_when_refused(app, tmp_path):
    rng = random.Random(SEED + 2)
    session = Path(write_session(tmp_path / "session_good.json", session_of_state(app.state))).read_text()
    start = Path(write_start(tmp_path / "start_good.json", export_start(app.state.scene))).read_text()
    counts, failures = Counter(), []
    for k in range(N_DOCUMENTS):
        text, how = _damage(rng, session)
        name = f"session_{k:03d}.json"
        (tmp_path / name).write_text(text, encoding="utf-8")
        app.session_box.path.value = name
        attempt(app, app.session_box.restore, name, counts, failures, f"restore [{how}]")
        text, how = _damage(rng, start)
        name = f"start_{k:03d}.json"
        (tmp_path / name).write_text(text, encoding="utf-8")
        app.start_page.path.value = name
        attempt(app, app.start_page.import_start, name, counts, failures, f"import [{how}]")
    print(f"\nexplorer documents: {dict(counts)}")
    assert not failures, "\n".join(failures[:20])
    assert counts["refused"] > N_DOCUMENTS // 2


def test_damaged_starting_points_given_to_evaluate_are_refused_naming_them(app, tmp_path, capsys):
    from diskexplorer.cli import main

    rng = random.Random(SEED + 3)
    start = Path(write_start(tmp_path / "start_good.json", export_start(app.state.scene))).read_text()
    bad = []
    for k in range(max(20, N_DOCUMENTS // 4)):
        text, how = _damage(rng, start)
        name = f"evaluate_start_{k:03d}.json"
        (tmp_path / name).write_text(text, encoding="utf-8")
        capsys.readouterr()
        rc = main(["evaluate", str(tmp_path / name), "--out", str(tmp_path / f"out{k}"), "--npix", "16",
                   "--image-wavelengths", "2.2", "--formats", "png", "--force"])
        err = capsys.readouterr().err
        if rc not in (0, 1):
            bad.append(f"{name} [{how}]: exit status {rc}: {err[-300:]}")
        elif rc == 1 and name not in err:
            bad.append(f"{name} [{how}]: refusal does not name the document: {err[-300:]}")
        elif "Traceback" in err:
            bad.append(f"{name} [{how}]: traceback: {err[-300:]}")
    assert not bad, "\n".join(bad)
