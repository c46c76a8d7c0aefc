"""Sphere optics: miepython wrapper, Rayleigh limit, our coated sphere and DHS."""
import numpy as np
import pytest

from diskexplorer.dust import (coated_efficiencies, dhs_cabs_per_volume, mie_cabs_per_volume,
                               mie_efficiencies, sphere_rayleigh_cabs_per_volume)
from diskexplorer.dust.coated import hollow_sphere_radii
from diskexplorer.errors import DustError

X_BH = 2 * np.pi * 0.525 / 0.6328  # CHECK_VALUES §1.2: 5.212819668567 (COMPUTED)


def test_bohren_huffman_appendix_a_example():
    # Bohren & Huffman 1983 App. A worked example, quoted in CHECK_VALUES §1.2 (CONFIRMED via
    # scottprahl/miepython tests): m = 1.55, λ = 0.6328 µm, a = 0.525 µm. Tolerance abs 1e-5.
    qext, qsca, qabs, qback, g = mie_efficiencies(1.55, X_BH)
    assert qext == pytest.approx(3.10543, abs=1e-5)
    assert qsca == pytest.approx(3.10543, abs=1e-5)
    assert qback == pytest.approx(2.92534, abs=1e-5)
    assert g == pytest.approx(0.63314, abs=1e-5)
    assert abs(qabs) < 1e-10


def test_absorbing_regression_value_and_sign_convention():
    # CHECK_VALUES §1.2 absorbing variant (CONFIRMED as a miepython regression value): m = 1.55 + 0.1i
    # in our n + ik convention (miepython's 1.55 − 0.1j). Tolerance abs 1e-7.
    qext, qsca, qabs, qback, g = mie_efficiencies(1.55 + 0.1j, X_BH)
    assert qext == pytest.approx(2.86165188243, abs=1e-7)
    assert qsca == pytest.approx(1.66424911991, abs=1e-7)
    assert qback == pytest.approx(0.20599534080, abs=1e-7)
    assert g == pytest.approx(0.80128972639, abs=1e-7)
    with pytest.raises(DustError, match="k ≥ 0"):
        mie_efficiencies(1.55 - 0.1j, X_BH)


@pytest.mark.parametrize("m, x, qsca, g", [
    # Wiscombe MIEV0 cases 7, 14, 17 as quoted in CHECK_VALUES §1.3 (CONFIRMED, secondary), abs 1e-6.
    (0.75, 10.0, 2.232265, 0.896473),
    (1.5 + 1j, 1.0, 0.6634538, 0.192136),
    (10 + 10j, 1.0, 2.049405, -0.110664),
])
def test_wiscombe_cases(m, x, qsca, g):
    out = mie_efficiencies(m, x)
    assert out[1] == pytest.approx(qsca, abs=1e-6)
    assert out[4] == pytest.approx(g, abs=1e-6)


@pytest.mark.parametrize("x, rtol", [(1e-3, 1e-5), (1e-2, 1e-3)])
def test_small_sphere_limit_is_rayleigh(x, rtol):
    # CHECK_VALUES §1.4 (formula FROM MEMORY, numbers COMPUTED): C_abs/V → 3 (2π/λ) Im[(ε−1)/(ε+2)],
    # ε = (1.5+0.1i)², ratio 1.0000006 at x = 1e-3 and 1.000056 at x = 1e-2.
    lam = 10.0
    a = x * lam / (2 * np.pi)
    mie = mie_cabs_per_volume(1.5 + 0.1j, a, np.array([lam]))[0]
    ray = sphere_rayleigh_cabs_per_volume((1.5 + 0.1j) ** 2, lam)
    assert mie / ray == pytest.approx(1.0, rel=rtol)
    # CHECK_VALUES §1.4 worked number (COMPUTED): 938.95 cm⁻¹ at 10 µm, rel 1e-12 (we check 1e-6
    # because the quoted value has 5 digits).
    assert ray == pytest.approx(938.9515, rel=1e-6)


M_CASES = np.array([1.55 + 0j, 1.5 + 0.1j, 1.7 + 0.5j, 5 + 30j, 1.33 + 1e-5j, 2.5 + 0.3j, 0.9 + 2.0j])


@pytest.mark.parametrize("y", [0.3, 1.0, X_BH, 30.0, 150.0])
def test_coated_with_core_of_shell_material_is_homogeneous(y):
    # Reference: miepython (CHECK_VALUES §1, COMPUTED): a core of the shell's material is a
    # homogeneous sphere. rel 1e-9 (both are exact series; differences are round-off).
    qc = coated_efficiencies(M_CASES, M_CASES, 0.6 * y, y)
    qm = mie_efficiencies(M_CASES, y)
    np.testing.assert_allclose(qc[0], qm[0], rtol=1e-9)
    np.testing.assert_allclose(qc[1], qm[1], rtol=1e-9)
    np.testing.assert_allclose(qc[3], qm[3], rtol=1e-8, atol=1e-12)


@pytest.mark.parametrize("y", [1.0, X_BH, 30.0, 150.0])
def test_coated_vanishing_core_is_homogeneous(y):
    # Reference: miepython (COMPUTED). A vacuum core of radius 1e-4 of the outer radius leaves
    # a homogeneous sphere of the shell material (the core's effect is O((x/y)^3) = 1e-12).
    qc = coated_efficiencies(1.0, M_CASES, 1e-4 * y, y)
    qm = mie_efficiencies(M_CASES, y)
    np.testing.assert_allclose(qc[0], qm[0], rtol=1e-8)
    np.testing.assert_allclose(qc[1], qm[1], rtol=1e-8)


