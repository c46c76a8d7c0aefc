"""The composition solve (diskexplorer.fitting.composition) against brute force and noise.

The data are made by our own forward model on an invented sampling (COMPUTED, no outside
source): the checks are internal consistency — the solve against an exhaustive grid over
the simplex, and the reported errors against the scatter of repeated noise realisations.
"""
import itertools
import math

import numpy as np
import pytest

from diskexplorer import Ring, Scene, Star
from diskexplorer.data import ObservationSet
from diskexplorer.data.spectrum import spectrum_dataset
from diskexplorer.dust import DustMix
from diskexplorer.errors import ParameterError
from diskexplorer.fitting import Comparison
from diskexplorer.fitting.composition import (compare_alternatives, drop_one, solve_composition,
                                              swap_alternatives)

SPECIES = ("olivine_glass", "forsterite", "iron")
TRUTH = (0.55, 0.3, 0.15)
SPEC_WL = np.linspace(8.0, 13.0, 26)      # µm
VIS_WL = np.array([8.5, 10.0, 11.3, 12.5])  # µm


def _scene(fractions=TRUTH, species=SPECIES):
    ring = Ring(r_in=0.4, r_out=1.2, t_in=1300.0, q=0.5, sigma_in=2e-4, p=1.0, name="inner",
                dust=DustMix(dict(zip(species, fractions)), grain_size=1.5, shape="dhs"))
    return Scene(distance=140.0, star=Star(t_eff=7500.0, radius=2.0), rings=(ring,), inclination=30.0,
                 position_angle=40.0)


def _data(truth, seed, spec_noise=0.02, vis2_noise=0.01):
    """(observations, spectrum) of ``truth`` with Gaussian noise (seed; None: noise-free)."""
    rng = np.random.default_rng(12)
    angle, length = rng.uniform(0, np.pi, 12), rng.uniform(10, 60, 12)
    u, v = np.repeat(length * np.sin(angle), VIS_WL.size), np.repeat(length * np.cos(angle), VIS_WL.size)
    wl = np.tile(VIS_WL, 12)
    v2 = truth.vis2(u, v, wl)
    flux = truth.sed(SPEC_WL)
    noise = np.random.default_rng(seed) if seed is not None else None
    if noise is not None:
        v2 = v2 + noise.normal(0, vis2_noise, v2.shape)
        flux_obs = flux * (1 + noise.normal(0, spec_noise, flux.shape))
    else:
        flux_obs = flux
    obs = ObservationSet.from_arrays(vis2=dict(u=u, v=v, wavelength=wl, vis2=v2,
                                               vis2_err=np.full(wl.size, vis2_noise)))
    return obs, spectrum_dataset(SPEC_WL, flux_obs, spec_noise * flux)


def _comparison(seed=1, **kw):
    obs, spec = _data(_scene(), seed, **kw)
    return Comparison(obs, spectrum=spec)


def _wrong():
    return _scene((0.2, 0.2, 0.6))


def test_solve_recovers_noise_free_truth():
    cmp = _comparison(seed=None)
    res = solve_composition(_wrong(), cmp, "inner", SPECIES)
    assert res.chi2_after < 1e-6 * res.chi2_before
    np.testing.assert_allclose(res.rings[0].fractions, TRUTH, atol=2e-4)
    assert res.scene.rings[0].dust.fractions == tuple(sorted(res.scene.rings[0].dust.fractions,
                                                             key=lambda kv: repr(kv[0])))
    # the input scene is untouched
    assert dict(_wrong().rings[0].dust.fractions)["iron"] == pytest.approx(0.6)


def _chi2_at(cmp, f):
    return cmp.compare(_scene(f)).total


