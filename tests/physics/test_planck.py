"""The Planck function against astropy's BlackBody and tabulated values."""
import astropy.units as u
import numpy as np
import pytest
from astropy.modeling.models import BlackBody

from diskexplorer.physics.planck import planck_lambda, planck_nu


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # astropy itself overflows at 10 K, 0.1 µm
@pytest.mark.parametrize("temperature", [10.0, 300.0, 1500.0, 5772.0, 30000.0])
def test_planck_matches_astropy_blackbody(temperature):
    # Reference: astropy.modeling.models.BlackBody (CHECK_VALUES §6, CONFIRMED), rel 1e-6.
    lam = np.geomspace(0.1, 1000.0, 400)
    ref = BlackBody(temperature=temperature * u.K)(lam * u.um).to_value(u.Jy / u.sr)
    ours = planck_nu(lam, temperature)
    big = ref > 1e-300  # astropy underflows to 0 where we do too
    np.testing.assert_allclose(ours[big], ref[big], rtol=1e-6)


def test_planck_astropy_docstring_value():
    # astropy BlackBody docstring: 5000 K at 6000 Å = 1.53254685e-05 erg/(Hz s sr cm2) (CONFIRMED).
    value = planck_nu(0.6, 5000.0) * 1e-23  # Jy -> erg s-1 cm-2 Hz-1
    assert value == pytest.approx(1.53254685e-05, rel=1e-8)


def test_planck_disk_relevant_numbers():
    # CHECK_VALUES §6, COMPUTED with astropy 8.0.2: B_nu(1500 K) in 1e16 Jy/sr.
    lam = [1.25, 1.65, 2.2, 3.5, 4.6, 10, 12, 22]
    ref = [0.9463027, 2.650308, 4.829820, 6.392632, 5.792769, 2.468297, 1.878327, 0.6827318]
    np.testing.assert_allclose(planck_nu(lam, 1500.0) / 1e16, ref, rtol=1e-6)


def test_planck_is_overflow_safe_over_the_whole_range():
    lam = np.geomspace(0.1, 1000.0, 300)[:, None]
    temp = np.geomspace(10.0, 30000.0, 300)[None, :]
    with np.errstate(all="raise"):
        b = planck_nu(lam, temp)
    assert np.all(np.isfinite(b)) and np.all(b >= 0)
    # Rayleigh-Jeans limit 2 k T / lambda^2 (standard textbook form; FROM MEMORY) at 1 mm, 30000 K (x = 4.8e-4)
    rj = 2 * 1.380649e-23 * 30000.0 / (1e-3) ** 2 / 1e-26
    assert planck_nu(1000.0, 30000.0) == pytest.approx(rj, rel=5e-4)


def test_planck_lambda_relation_and_wien_peak():
    # B_lambda = B_nu c / lambda^2 (CHECK_VALUES §6), peak at b/T = 1.931848 µm for 1500 K (COMPUTED).
    lam = np.linspace(1.5, 2.5, 200001)
    peak = lam[np.argmax(planck_lambda(lam, 1500.0))]
    assert peak == pytest.approx(1.931848, abs=1e-5)
    assert planck_lambda(2.2, 1500.0) == pytest.approx(2.991619e4, rel=1e-6)
