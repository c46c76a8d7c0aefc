"""Local refinement: recovery of the truth from noise-free synthetic data, callbacks, purity."""
import numpy as np
import pytest

from diskexplorer.errors import ParameterError
from diskexplorer.fitting import Comparison, free_parameters, refine

from fitting_cases import FREE, perturbed, synthetic_data, true_scene

TRUTH = true_scene()
OBS, PHOT = synthetic_data(TRUTH)


@pytest.fixture(scope="module")
def comparison():
    return Comparison(OBS, PHOT)


@pytest.fixture(scope="module")
def recovered(comparison):
    start = perturbed(TRUTH)
    return start, refine(start, comparison, FREE)


def test_recovers_true_parameters(recovered):
    start, res = recovered
    assert res.success, res.message
    truth = [0.3, 1500.0, 40.0, 30.0, 600.0]  # r_in au, T_in K, i deg, PA deg, outer T_in K
    got = [p.value for p in res.parameters]
    np.testing.assert_allclose(got, truth, rtol=1e-3)
    assert [p.path for p in res.parameters] == FREE
    assert res.chi2_before > 1e3 and res.chi2_after < 1e-6
    assert res.scene.rings[0].r_in == pytest.approx(0.3, rel=1e-3)


def test_covariance_is_positive_and_in_physical_units(recovered):
    _, res = recovered
    cov = res.covariance
    assert cov.shape == (5, 5)
    np.testing.assert_allclose(cov, cov.T, rtol=1e-8, atol=1e-300)
    assert np.all(np.linalg.eigvalsh(cov) > 0)
    err = res.uncertainties
    # r_in is fitted in ln r: its error must come back in au (≪ the value), not in ln units
    assert 0 < err[0] < 0.01 and 0 < err[1] < 50 and 0 < err[2] < 1


def test_returns_a_new_scene_and_leaves_the_input_alone(recovered):
    start, res = recovered
    assert res.scene is not start
    assert start == perturbed(TRUTH)                 # frozen dataclasses: value unchanged
    assert start.rings[0].r_in == 0.33 and start.inclination == 35.0


def test_accepts_a_dict_of_data_and_reports_progress():
    seen = []
    start = TRUTH.replace(inclination=36.0)
    res = refine(start, dict(observations=OBS, photometry=PHOT), ["geometry.inclination"],
                 progress=lambda i, chi2: seen.append((i, chi2)))
    assert res.parameters[0].value == pytest.approx(40.0, rel=1e-4)
    assert [i for i, _ in seen] == list(range(1, len(seen) + 1))
    chi2s = [c for _, c in seen]
    assert all(b <= a for a, b in zip(chi2s, chi2s[1:]))   # best-so-far is monotone
    assert res.nfev == len(seen)


def test_cancel_stops_cleanly_with_the_best_so_far(comparison):
    calls = {"n": 0}

    def cancel():
        calls["n"] += 1
        return calls["n"] > 6

    start = perturbed(TRUTH)
    res = refine(start, comparison, FREE, cancel=cancel)
    assert not res.success and "cancelled" in res.message
    assert res.nfev == 6 and res.covariance is None
    assert res.chi2_after <= res.chi2_before


def test_bounds_are_respected_and_radii_stay_ordered(comparison):
    start = perturbed(TRUTH)
    res = refine(start, comparison, ["rings.0.r_in", "rings.0.r_out", "geometry.inclination"],
                 bounds={"geometry.inclination": (30.0, 38.0)}, max_nfev=30)
    inc = res.parameters[2].value
    assert 30.0 <= inc <= 38.0     # the truth (40°) lies outside the bounds
    assert inc > 36.0              # pulled towards the truth, to the upper side of the box
    assert res.chi2_after < res.chi2_before
    assert res.scene.rings[0].r_in < res.scene.rings[0].r_out


def test_bad_inputs():
    with pytest.raises(ParameterError, match="data must be a Comparison"):
        refine(TRUTH, [OBS], FREE)
    with pytest.raises(ParameterError, match="unknown key"):
        refine(TRUTH, dict(obs=OBS), FREE)
    fps = free_parameters(TRUTH, ["rings[inner].t_in"], bounds={"rings.0.t_in": (1000, 2000)})
    res = refine(TRUTH.with_ring(0, t_in=1450.0), dict(observations=OBS), fps)
    assert res.parameters[0].value == pytest.approx(1500.0, rel=1e-4)
