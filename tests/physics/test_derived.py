"""Derived quantities against the worked numbers of CHECK_VALUES.md and independent recomputation.

Each case names its source and keeps the CHECK_VALUES status mark.
"""
import math
import warnings

import numpy as np
import pytest
from scipy.integrate import quad

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.errors import ParameterError
from diskexplorer.physics.derived import (GapRelationWarning, angular_to_physical, dust_mass, gap_mass_ratio,
                                          gap_planet_mass, gap_width, gaps_of, kanagawa_validity,
                                          keplerian_period, optical_depth_at, physical_to_angular,
                                          sublimation_radius)

# (L [L_sun], T_s [K], Q_R, R_s [au], source). CHECK_VALUES §4 "Worked number": COMPUTED with
# astropy constants (formula of Monnier & Millan-Gabet 2002 eq. 1: FROM MEMORY). rel 1e-6.
SUBLIMATION_CASES = [
    (10.0, 1500.0, 1.0, 0.108877, "CHECK_VALUES §4 worked number (COMPUTED)"),
    (10.0, 2000.0, 1.0, 0.061243, "CHECK_VALUES §4 worked number (COMPUTED)"),
    (1.0, 1500.0, 1.0, 0.034430, "CHECK_VALUES §4 worked number (COMPUTED)"),
    (100.0, 1500.0, 1.0, 0.344300, "CHECK_VALUES §4 worked number (COMPUTED)"),
    (1000.0, 1500.0, 1.0, 1.08877, "CHECK_VALUES §4 scaling form reproduced (COMPUTED)"),
]


@pytest.mark.parametrize("lum, t_sub, q_r, expected, source", SUBLIMATION_CASES)
def test_sublimation_radius_worked_numbers(lum, t_sub, q_r, expected, source):
    assert sublimation_radius(lum, t_sub, q_r) == pytest.approx(expected, rel=1e-5), source


def test_sublimation_radius_stellar_form():
    # CHECK_VALUES §4 (COMPUTED): R* = 2 R_sun, T* = 9000 K -> L = 23.644 L_sun, R_s = 0.167417 au,
    # equal to ½ √Q_R (T*/T_s)² R* (MMG02 eq. 1, FROM MEMORY).
    star = Star(t_eff=9000.0, radius=2.0)
    assert star.luminosity == pytest.approx(23.644, rel=1e-4)
    assert sublimation_radius(star.luminosity) == pytest.approx(0.167417, rel=1e-5)
    from diskexplorer.physics.constants import AU_M, R_SUN_M
    direct = 0.5 * (9000.0 / 1500.0) ** 2 * 2.0 * R_SUN_M / AU_M
    assert sublimation_radius(star.luminosity) == pytest.approx(direct, rel=1e-12)


def test_sublimation_radius_scalings_and_forms():
    base = sublimation_radius(10.0)
    assert sublimation_radius(10.0, q_r=4.0) == pytest.approx(2.0 * base, rel=1e-14)       # ∝ √Q_R
    # ε = 1/Q_R (Dullemond & Monnier 2010 form, FROM MEMORY)
    assert sublimation_radius(10.0, epsilon=0.25) == pytest.approx(2.0 * base, rel=1e-14)
    assert sublimation_radius(10.0, backwarming=4.0) == pytest.approx(2.0 * base, rel=1e-14)
    # Kama, Min & Dominik 2009 (CONFIRMED numbers; COMPUTED inference): 47 L_sun -> 0.236 au for Q_R = 1.
    assert sublimation_radius(47.0) == pytest.approx(0.236, abs=5e-4)
    np.testing.assert_allclose(sublimation_radius(np.array([1.0, 100.0])), [0.034430, 0.344300], rtol=1e-5)
    with pytest.raises(ParameterError, match="not both"):
        sublimation_radius(10.0, q_r=2.0, epsilon=0.5)
    with pytest.raises(ParameterError, match="luminosity_lsun"):
        sublimation_radius(-1.0)


