"""The demo's story of minerals: iron in the inner ring, carbon in the outer (sample_data/README.md).

The sample data were made by the forward model from diskexplorer.sample.demo_scene plus
Gaussian noise with the errors the files state, so the true fractions are known: inner ring
olivine glass 0.55, pyroxene glass 0.2, forsterite 0.15, iron 0.1; outer ring olivine glass
0.5, forsterite 0.2, amorphous carbon 0.3. "Within 3σ" uses the solve's own 1σ errors
((JᵀJ)⁻¹ on the simplex); ΔBIC > 10 is the usual threshold for very strong evidence
(Kass & Raftery 1995, J. Am. Stat. Assoc. 90, 773; recalled from memory).
"""
import numpy as np
import pytest

from diskexplorer.dust import DustMix
from diskexplorer.fitting import Comparison, compare_alternatives, solve_composition, swap_alternatives
from diskexplorer.sample import demo_scene, load_sample_data

INNER = {"olivine_glass": 0.55, "pyroxene_glass": 0.2, "forsterite": 0.15, "iron": 0.1}
OUTER = {"olivine_glass": 0.5, "forsterite": 0.2, "amorphous_carbon": 0.3}


@pytest.fixture(scope="module")
def comparison():
    data = load_sample_data()
    return Comparison(data["observations"], data["photometry"], data["spectrum"])


def perturbed(ring, fractions):
    truth = demo_scene()
    mix = truth.rings[ring].dust
    return truth.with_ring(ring, dust=DustMix(fractions, grain_size=mix.grain_size, shape=mix.shape))


def within_3_sigma(solved, truth):
    got = dict(zip(solved.labels, solved.fractions))
    err = dict(zip(solved.labels, solved.errors))
    return {name: (got[name], truth[name], err[name]) for name in truth
            if not abs(got[name] - truth[name]) < 3 * err[name]}


def test_the_inner_ring_is_recovered_from_a_wrong_start_within_3_sigma(comparison):
    start = perturbed(0, {"olivine_glass": 0.25, "pyroxene_glass": 0.25, "forsterite": 0.25, "iron": 0.25})
    result = solve_composition(start, comparison, "inner", list(INNER))
    assert result.chi2_after < result.chi2_before
    (inner,) = result.rings
    assert np.all(inner.errors > 0)
    assert not within_3_sigma(inner, INNER)


def test_iron_beats_carbon_in_the_inner_ring(comparison):
    alternatives = swap_alternatives(list(INNER), "iron:amorphous_carbon")
    table = compare_alternatives(demo_scene(), comparison, "inner", alternatives)
    rows = {r["name"]: r for r in table.rows}
    assert table.best == "with iron"
    assert rows["with amorphous_carbon"]["delta_bic"] > 10.0


def test_carbon_in_the_outer_ring_is_recovered_within_3_sigma_but_loosely(comparison):
    # Recovered, but the data pin the outer ring's mixture about a hundred times less well
    # than the inner ring's (σ 0.1-0.25 against ~0.001): at 3.6-8.5 au it is resolved out
    # on all but the shortest baselines, and at 10 µm it is optically thick (its species'
    # thin shares add up to ~3 times its flux, observables.species_parts), so the band's
    # contrast, not its depth, carries the mixture. The test records that, too.
    start = perturbed(1, {"olivine_glass": 0.4, "forsterite": 0.4, "amorphous_carbon": 0.2})
    result = solve_composition(start, comparison, "outer", list(OUTER))
    (outer,) = result.rings
    assert not within_3_sigma(outer, OUTER)
    inner = solve_composition(demo_scene(), comparison, "inner", list(INNER)).rings[0]
    assert np.min(outer.errors) > 20 * np.max(inner.errors)