@pytest.mark.parametrize("y", [0.3, X_BH, 30.0])
def test_coated_vanishing_shell_is_core_sphere(y):
    # Reference: miepython (COMPUTED). A shell of thickness 1e-10 y is invisible.
    qc = coated_efficiencies(M_CASES, 1.4 + 0.01j, y * (1 - 1e-10), y)
    qm = mie_efficiencies(M_CASES, y)
    np.testing.assert_allclose(qc[0], qm[0], rtol=1e-8)


def test_coated_small_particle_matches_two_layer_dipole():
    # Independent check (B&H 1983 §5.4, FROM MEMORY for the formula; it follows from
    # electrostatics): a small coated sphere has polarisability α/b³ =
    # [(ε2−1)(ε1+2ε2) + q(ε1−ε2)(1+2ε2)] / [(ε2+2)(ε1+2ε2) + q(2ε2−2)(ε1−ε2)], q = (a/b)³,
    # and Q_abs = 4y Im(α/b³) in the limit y → 0. rel 1e-4 at y = 1e-3.
    e1, e2 = 1.0 + 0j, (1.7 + 0.3j) ** 2
    y, ratio = 1e-3, 0.8
    q = ratio ** 3
    alpha = ((e2 - 1) * (e1 + 2 * e2) + q * (e1 - e2) * (1 + 2 * e2)) / \
            ((e2 + 2) * (e1 + 2 * e2) + q * (2 * e2 - 2) * (e1 - e2))
    qabs = coated_efficiencies(np.sqrt(e1), np.sqrt(e2), ratio * y, y)[2]
    assert qabs == pytest.approx(4 * y * alpha.imag, rel=1e-4)


def test_coated_nonabsorbing_has_no_absorption_and_matches_extinction_paradox():
    # Physics (CHECK_VALUES §1.3 notes): Q_abs ≡ 0 for real indices; Q_ext → 2 for large spheres.
    q = coated_efficiencies(1.2, 1.5, np.array([0.5, 5.0, 50.0]), np.array([1.0, 10.0, 100.0]))
    np.testing.assert_allclose(q[2], 0.0, atol=1e-10)
    q = coated_efficiencies(1.0 + 0j, 1.5 + 1j, 1000.0, 2000.0)
    assert q[0] == pytest.approx(2.0, abs=0.02)


def test_coated_refuses_bad_geometry():
    with pytest.raises(DustError, match="x_core ≤ x_shell"):
        coated_efficiencies(1.0, 1.5, 2.0, 1.0)


def test_dhs_reduces_to_mie_without_vacuum_and_is_converged():
    # DHS with f_max → 0 is a homogeneous sphere (miepython, COMPUTED), rel 1e-6; 16 vs 32 nodes
    # agree to 0.5% (quadrature convergence of the average over the vacuum fraction).
    lam = np.geomspace(0.3, 100, 60)
    m = np.full(lam.shape, 1.7 + 0.1j)
    for a in (0.1, 1.5):
        tiny = dhs_cabs_per_volume(m, a, lam, f_max=1e-9, n_fractions=2)
        np.testing.assert_allclose(tiny, mie_cabs_per_volume(m, a, lam), rtol=1e-6)
        k16 = dhs_cabs_per_volume(m, a, lam, n_fractions=16)
        k32 = dhs_cabs_per_volume(m, a, lam, n_fractions=32)
        np.testing.assert_allclose(k16, k32, rtol=5e-3)


def test_hollow_sphere_keeps_material_volume():
    outer, core = hollow_sphere_radii(1.5, np.array([0.0, 0.4, 0.8]))
    np.testing.assert_allclose(outer ** 3 - core ** 3, 1.5 ** 3, rtol=1e-12)
    np.testing.assert_allclose((core / outer) ** 3, [0.0, 0.4, 0.8], atol=1e-12)


def test_power_law_size_distribution_is_mass_weighted():
    # n(a) ∝ a^-p on [a_min, a_max]: κ = Σ w_i (C_abs/V)(a_i)/ρ with w ∝ a^(4−p) d ln a
    # (mass per logarithmic bin). A single size is the degenerate case.
    from diskexplorer.dust import OpticalConstants, PowerLawSizes, kappa_abs
    oc = OpticalConstants(np.array([0.2, 200.0]), np.array([1.7, 1.7]), np.array([0.05, 0.05]))
    lam = np.array([1.0, 10.0])
    dist = PowerLawSizes(0.1, 1.0, p=3.5, n_sizes=12)
    a, w = dist.radii_and_mass_weights()
    assert w.sum() == pytest.approx(1.0)
    assert w[-1] / w[0] == pytest.approx((a[-1] / a[0]) ** 0.5, rel=1e-12)  # a^(4−3.5), equal bins
    manual = sum(wi * mie_cabs_per_volume(oc.m(lam), ai, lam) for ai, wi in zip(a, w)) / 3.0
    np.testing.assert_allclose(kappa_abs(oc, 3.0, lam, method="mie", sizes=dist), manual, rtol=1e-12)
    single = kappa_abs(oc, 3.0, lam, method="mie", sizes=PowerLawSizes(0.5, 0.5))
    np.testing.assert_allclose(single, kappa_abs(oc, 3.0, lam, method="mie", grain_size=0.5), rtol=1e-12)
    with pytest.raises(DustError, match="a_min ≤ a_max"):
        PowerLawSizes(1.0, 0.1)