def test_angular_physical_scales():
    # CHECK_VALUES §10 (standard): 1 au at 1 pc subtends 1 arcsec = 1000 mas.
    assert angular_to_physical(1000.0, 1.0) == pytest.approx(1.0, rel=1e-14)
    assert physical_to_angular(1.0, 1.0) == pytest.approx(1000.0, rel=1e-14)
    assert angular_to_physical(5.0, 140.0) == pytest.approx(0.7, rel=1e-14)
    theta = np.array([0.5, 3.0, 20.0])
    np.testing.assert_allclose(physical_to_angular(angular_to_physical(theta, 162.0), 162.0), theta, rtol=1e-14)
    # Consistency with the star's own angular diameter (2R/d).
    star = Star(t_eff=7000.0, radius=2.0)
    from diskexplorer.physics.constants import AU_M, R_SUN_M
    assert physical_to_angular(2 * 2.0 * R_SUN_M / AU_M, 140.0) == pytest.approx(star.angular_diameter(140.0))


def test_keplerian_period():
    # Kepler's third law: 1 au around 1 M_sun is one year (to G M_sun and the Julian year, ~2e-5).
    assert keplerian_period(1.0, 1.0) == pytest.approx(1.0, rel=5e-5)
    assert keplerian_period(4.0, 1.0) == pytest.approx(8.0 * keplerian_period(1.0, 1.0), rel=1e-14)
    assert keplerian_period(1.0, 4.0) == pytest.approx(0.5 * keplerian_period(1.0, 1.0), rel=1e-14)


@pytest.mark.parametrize("p", [-1.0, 0.0, 0.5, 1.0, 1.999999, 2.0, 2.5, 3.0])
def test_dust_mass_matches_quadrature(p):
    # Independent recomputation: ∫ Σ 2π r dr by scipy quad, in g, over Earth masses (astropy).
    from diskexplorer.physics.constants import AU_M, M_EARTH_G
    ring = Ring(r_in=0.3, r_out=4.0, sigma_in=2e-3, p=p, dust=None)
    au_cm = AU_M * 100
    integral, _ = quad(lambda r: ring.surface_density(r) * 2 * math.pi * r, ring.r_in, ring.r_out,
                       epsabs=0, epsrel=1e-13, limit=200)
    assert dust_mass(ring) == pytest.approx(integral * au_cm**2 / M_EARTH_G, rel=1e-10)


def test_dust_mass_flat_ring_closed_form():
    # p = 0: Σ π (r_out² − r_in²).
    from diskexplorer.physics.constants import AU_M, M_EARTH_G
    ring = Ring(r_in=1.0, r_out=2.0, sigma_in=1e-3, p=0.0)
    expected = 1e-3 * math.pi * (4.0 - 1.0) * (AU_M * 100) ** 2 / M_EARTH_G
    assert dust_mass(ring) == pytest.approx(expected, rel=1e-13)


def test_optical_depth_at_edges():
    opacity = PowerLawOpacity()
    ring = Ring(r_in=0.5, r_out=2.0, sigma_in=1e-2, p=1.0, dust=opacity)
    kappa = float(np.asarray(opacity.kappa(np.array([10.0])))[0])
    tau_in, tau_out = optical_depth_at(ring, 10.0)
    assert tau_in == pytest.approx(1e-2 * kappa, rel=1e-14)
    assert tau_out == pytest.approx(1e-2 * kappa / 4.0, rel=1e-14)      # Σ ∝ r^-1, r_out = 4 r_in
    t60_in, _ = optical_depth_at(ring, 10.0, inclination=60.0)
    assert t60_in == pytest.approx(2.0 * tau_in, rel=1e-12)                # line of sight τ / cos i
    ti, to = optical_depth_at(ring, np.array([2.2, 10.0]))
    assert ti.shape == (2,) and to[1] == pytest.approx(tau_out)
    black = optical_depth_at(Ring(r_in=0.5, r_out=1.0, dust=None))
    assert black == (math.inf, math.inf)


