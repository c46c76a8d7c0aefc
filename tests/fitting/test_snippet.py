"""The generated Python snippet: it loads the document and its data, and its log-probability
evaluates at every initial walker, all of which lie inside the bounds."""
import math
import sys

import numpy as np
import pytest

from diskexplorer.data import write_oifits
from diskexplorer.fitting import export_start, make_snippet, read_start, write_start

from fitting_cases import FREE, PHOT_WAVELENGTHS, perturbed, synthetic_data, true_scene


@pytest.fixture
def seeded(tmp_path):
    truth = true_scene()
    obs, phot = synthetic_data(truth)
    write_oifits(tmp_path / "night1.fits", obs)
    lines = ["wavelength,value,error,unit"]
    lines += [f"{float(w)!r},{float(f)!r},{float(e)!r},Jy" for w, f, e in zip(PHOT_WAVELENGTHS, phot["flux"].values,
                                                        phot["flux_err"].values)]
    (tmp_path / "sed.csv").write_text("\n".join(lines) + "\n")
    data = {"oifits": [{"path": "night1.fits", "bands": ["K", "L", "N"], "error_floor": {"phase": 0.5}}],
            "photometry": {"path": "sed.csv"}, "weights": {"t3phi": 1.0}}
    doc = export_start(perturbed(truth), free=FREE, data=data,
                       bounds={"geometry.inclination": (30.0, 50.0)},
                       priors={"rings.0.t_in": ("normal", 1450.0, 200.0)})
    path = write_start(tmp_path / "start.json", doc)
    return path


def _run(source, monkeypatch, capsys, main):
    monkeypatch.setattr(sys, "argv", ["snippet.py"])
    namespace = {"__name__": "__main__" if main else "seed_snippet"}
    exec(compile(source, "snippet.py", "exec"), namespace)
    return namespace, capsys.readouterr().out


def test_snippet_builds_log_probability_and_walkers(seeded, monkeypatch, capsys):
    source = make_snippet(seeded)
    assert "emcee" in source and "import emcee" not in source.replace("#     import emcee", "")
    ns, out = _run(source, monkeypatch, capsys, main=True)
    assert "log_probability at the starting point" in out
    start = ns["start"]
    walkers = ns["initial_walkers"](24, seed=7)
    assert walkers.shape == (24, len(FREE))
    for f, column in zip(start.free, walkers.T):
        assert np.all((column >= f.lo) & (column <= f.hi)), f.path
    values = [ns["log_probability"](w) for w in walkers]
    assert all(math.isfinite(v) for v in values)
    # outside the bounds and for r_in ≥ r_out: −inf
    x = start.vector()
    x_out = x.copy()
    x_out[2] = 55.0          # inclination bound is [30, 50]
    assert ns["log_probability"](x_out) == -math.inf
    x_bad = x.copy()
    x_bad[0] = 0.7           # inner r_in above its r_out = 0.6 au
    assert ns["log_probability"](x_bad) == -math.inf


def test_snippet_data_and_probability_agree_with_the_core(seeded, monkeypatch, capsys):
    ns, _ = _run(make_snippet(seeded), monkeypatch, capsys, main=False)
    start = read_start(seeded)
    core = start.comparison()
    x0 = start.vector()
    chi2 = core.compare(start.scene).total
    assert ns["comparison"].compare(start.scene).total == pytest.approx(chi2, rel=1e-12)
    assert ns["log_probability"](x0) == pytest.approx(start.log_probability(core)(x0), rel=1e-12)
    assert ns["log_probability"](x0) == pytest.approx(start.log_prior(x0) - 0.5 * chi2, rel=1e-12)
    # the band selection of the document was applied: no points outside K, L and N
    wl = ns["observations"].vis2["wavelength"].values
    assert wl.size and np.all((wl < 2.6) | (wl > 2.7))
