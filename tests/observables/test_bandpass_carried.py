"""A per-file choice to switch the channel bandpass off survives every place that rebuilds a
Comparison: refinement with other weights, grid scans (and their workers), the Python snippet."""
import sys

import numpy as np
import pytest

from diskexplorer.fitting import Comparison, export_start, make_snippet, write_start
from diskexplorer.fitting.refine import _as_comparison
from diskexplorer.fitting.scan import scan_grid
from diskexplorer.sample import SAMPLE_FILES, copy_sample_data, demo_scene, load_sample_data


@pytest.fixture(scope="module")
def sample():
    return load_sample_data()


def _off_for_first_file(sample):
    return {sample["paths"]["oifits"][0]: False}


def test_refine_keeps_the_bandpass_choice_when_it_reweights(sample):
    comp = Comparison(sample["observations"], sample["photometry"], sample["spectrum"],
                      bandpass=_off_for_first_file(sample))
    rebuilt = _as_comparison(comp, {"vis2": 2.0})
    assert rebuilt is not comp and rebuilt.bandpass == comp.bandpass
    as_dict = _as_comparison({"observations": sample["observations"], "bandpass": False}, None)
    assert as_dict.bandpass is False


def test_scans_judge_with_the_comparison_s_bandpass(sample):
    scene = demo_scene()
    axes = {"rings.0.t_in": (1400.0, 1560.0, 2)}
    off = Comparison(sample["observations"], None, None, bandpass=False)
    on = Comparison(sample["observations"], None, None, bandpass=True)
    ds_off = scan_grid(scene, off, axes, scheduler=None)
    ds_on = scan_grid(scene, on, axes, scheduler=None)
    want_off = [off.compare(scene.with_ring(0, t_in=t)).total for t in (1400.0, 1560.0)]
    want_on = [on.compare(scene.with_ring(0, t_in=t)).total for t in (1400.0, 1560.0)]
    np.testing.assert_allclose(np.asarray(ds_off["chi2"].values, float).ravel(), want_off, rtol=1e-12)
    np.testing.assert_allclose(np.asarray(ds_on["chi2"].values, float).ravel(), want_on, rtol=1e-12)
    assert not np.allclose(want_off, want_on, rtol=1e-9)  # the choice matters on these data
    ds_dict = scan_grid(scene, {"observations": sample["observations"], "bandpass": False}, axes,
                        scheduler=None)
    np.testing.assert_allclose(np.asarray(ds_dict["chi2"].values, float).ravel(), want_off, rtol=1e-12)


def test_snippet_carries_a_file_s_bandpass_off(tmp_path, monkeypatch, capsys):
    copy_sample_data(tmp_path)
    first = SAMPLE_FILES["oifits"][0]
    data = {"oifits": [{"path": first, "bandpass": False}, {"path": SAMPLE_FILES["oifits"][1]}]}
    path = write_start(tmp_path / "start.json", export_start(demo_scene(), free=["rings.0.t_in"], data=data))
    source = make_snippet(path)
    monkeypatch.setattr(sys, "argv", ["snippet.py"])
    ns = {"__name__": "seed_snippet"}
    exec(compile(source, "snippet.py", "exec"), ns)
    comp = ns["comparison"]
    assert isinstance(comp.bandpass, dict) and list(comp.bandpass.values()) == [False]
    (key,) = comp.bandpass
    assert key in comp.observations.files and key.endswith(first)
    from diskexplorer.fitting import read_start

    start = read_start(path)
    reference = start.data.comparison(start.base_dir)
    scene = demo_scene()
    assert comp.compare(scene).total == pytest.approx(reference.compare(scene).total, rel=1e-12)