# Kanagawa et al. 2016, PASJ 68, 43. CHECK_VALUES §5: exponents CONFIRMED, coefficient 0.41 FROM
# MEMORY, worked numbers COMPUTED (rel 1e-12). (q, h, alpha, Δ/R_p)
KANAGAWA_CASES = [
    (1e-3, 0.05, 1e-3, 0.689535),
    (1e-3, 0.1, 1e-3, 0.41),       # K' = 1: exactly the coefficient
    (3e-4, 0.07, 1e-3, 0.293441),
    (1e-4, 0.05, 1e-4, 0.387754),
]


@pytest.mark.parametrize("q, h, alpha, expected", KANAGAWA_CASES)
def test_gap_width_worked_numbers(q, h, alpha, expected):
    # The tabulated numbers carry 6 decimals; 0.41 is exact.
    tol = 1e-12 if expected == 0.41 else 5e-7
    assert gap_width(q, h, alpha) == pytest.approx(expected, abs=tol)
    # Independent form 0.41 K'^(1/4), K' = q² h⁻³ α⁻¹ (CHECK_VALUES §5).
    assert gap_width(q, h, alpha) == pytest.approx(0.41 * (q**2 / h**3 / alpha) ** 0.25, rel=1e-12)


def test_gap_inverse():
    # CHECK_VALUES §5 (COMPUTED): Δ/R_p = 0.5, h = 0.07, α = 1e-3 -> q = 8.710e-4, 0.912 M_J for 1 M_sun.
    q = gap_mass_ratio(0.5, 0.07, 1e-3)
    assert q == pytest.approx(8.710e-4, rel=5e-4)
    assert gap_width(q, 0.07, 1e-3) == pytest.approx(0.5, rel=1e-12)        # round trip rel 1e-12
    assert gap_planet_mass(0.5, 0.07, 1e-3, 1.0) == pytest.approx(0.912, rel=1e-3)
    assert gap_planet_mass(0.5, 0.07, 1e-3, 2.0) == pytest.approx(2 * 0.912, rel=1e-3)


def test_gap_validity_warning():
    assert kanagawa_validity(1e-3, 0.05, 1e-3) == ""
    with pytest.warns(GapRelationWarning, match="outside"):
        gap_width(1e-3, 0.3, 1e-3)
    assert "h = " in kanagawa_validity(1e-3, 0.3, 1e-3)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        gap_width(1e-3, 0.05, 1e-3)          # inside: silent
        gap_width(1e-3, 0.3, 1e-3, warn=False)


def test_gaps_of_scene():
    scene = Scene(distance=140.0, star=Star(t_eff=7000.0, radius=2.0, mass=2.0), rings=[
        Ring(r_in=3.0, r_out=5.0, name="outer"),           # listed out of order on purpose
        Ring(r_in=0.3, r_out=1.0, name="inner"),
        Ring(r_in=0.8, r_out=1.5, name="overlapping"),])
    gaps = gaps_of(scene, aspect_ratio=0.07, alpha=1e-3)
    assert len(gaps) == 1                   # inner/overlapping touch; the gap is 1.5 -> 3.0 au
    g = gaps[0]
    assert (g.inner_ring, g.outer_ring) == ("overlapping", "outer")
    assert g.width == pytest.approx(1.5) and g.centre == pytest.approx(2.25)
    assert g.width_over_r == pytest.approx(1.5 / 2.25)
    assert g.mass_ratio == pytest.approx(gap_mass_ratio(1.5 / 2.25, 0.07, 1e-3, warn=False), rel=1e-14)
    assert g.planet_mass == pytest.approx(gap_planet_mass(1.5 / 2.25, 0.07, 1e-3, 2.0, warn=False))
    assert gaps_of(scene.replace(star=None), 0.07, 1e-3, m_star=2.0)[0].planet_mass == pytest.approx(g.planet_mass)
    with pytest.raises(ParameterError, match="m_star"):
        gaps_of(scene.replace(star=None))
