"""Mass fractions as parameters: paths, values, the sum-to-1 rule, free lists, refinement.

Sources: the rules checked here are ours (diskexplorer/fitting/paths.py, vector.py,
refine.py docstrings); the refinement case is a noise-free synthetic spectrum made by our
own forward model, so the truth fits it with χ² = 0 (COMPUTED).
"""
import math

import numpy as np
import pytest

from diskexplorer import Ring, Scene, Star
from diskexplorer.data import photometry_dataset
from diskexplorer.dust import DustMix
from diskexplorer.errors import ParameterError, SeedError
from diskexplorer.fitting import Comparison, free_parameters, refine
from diskexplorer.fitting.paths import (MASS_FRACTION_SPEC, canonical_path, component_key, fraction_path,
                                        get_value, parameter_paths, set_values, spec_for)
from diskexplorer.fitting.vector import log_prior, scene_from_vector, vector_from_scene


def _scene(fractions=None, grain_size=0.1):
    dust = DustMix(fractions or {"olivine_glass": 0.5, "forsterite": 0.3, "iron": 0.2}, grain_size=grain_size)
    return Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0), rings=[
        Ring(r_in=0.5, r_out=2.0, t_in=900.0, q=0.5, sigma_in=1e-5, dust=dust, name="inner")], inclination=30.0)


# One table: key ↔ path, both ways (source: paths.py module docstring).
KEYS = [("forsterite", "rings.0.dust.forsterite"),
        (("forsterite", None, "cde"), "rings.0.dust.forsterite(cde)"),
        (("forsterite", 1.5, "mie"), "rings.0.dust.forsterite(mie,1.5um)"),
        (("iron", 0.1, "dhs"), "rings.0.dust.iron(dhs,0.1um)")]


@pytest.mark.parametrize("key, path", KEYS)
def test_component_paths_read_back_to_their_keys(key, path):
    assert fraction_path(0, key) == path
    assert component_key(path) == key
    assert spec_for(path) is MASS_FRACTION_SPEC
    assert MASS_FRACTION_SPEC.bounds == (0.0, 1.0) and MASS_FRACTION_SPEC.unit == ""


def test_every_component_is_listed_and_read():
    scene = _scene({"olivine_glass": 0.6, ("forsterite", None, "cde"): 0.4})
    paths = [p for p in parameter_paths(scene) if ".dust." in p]
    assert sorted(paths) == ["rings.0.dust.forsterite(cde)", "rings.0.dust.olivine_glass"]
    assert get_value(scene, "rings.0.dust.forsterite(cde)") == 0.4
    # by ring name, and a known species the mixture does not hold (fraction 0)
    assert canonical_path(scene, "rings[inner].dust.olivine_glass") == "rings.0.dust.olivine_glass"
    assert get_value(scene, canonical_path(scene, "rings.0.dust.iron")) == 0.0


@pytest.mark.parametrize("path, match", [
    ("rings.0.dust.unobtainium", "unknown species"),
    ("rings.3.dust.iron", "ring"),
    ("rings.0.dust.iron(mie)", "grain radius"),
    ("rings[nowhere].dust.iron", "no ring named"),
])
def test_bad_fraction_paths_are_refused(path, match):
    with pytest.raises(SeedError, match=match):
        canonical_path(_scene(), path)


def test_a_ring_without_a_mixture_has_no_fractions():
    scene = _scene().with_ring(0, dust=None)
    assert not [p for p in parameter_paths(scene) if ".dust." in p]
    with pytest.raises(SeedError, match="not a mixture"):
        canonical_path(scene, "rings.0.dust.iron")


def test_setting_a_fraction_rescales_the_others_proportionally():
    # paths.set_values Notes: others × (1 − Σ given)/(Σ others)
    new = set_values(_scene(), {"rings.0.dust.iron": 0.6})
    got = dict(new.rings[0].dust.fractions)
    assert got["iron"] == 0.6
    assert got["olivine_glass"] == pytest.approx(0.5 * 0.4 / 0.8, rel=1e-15)
    assert got["forsterite"] == pytest.approx(0.3 * 0.4 / 0.8, rel=1e-15)
    assert math.fsum(got.values()) == pytest.approx(1.0, abs=1e-15)


def test_a_fraction_set_to_zero_leaves_the_mixture_and_comes_back():
    gone = set_values(_scene(), {"rings.0.dust.iron": 0.0})
    assert "iron" not in dict(gone.rings[0].dust.fractions)
    back = set_values(gone, {"rings.0.dust.iron": 0.2})
    assert dict(back.rings[0].dust.fractions)["iron"] == 0.2