@pytest.mark.slow
def test_solve_matches_brute_force_grid_over_the_simplex():
    """Against an exhaustive grid over the simplex in 0.005 steps (20 301 mixtures); a
    quadratic through the 3 × 3 grid points around the grid's best gives its continuous
    minimum (a 0.005 grid alone places it only to ±0.0025)."""
    cmp = _comparison(seed=3)
    res = solve_composition(_wrong(), cmp, "inner", SPECIES)
    n = 200
    step = 1.0 / n
    grid = {(i, j): _chi2_at(cmp, (i * step, j * step, (n - i - j) * step))
            for i in range(n + 1) for j in range(n + 1 - i)}
    (i0, j0) = min(grid, key=grid.get)
    assert 0 < i0 and 0 < j0 and i0 + j0 < n - 1, "the grid minimum lies on the simplex's edge"
    # Quadratic χ² ≈ c + g·d + ½ dᵀ H d through the 9 points around the grid minimum.
    rows, vals = [], []
    for di, dj in itertools.product((-1, 0, 1), repeat=2):
        x, y = di * step, dj * step
        rows.append([1, x, y, x * x, x * y, y * y])
        vals.append(grid[(i0 + di, j0 + dj)])
    c = np.linalg.lstsq(np.array(rows), np.array(vals), rcond=None)[0]
    hess = np.array([[2 * c[3], c[4]], [c[4], 2 * c[5]]])
    d = np.linalg.solve(hess, -c[1:3])
    a, b = i0 * step + d[0], j0 * step + d[1]
    grid_min = np.array([a, b, 1 - a - b])
    print("solve − grid minimum:", res.rings[0].fractions - grid_min)
    np.testing.assert_allclose(res.rings[0].fractions, grid_min, atol=1e-3)
    assert res.chi2_after <= min(grid.values()) + 1e-6


def test_reported_errors_match_the_scatter_of_noise_realisations():
    """50 noise realisations: the scatter of each solved fraction is the reported σ within 30 %."""
    solved, sigmas = [], []
    start = _wrong()
    for seed in range(50):
        res = solve_composition(start, _comparison(seed=100 + seed), "inner", SPECIES)
        solved.append(res.rings[0].fractions)
        sigmas.append(res.rings[0].errors)
    solved, sigmas = np.array(solved), np.array(sigmas)
    ratio = solved.std(axis=0, ddof=1) / sigmas.mean(axis=0)
    print("scatter / reported σ per fraction:", np.round(ratio, 3))
    assert np.all(np.abs(ratio - 1) < 0.3), ratio
    # the mean is unbiased to a few σ/√50
    assert np.all(np.abs(solved.mean(axis=0) - TRUTH) < 4 * sigmas.mean(axis=0) / math.sqrt(50))


def test_errors_and_correlations_on_the_simplex():
    res = solve_composition(_wrong(), _comparison(seed=5), "inner", SPECIES)
    ring = res.rings[0]
    assert np.all(ring.errors > 0) and np.all(np.isfinite(ring.errors))
    # the fractions sum to 1, so their covariance rows sum to 0
    np.testing.assert_allclose(ring.covariance.sum(axis=1), 0.0, atol=1e-12 + 1e-9 * ring.covariance.max())
    np.testing.assert_allclose(np.diag(ring.correlation), 1.0)
    assert np.all(np.abs(ring.correlation) <= 1 + 1e-9)
    assert "± 1σ" in res.summary()


def test_unwanted_component_reaches_exactly_zero_and_drop_one():
    cmp = _comparison(seed=None)
    comps = SPECIES + ("enstatite_glass",)
    res = solve_composition(_wrong(), cmp, "inner", comps)
    fr = dict(zip(comps, res.rings[0].fractions))
    assert fr["enstatite_glass"] < 2e-3
    drop = drop_one(_wrong(), cmp, "inner", SPECIES)
    deltas = {r["component"]: r["delta_bic"] for r in drop.rows}
    assert all(d > 10 for d in deltas.values()), deltas
    for r in drop.rows:
        assert r["delta_bic"] == pytest.approx(r["delta_chi2"] - math.log(drop.full.n_points))
        assert r["delta_aic"] == pytest.approx(r["delta_chi2"] - 2)
    assert "ΔBIC" in drop.table()


def test_sigma_in_solved_too():
    cmp = _comparison(seed=None)
    start = _wrong().with_ring(0, sigma_in=3e-4)
    res = solve_composition(start, cmp, "inner", SPECIES, sigma_in=True)
    assert res.rings[0].sigma_in == pytest.approx(2e-4, rel=1e-3)
    np.testing.assert_allclose(res.rings[0].fractions, TRUTH, atol=1e-3)
    assert res.n_free == 3 and res.rings[0].sigma_in_error > 0


