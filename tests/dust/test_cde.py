"""The continuous distribution of ellipsoids (CDE) against a direct shape average."""
import numpy as np
import pytest
from scipy.integrate import dblquad

from diskexplorer.dust import cde_cabs_per_volume, ellipsoid_cabs_per_volume, sphere_rayleigh_cabs_per_volume
from diskexplorer.dust.cde import cde_bracket
from diskexplorer.errors import DustError

# CHECK_VALUES §2 (closed form B&H 1983 eq. 12.36, CONFIRMED secondary; numbers COMPUTED with
# scipy dblquad): Im[2ε ln ε/(ε−1)] for these ε. Tolerance rel 1e-10.
CDE_TABLE = [
    (2.24 + 0.30j, 0.168557740110),
    (-5 + 1j, 4.845462791185),
    (-2 + 0.5j, 3.836131393440),
    (10 + 10j, 1.356177505114),
    (2 + 0.01j, 0.006137026017),
]


@pytest.mark.parametrize("eps, expected", CDE_TABLE)
def test_cde_closed_form_matches_tabulated_values(eps, expected):
    assert np.imag(cde_bracket(eps)) == pytest.approx(expected, rel=1e-10)


@pytest.mark.parametrize("eps, expected", CDE_TABLE)
def test_cde_equals_numerical_average_over_ellipsoid_shapes(eps, expected):
    # Independent recomputation (CHECK_VALUES §2, COMPUTED): average the randomly oriented
    # ellipsoid (B&H p. 354) over L1, L2 uniform on the triangle L1 + L2 ≤ 1 (density 2).
    lam = 10.0
    k = 2 * np.pi / (lam * 1e-4)
    inv = 1.0 / (complex(eps) - 1.0)

    def integrand(l2, l1):  # plain complex arithmetic: dblquad calls this ~10⁵ times
        l3 = 1.0 - l1 - l2
        return 2.0 / 3.0 * (1.0 / (l1 + inv) + 1.0 / (l2 + inv) + 1.0 / (l3 + inv)).imag

    val, _ = dblquad(integrand, 0.0, 1.0, 0.0, lambda l1: 1.0 - l1, epsabs=1e-13, epsrel=1e-12)
    # the library's ellipsoid formula agrees with the inline one at a sample shape
    assert ellipsoid_cabs_per_volume(eps, lam, 0.2, 0.3) / k == pytest.approx(
        (1 / (0.2 + inv) + 1 / (0.3 + inv) + 1 / (0.5 + inv)).imag / 3, rel=1e-12)
    assert val == pytest.approx(expected, rel=1e-9)
    assert cde_cabs_per_volume(eps, lam) / k == pytest.approx(val, rel=1e-9)


def test_cde_worked_opacity():
    # CHECK_VALUES §2 worked opacity (COMPUTED): ε = (1.5+0.1i)², λ = 10 µm:
    # CDE 1059.0795 cm⁻¹, sphere 938.9515 cm⁻¹; with ρ = 3.3 g/cm³ 320.93 and 284.53 cm²/g.
    eps = (1.5 + 0.1j) ** 2
    cde = cde_cabs_per_volume(eps, 10.0)
    sph = sphere_rayleigh_cabs_per_volume(eps, 10.0)
    assert cde == pytest.approx(1059.0795, rel=1e-7)
    assert sph == pytest.approx(938.9515, rel=1e-7)
    assert cde / 3.3 == pytest.approx(320.93, rel=1e-5)
    assert sph / 3.3 == pytest.approx(284.53, rel=1e-5)


def test_sphere_is_ellipsoid_with_equal_depolarisation_factors():
    # CHECK_VALUES §1.4: the sphere formula is the ellipsoid one with L1 = L2 = L3 = 1/3.
    eps = np.array([2.24 + 0.3j, -2 + 0.5j, 10 + 10j])
    np.testing.assert_allclose(ellipsoid_cabs_per_volume(eps, 10.0, 1 / 3, 1 / 3),
                               sphere_rayleigh_cabs_per_volume(eps, 10.0), rtol=1e-12)


def test_cde_sign_convention_is_enforced():
    # CHECK_VALUES §2 sign/branch: ε″ < 0 would flip the sign (−0.168557740); we refuse it.
    with pytest.raises(DustError, match="ε″ < 0"):
        cde_cabs_per_volume(2.24 - 0.30j, 10.0)


def test_cde_series_near_one():
    # CHECK_VALUES §2 removable singularity (COMPUTED): series and direct agree at δ = 1e-7+1e-8i.
    d = 1e-7 + 1e-8j
    series = cde_bracket(1 + d)
    exact = 2 + d - d ** 2 / 3 + d ** 3 / 6
    assert abs(series - exact) < 1e-15
    # Just outside the series region the closed form is used and agrees with the series to O(δ⁴).
    d = 2e-4 + 1e-5j
    assert abs(cde_bracket(1 + d) - (2 + d - d ** 2 / 3 + d ** 3 / 6)) < 1e-12


@pytest.mark.parametrize("delta", [0.01 + 0.001j, 0.04 + 0.01j, 0.02 + 0.02j])
def test_cde_and_sphere_differ_by_delta_cubed_over_18(delta):
    # CHECK_VALUES §2 (derived, COMPUTED): (CDE − 2) − 3δ/(3+δ) ≈ δ³/18; ratio − 1 < 0.05.
    diff = (cde_bracket(1 + delta) - 2) - 3 * delta / (3 + delta)
    assert abs(diff / (delta ** 3 / 18) - 1) < 0.05


def test_cde_is_size_independent_in_kappa_abs():
    from diskexplorer.dust import OpticalConstants, kappa_abs
    oc = OpticalConstants(np.array([5.0, 15.0]), np.array([1.5, 1.5]), np.array([0.1, 0.1]))
    a = kappa_abs(oc, 3.0, [10.0], method="cde", grain_size=0.1)
    b = kappa_abs(oc, 3.0, [10.0], method="cde", grain_size=5.0)
    assert a == pytest.approx(b, rel=0)
    assert a[0] == pytest.approx(1059.0795 / 3.0, rel=1e-7)
