"""Refinement on the noisy sample data lands within 3σ of the true scene (sample_data/README.md)."""
import numpy as np

from diskexplorer.fitting import Comparison, read_start, refine
from diskexplorer.fitting.paths import get_value
from diskexplorer.sample import START_FREE, demo_scene, load_sample_data, sample_data_dir, SAMPLE_FILES


def test_sample_start_document_is_the_true_scene():
    start = read_start(sample_data_dir() / SAMPLE_FILES["start"])
    assert start.scene == demo_scene()
    assert sorted(f.path for f in start.free) == sorted(START_FREE)
    # its data load and give the recorded χ²
    result = start.comparison().compare(start.scene)
    assert result.total == __import__("pytest").approx(start.judgement["total"], rel=1e-9)


def test_refinement_from_a_perturbed_start_lands_within_3_sigma():
    data = load_sample_data()
    comparison = Comparison(data["observations"], data["photometry"], data["spectrum"])
    truth = demo_scene()
    start = truth.with_ring(0, r_in=0.36, t_in=1420.0).with_ring(1, t_in=330.0).replace(
        inclination=38.0, position_angle=128.0)
    result = refine(start, comparison, free=list(START_FREE))
    assert result.chi2_after < result.chi2_before
    sigma = np.sqrt(np.diag(result.covariance))
    for k, par in enumerate(result.parameters):
        path = par.path
        got, true = get_value(result.scene, path), get_value(truth, path)
        assert abs(got - true) < 3 * sigma[k], (path, got, true, sigma[k])