def test_named_alternatives_table():
    cmp = _comparison(seed=2)
    alts = swap_alternatives(["olivine_glass", "forsterite", "iron"], "iron:amorphous_carbon")
    assert list(alts) == ["with iron", "with amorphous_carbon"]
    alts["amorphous only"] = ["olivine_glass", "iron"]
    table = compare_alternatives(_wrong(), cmp, "inner", alts)
    assert table.best == "with iron"
    rows = {r["name"]: r for r in table.rows}
    assert rows["with iron"]["delta_bic"] == 0 and rows["with amorphous_carbon"]["delta_bic"] > 10
    assert rows["amorphous only"]["k"] == 1 and rows["with iron"]["k"] == 2
    n = rows["with iron"]["n"]
    assert rows["with iron"]["reduced_chi2"] == pytest.approx(rows["with iron"]["chi2"] / (n - 2))
    text = table.table()
    assert "ΔAIC" in text and "Akaike 1974" in text and "Schwarz 1978" in text


def test_refusals():
    cmp = _comparison(seed=1)
    with pytest.raises(ParameterError, match="no ring named 'middle'"):
        solve_composition(_scene(), cmp, "middle", SPECIES)
    with pytest.raises(ParameterError, match="t3phi.*not in the data"):
        solve_composition(_scene(), cmp, "inner", SPECIES, kinds=["t3phi"])
    with pytest.raises(ParameterError, match="given twice"):
        solve_composition(_scene(), cmp, "inner", ["iron", "iron"])
    with pytest.raises(Exception, match="unobtainium"):
        solve_composition(_scene(), cmp, "inner", ["iron", "unobtainium"])
    with pytest.raises(ParameterError, match="neither is among"):
        swap_alternatives(SPECIES, "pyroxene_glass:amorphous_carbon")


def test_equilibrium_ring_with_a_sublimation_edge():
    """Each species at its own temperature, the inner edge at the front of the most refractory
    one: the thin-limit columns start every species at the candidates' common front."""
    truth = _scene().with_ring(0, temperature_mode="equilibrium", inner_edge="sublimation", r_out=2.0)
    obs, spec = _data(truth, None)
    cmp = Comparison(obs, spectrum=spec)
    wrong = truth.with_ring(0, dust=_wrong().rings[0].dust)
    res = solve_composition(wrong, cmp, "inner", SPECIES)
    assert res.chi2_after < 1e-6 * res.chi2_before
    np.testing.assert_allclose(res.rings[0].fractions, TRUTH, atol=5e-4)


def test_two_rings_at_once_and_per_ring_options():
    outer = Ring(r_in=3.0, r_out=6.0, t_in=350.0, q=0.5, sigma_in=1e-3, p=0.5, name="outer",
                 dust=DustMix({"olivine_glass": 0.7, "amorphous_carbon": 0.3}, grain_size=1.5, shape="dhs"))
    truth = _scene().replace(rings=_scene().rings + (outer,))
    obs, spec = _data(truth, None)
    cmp = Comparison(obs, spectrum=spec)
    wrong = truth.with_ring(0, dust=_wrong().rings[0].dust).with_ring(
        1, dust=DustMix({"olivine_glass": 0.4, "amorphous_carbon": 0.6}, grain_size=1.5, shape="dhs"),
        sigma_in=1.5e-3)
    res = solve_composition(wrong, cmp, ["inner", "outer"],
                            {"inner": SPECIES, "outer": ["olivine_glass", "amorphous_carbon"]},
                            sigma_in={"outer": True})
    inner, out = res.rings
    np.testing.assert_allclose(inner.fractions, TRUTH, atol=1e-3)
    np.testing.assert_allclose(out.fractions, [0.7, 0.3], atol=1e-3)
    assert out.sigma_in == pytest.approx(1e-3, rel=1e-3) and inner.sigma_in_error is None
    assert res.n_free == 2 + 2


def test_cancel_returns_the_best_state_so_far():
    calls = []
    res = solve_composition(_wrong(), _comparison(seed=1), "inner", SPECIES,
                            cancel=lambda: calls.append(1) or len(calls) > 6)
    assert not res.success and res.message == "cancelled"
    assert res.chi2_after <= res.chi2_before and np.all(np.isnan(res.rings[0].errors))
