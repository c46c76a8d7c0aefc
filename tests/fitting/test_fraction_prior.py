"""Free mass fractions in starting-point documents: entries, Dirichlet priors, the snippet.

Sources:
* the document form and the weight parameterisation are ours (dust_codec.py, vector.py
  module docstrings);
* the Dirichlet marginal: if (g_1, …, g_n) ~ Dirichlet(α), then g_i ~ Beta(α_i, α_0 − α_i)
  with α_0 = Σ α (Kotz, Balakrishnan & Johnson, *Continuous Multivariate Distributions*,
  vol. 1, 2nd ed., 2000, ch. 49; the same marginal as scipy.stats.dirichlet's mean and
  variance) — FROM MEMORY, cross-checked here against scipy.stats.dirichlet's moments.
"""
import json
import math
import sys

import numpy as np
import pytest
from scipy import stats

from diskexplorer import Ring, Scene, Star
from diskexplorer.dust import DustMix
from diskexplorer.errors import SeedError
from diskexplorer.fitting import export_start, make_snippet, read_start, write_start
from diskexplorer.fitting.start_document import document_entry

# in document order (a mixture's components are sorted by name)
INNER = ["rings.0.dust.forsterite", "rings.0.dust.iron", "rings.0.dust.olivine_glass"]
OUTER = ["rings.1.dust.enstatite_glass", "rings.1.dust.olivine_glass"]
ALPHA = {"rings.0.dust.olivine_glass": 2.0, "rings.0.dust.forsterite": 3.0, "rings.0.dust.iron": 5.0}


def _scene():
    return Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0), rings=[
        Ring(r_in=0.5, r_out=2.0, t_in=900.0, q=0.5, sigma_in=1e-5, name="inner",
             dust=DustMix({"olivine_glass": 0.3, "forsterite": 0.2, "iron": 0.3, "enstatite_glass": 0.2})),
        Ring(r_in=3.0, r_out=6.0, t_in=300.0, q=0.5, sigma_in=1e-5, name="outer",
             dust=DustMix({"enstatite_glass": 0.4, "olivine_glass": 0.6}))], inclination=30.0)


def _doc():
    return export_start(_scene(), free=INNER + OUTER,
                        priors={p: ("dirichlet", a) for p, a in ALPHA.items()})


def test_fractions_are_parameter_entries_that_read_back():
    doc = _doc()
    entry = document_entry(doc, "rings.0.dust.iron")
    assert entry == {"value": 0.3, "unit": "", "free": True, "bounds": [0.0, 1.0],
                     "prior": {"kind": "dirichlet", "concentration": 5.0}}
    fixed = document_entry(doc, "rings.0.dust.enstatite_glass")
    assert fixed["free"] is False and fixed["prior"] == {"kind": "dirichlet", "concentration": 1.0}
    start = read_start(json.loads(json.dumps(doc)))
    assert start.scene == _scene()
    assert start.paths == INNER + OUTER
    assert [f.prior.concentration for f in start.free] == [ALPHA[p] for p in INNER] + [1.0, 1.0]


def test_a_plain_number_is_still_read_as_a_fixed_fraction():
    doc = _doc()
    for ring in doc["scene"]["rings"]:
        for c in ring["dust"]["components"]:
            c["fraction"] = c["fraction"]["value"]
    start = read_start(doc)
    assert start.scene == _scene() and start.free == []


@pytest.mark.parametrize("edit, match", [
    (lambda d: document_entry(d, "rings.1.dust.olivine_glass").update(free=False), "only free mass fraction"),
    (lambda d: document_entry(d, "rings.0.dust.iron").update(prior={"kind": "uniform"}), "dirichlet prior"),
    (lambda d: document_entry(d, "rings.0.dust.iron").update(prior={"kind": "dirichlet", "concentration": 0}),
     "concentration"),
    (lambda d: d["scene"]["rings"][0]["r_in"].update(prior={"kind": "dirichlet", "concentration": 1}),
     "mass fractions"),
])
def test_refusals(edit, match):
    doc = _doc()
    edit(doc)
    with pytest.raises(SeedError, match=match):
        read_start(doc)


def _snippet_namespace(tmp_path, monkeypatch, capsys):
    path = write_start(tmp_path / "start.json", _doc())
    source = make_snippet(path)
    assert "dirichlet(α = 5)" in source and "ring 0: fractions" in source
    monkeypatch.setattr(sys, "argv", ["snippet.py"])
    namespace = {"__name__": "fraction_snippet"}
    exec(compile(source, "snippet.py", "exec"), namespace)
    capsys.readouterr()
    return namespace


def test_fractions_drawn_through_the_snippet_follow_the_dirichlet_prior(tmp_path, monkeypatch, capsys):
    # The document names no data, so the snippet's log_probability is its log-prior alone.
    # Rejection sampling of uniform draws on the weights' box with that density, mapped to
    # mixtures by the snippet's own scene_from_vector, must give fractions/S ~ Dirichlet(α)
    # per ring: a Kolmogorov–Smirnov test of each fraction against its Beta marginal.
    ns = _snippet_namespace(tmp_path, monkeypatch, capsys)
    log_probability, scene, free, to_scene = ns["log_probability"], ns["scene"], ns["free"], ns["scene_from_vector"]
    rng = np.random.default_rng(2026)
    alpha = {0: np.array([ALPHA[p] for p in INNER]), 1: np.ones(2)}
    # log density at the Dirichlet mode bounds it from above (all α ≥ 1): the acceptance scale
    mode = (alpha[0] - 1) / (alpha[0].sum() - 3)
    top = float(np.sum((alpha[0] - 1) * np.log(mode)))
    fractions = {p: [] for p in INNER + OUTER}
    while len(fractions[INNER[0]]) < 1500:
        x = rng.uniform(0.0, 1.0, len(free))
        lp = log_probability(x)
        if not math.isfinite(lp) or rng.uniform() > math.exp(lp - top):
            continue
        trial = dict(to_scene(scene, free, x).rings[0].dust.fractions)
        outer = dict(to_scene(scene, free, x).rings[1].dust.fractions)
        for p in INNER:
            fractions[p].append(trial.get(p.rsplit(".", 1)[1], 0.0))
        for p in OUTER:
            fractions[p].append(outer.get(p.rsplit(".", 1)[1], 0.0))
        assert trial["enstatite_glass"] == 0.2          # the fixed fraction stays
    for ring, paths, share in ((0, INNER, 0.8), (1, OUTER, 1.0)):
        a = alpha[ring]
        expected_mean = stats.dirichlet.mean(a)
        for i, p in enumerate(paths):
            g = np.asarray(fractions[p]) / share
            marginal = stats.beta(a[i], a.sum() - a[i])
            assert marginal.mean() == pytest.approx(expected_mean[i], rel=1e-12)   # scipy agrees
            result = stats.kstest(g, marginal.cdf)
            assert result.pvalue > 1e-3, (p, result)


def test_initial_walkers_are_valid_mixtures_of_finite_probability(tmp_path, monkeypatch, capsys):
    ns = _snippet_namespace(tmp_path, monkeypatch, capsys)
    walkers = ns["initial_walkers"](16, seed=3)
    for x in walkers:
        assert math.isfinite(ns["log_probability"](x))
        fr = dict(ns["scene_from_vector"](ns["scene"], ns["free"], x).rings[0].dust.fractions)
        assert math.fsum(fr.values()) == pytest.approx(1.0, abs=1e-12)