@pytest.mark.parametrize("values, match", [
    ({"rings.0.dust.iron": 0.7, "rings.0.dust.forsterite": 0.6}, "sum to"),
    ({"rings.0.dust.iron": 1.5}, "outside the allowed range"),
])
def test_impossible_fractions_are_refused(values, match):
    with pytest.raises(ParameterError, match=match):
        set_values(_scene(), values)


def test_nothing_left_to_take_up_the_rest_is_refused():
    with pytest.raises(ParameterError, match="no other component"):
        set_values(_scene({"iron": 1.0}), {"rings.0.dust.iron": 0.5})


def test_a_lone_free_fraction_is_refused():
    with pytest.raises(SeedError, match="only free mass fraction"):
        free_parameters(_scene(), ["rings.0.dust.iron", "rings.0.r_in"])


def test_free_fractions_are_weights_renormalised_with_the_fixed_ones_kept():
    # vector.py module docstring: f_i = S w_i / Σ w, S = 1 − fixed fractions
    scene = _scene()
    free = free_parameters(scene, ["rings.0.dust.iron", "rings.0.dust.forsterite"])
    x = vector_from_scene(scene, free)
    np.testing.assert_array_equal(x, [0.2, 0.3])
    new = scene_from_vector(scene, free, [0.1, 0.3])
    got = dict(new.rings[0].dust.fractions)
    assert got["olivine_glass"] == 0.5                      # fixed: bit for bit
    assert got["iron"] == pytest.approx(0.5 * 0.1 / 0.4, rel=1e-15)
    assert got["forsterite"] == pytest.approx(0.5 * 0.3 / 0.4, rel=1e-15)
    assert log_prior(free, [0.1, 0.3]) == 0.0               # flat Dirichlet
    assert log_prior(free, [0.7, 0.6]) == -math.inf         # weights outside 0 < Σ w ≤ 1


def test_refinement_drives_an_absent_species_to_exactly_zero():
    # COMPUTED: noise-free optically thin spectrum of a ring without iron; refinement of all
    # three fractions from a start with 20 % iron must return iron = 0 exactly (refine.py
    # module docstring) and the true fractions.
    truth = _scene({"olivine_glass": 0.7, "forsterite": 0.3})
    wl = np.linspace(7.5, 13.5, 40)  # µm
    flux = truth.sed(wl)
    comparison = Comparison(None, photometry_dataset(wl, flux, 0.01 * flux))
    free = ["rings.0.dust.olivine_glass", "rings.0.dust.forsterite", "rings.0.dust.iron"]
    res = refine(_scene(), comparison, free)
    got = {p.path: p.value for p in res.parameters}
    assert got["rings.0.dust.iron"] == 0.0
    assert "iron" not in dict(res.scene.rings[0].dust.fractions)
    assert got["rings.0.dust.olivine_glass"] == pytest.approx(0.7, abs=1e-9)
    assert got["rings.0.dust.forsterite"] == pytest.approx(0.3, abs=1e-9)
    assert math.fsum(got.values()) == pytest.approx(1.0, abs=1e-12)
    assert res.chi2_after < 1e-12 < res.chi2_before
    cov = res.covariance
    # the fractions' covariance lives on the simplex: Σ_i C_ij = 0 (their sum is fixed)
    np.testing.assert_allclose(cov.sum(axis=0), 0.0, atol=1e-10)


def test_with_noise_the_solver_itself_puts_an_unwanted_species_on_zero(monkeypatch):
    # COMPUTED: the same ring with 1 % Gaussian noise (seed 3, one whose χ² optimum lies at
    # iron < 0). With the rounding clean-up switched off (ZERO_WEIGHT = 0) the bounded solver
    # must itself end on the bound (refine.py: dogbox), and the zero must be the data's: a
    # little iron (others rescaled proportionally) raises χ².
    import importlib

    # the module (the package's name "refine" is the function)
    monkeypatch.setattr(importlib.import_module("diskexplorer.fitting.refine"), "ZERO_WEIGHT", 0.0)
    truth = _scene({"olivine_glass": 0.7, "forsterite": 0.3})
    wl = np.linspace(7.5, 13.5, 40)  # µm
    flux = truth.sed(wl)
    noisy = flux * (1 + 0.01 * np.random.default_rng(3).standard_normal(wl.size))
    comparison = Comparison(None, photometry_dataset(wl, noisy, 0.01 * flux))
    free = ["rings.0.dust.olivine_glass", "rings.0.dust.forsterite", "rings.0.dust.iron"]
    res = refine(_scene(), comparison, free)
    got = {p.path: p.value for p in res.parameters}
    assert got["rings.0.dust.iron"] == 0.0
    for step in (1e-4, 1e-3):
        nudged = set_values(res.scene, {"rings.0.dust.iron": step})
        assert comparison.compare(nudged).total > res.chi2_after
