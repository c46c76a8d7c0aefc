"""The visibility engine against analytic visibilities and symmetry rules.

Analytic forms (CHECK_VALUES §3): uniform disk V = 2 J1(x)/x and infinitesimal ring
V = J0(x) with x = π θ B/λ (standard textbook forms, e.g. Lawson (ed.) 2000,
Principles of Long Baseline Stellar Interferometry; Berger & Segransan 2007).
"""
import math

import numpy as np
import pytest
from scipy import special

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.observables import Evaluator, direct_visibility
from diskexplorer.observables.image import point_source_visibility
from diskexplorer.physics.constants import ARCSEC_RAD, RAD_PER_MAS


def uniform_disk(x):
    return np.where(x > 0, 2 * special.j1(x) / np.where(x > 0, x, 1), 1.0)


def annulus(theta1, theta2, rho):
    """Analytic annulus: (r2² V_UD(r2) − r1² V_UD(r1)) / (r2² − r1²)."""
    v1 = uniform_disk(2 * math.pi * theta1 * rho)
    v2 = uniform_disk(2 * math.pi * theta2 * rho)
    return (theta2**2 * v2 - theta1**2 * v1) / (theta2**2 - theta1**2)


def thick_isothermal_ring(r_in, r_out, **kw):
    # q = 0: isothermal; dust=None: optically thick, so I = B(T) exactly, a uniform annulus.
    return Ring(r_in=r_in, r_out=r_out, t_in=1200.0, q=0.0, dust=None, **kw)


@pytest.mark.parametrize("r_in, r_out, distance", [(0.3, 0.6, 140.0), (1.0, 4.0, 100.0), (0.05, 0.5, 50.0)])
def test_thick_isothermal_ring_equals_analytic_annulus(r_in, r_out, distance):
    # Issue check: |V| equal to the analytic annulus to 1e-4 from 0 to 300 Mλ.
    scene = Scene(distance=distance, rings=[thick_isothermal_ring(r_in, r_out)])
    wl = 2.2
    rho = np.linspace(0, 300e6, 3001)
    b = rho * wl * 1e-6
    pa = np.radians(37.0)
    vis = scene.visibility(b * np.sin(pa), b * np.cos(pa), wl)
    rad_per_au = ARCSEC_RAD / distance
    ref = annulus(r_in * rad_per_au, r_out * rad_per_au, rho)
    assert np.max(np.abs(np.abs(vis) - np.abs(ref))) < 1e-4
    assert np.max(np.abs(vis - ref)) < 1e-4


def test_thin_ring_limit_is_j0():
    # Infinitesimal ring of diameter θ: V = J0(π θ B/λ) (CHECK_VALUES §3, formula FROM MEMORY,
    # COMPUTED limit). Worked point: θ = 1 mas, B = 100 m, λ = 2.2 µm -> 0.8837179336.
    distance = 100.0
    r = 0.5 * 1.0 * RAD_PER_MAS / (ARCSEC_RAD / distance)  # radius in au for θ = 1 mas
    scene = Scene(distance=distance, rings=[thick_isothermal_ring(r * (1 - 1e-5), r * (1 + 1e-5))])
    assert scene.visibility(100.0, 0.0, 2.2).real == pytest.approx(0.8837179336, abs=1e-6)


def test_uniform_disk_star_worked_point():
    # UD of θ = 1 mas at B = 100 m, λ = 2.2 µm: 0.9412725651 (CHECK_VALUES §3, COMPUTED).
    distance = 10.0
    radius_rsun = 0.5 * 1.0 * RAD_PER_MAS / ARCSEC_RAD * distance * 215.032  # rough, refined below
    star = Star(t_eff=5000.0, radius=radius_rsun)
    theta = star.angular_diameter(distance)
    star = Star(t_eff=5000.0, radius=radius_rsun / theta)  # exactly 1 mas
    assert star.angular_diameter(distance) == pytest.approx(1.0, rel=1e-12)
    vis = Scene(distance=distance, star=star).visibility(0.0, 100.0, 2.2)
    assert vis.real == pytest.approx(0.9412725651, abs=1e-9)
    point = Scene(distance=distance, star=Star(t_eff=5000.0, radius=1.0, uniform_disk=False))
    assert point.visibility(0.0, 100.0, 2.2) == 1.0


def test_binary_vector_pins_fourier_sign():
    # CHECK_VALUES §3.1 (COMPUTED): fluxes 1 and 0.5, companion at (+3, +1) mas (x East, y North),
    # λ = 2.2 µm, (u1, v1) = (40, 10) m/λ, (u2, v2) = (−10, 60) m/λ -> CP = −6.923196500717°
    # under V = Σ F exp(−2πi(u x + v y)), the convention the engine and images use.
    lam = 2.2e-6
    u = np.array([40.0, -10.0, -30.0]) / lam
    v = np.array([10.0, 60.0, -70.0]) / lam
    vis = point_source_visibility([1.0, 0.5], [0.0, 3.0], [0.0, 1.0], u, v)
    assert math.degrees(np.angle(np.prod(vis))) == pytest.approx(-6.923196500717, abs=1e-9)


def demo_scene(**kw):
    opacity = PowerLawOpacity(kappa_ref=2000.0, wavelength_ref=10.0, beta=1.0)
    rings = [Ring(r_in=0.35, r_out=0.8, t_in=1450.0, q=0.5, sigma_in=3e-3, p=1.0, dust=opacity, name="inner"),
             Ring(r_in=3.0, r_out=6.0, t_in=350.0, q=0.45, sigma_in=1e-2, p=0.5, dust=opacity,
                  c1=0.35, s1=-0.2, name="outer")]
    base = dict(distance=130.0, star=Star(t_eff=7200.0, radius=2.1), rings=rings,
                inclination=48.0, position_angle=62.0, extended_fraction=0.05)
    base.update(kw)
    return Scene(**base)


def random_baselines(n, seed=0, bmax=130.0):
    rng = np.random.default_rng(seed)
    wl = rng.choice(np.concatenate([np.linspace(1.5, 2.5, 8), np.linspace(3.0, 5.0, 20),
                                    np.linspace(8.0, 13.0, 30)]), n)
    b = rng.uniform(5.0, bmax, n)
    a = rng.uniform(0, 2 * np.pi, n)
    return b * np.sin(a), b * np.cos(a), wl


def test_zero_baseline_is_one_and_total_flux_is_sum_of_components():
    scene = demo_scene()
    assert np.allclose(scene.replace(extended_fraction=0.0).visibility(0.0, 0.0, [1.6, 2.2, 3.5, 10.0]),
                       1.0, atol=1e-14)
    # The extended component is fully resolved (V = 0 at every baseline, by definition).
    assert np.allclose(scene.visibility(0.0, 0.0, [1.6, 10.0]), 0.95, atol=1e-14)
    comps = scene.sed_components([1.6, 2.2, 3.5, 10.0])
    parts = comps["star"] + comps["inner"] + comps["outer"] + comps["extended"]
    np.testing.assert_allclose(comps["total"], parts, rtol=1e-14)
    np.testing.assert_allclose(comps["extended"], 0.05 * comps["total"], rtol=1e-12)


def test_ring_flux_matches_independent_quadrature():
    # F = cos i ∫ B(T) (1 - exp(-τ/cos i)) 2π r dr / d², integrated with scipy.integrate.quad.
    from scipy.integrate import quad
    from diskexplorer.physics.planck import planck_nu
    scene = demo_scene(star=None, extended_fraction=0.0)
    ring = scene.rings[0]
    cos_i = math.cos(math.radians(scene.inclination))
    rad_per_au = ARCSEC_RAD / scene.distance
    for lam in (2.2, 10.0):
        kap = ring.dust.kappa(lam)
        f = lambda r: planck_nu(lam, ring.temperature(r)) * -math.expm1(-ring.surface_density(r) * kap / cos_i) * 2 * math.pi * r
        ref = cos_i * quad(f, ring.r_in, ring.r_out, epsrel=1e-12)[0] * rad_per_au**2
        assert scene.sed_components(lam)["inner"] == pytest.approx(ref, rel=1e-9)


def test_engine_matches_direct_bessel_sum():
    scene = demo_scene()
    u, v, wl = random_baselines(3000)
    fast = scene.visibility(u, v, wl)
    slow = direct_visibility(scene, u, v, wl, accuracy=3)
    assert np.max(np.abs(fast - slow)) < 1e-5


def test_inclined_minor_axis_equals_face_on_at_rho_cos_i():
    scene = demo_scene(extended_fraction=0.0)
    face_on = scene.replace(inclination=0.0)
    cos_i = math.cos(math.radians(scene.inclination))
    pa = math.radians(scene.position_angle)
    b = np.linspace(0, 130, 200)
    # minor axis direction: PA + 90°
    u_min, v_min = b * math.cos(pa), -b * math.sin(pa)
    # The star is not inclined, and ring emissivities depend on τ/cos i: use optically thick
    # rings and no star so the only effect of inclination is the projection.
    thick = [Ring(r_in=r.r_in, r_out=r.r_out, t_in=r.t_in, q=r.q, dust=None) for r in scene.rings]
    inc = scene.replace(rings=thick, star=None)
    flat = face_on.replace(rings=thick, star=None)
    v_inc = inc.visibility(u_min, v_min, 2.2)
    v_flat = flat.visibility(u_min * cos_i, v_min * cos_i, 2.2)
    np.testing.assert_allclose(v_inc, v_flat, atol=1e-6)
    # and along the major axis, nothing changes
    u_maj, v_maj = b * math.sin(pa), b * math.cos(pa)
    np.testing.assert_allclose(inc.visibility(u_maj, v_maj, 2.2), flat.visibility(u_maj, v_maj, 2.2), atol=1e-6)


def test_pa_rotation_by_180_keeps_vis2_and_flips_closure_phase():
    scene = demo_scene()
    turned = scene.replace(position_angle=scene.position_angle + 180.0)
    u, v, wl = random_baselines(500, seed=3)
    np.testing.assert_allclose(turned.vis2(u, v, wl), scene.vis2(u, v, wl), atol=1e-10)
    u2, v2, _ = random_baselines(500, seed=4)
    cp = scene.closure_phase(u, v, u2, v2, wl)
    cp_t = turned.closure_phase(u, v, u2, v2, wl)
    assert np.max(np.abs(cp)) > 1.0  # the modulated ring makes closure phases non-zero
    np.testing.assert_allclose(cp_t, -cp, atol=1e-6)


def test_unmodulated_scene_has_zero_closure_phase():
    scene = demo_scene()
    plain = scene.with_ring(1, c1=0.0, s1=0.0)
    u, v, wl = random_baselines(500, seed=5)
    u2, v2, _ = random_baselines(500, seed=6)
    cp = plain.closure_phase(u, v, u2, v2, wl)
    # Point-symmetric: closure phase is 0 or ±180 (CHECK_VALUES §3.1)
    assert np.all(np.minimum(np.abs(cp), 180 - np.abs(cp)) < 1e-9)


def test_radial_convergence_doubling_changes_v_by_less_than_1e_5():
    scene = demo_scene()
    u, v, wl = random_baselines(2000, seed=7)
    coarse = Evaluator(u, v, wl, accuracy=1).evaluate(scene).vis
    fine = Evaluator(u, v, wl, accuracy=2).evaluate(scene).vis
    assert np.max(np.abs(coarse - fine)) < 1e-5


def test_changing_one_ring_reuses_the_others():
    scene = demo_scene()
    u, v, wl = random_baselines(1000, seed=8)
    ev = Evaluator(u, v, wl)
    ev.evaluate(scene)
    outer_before = ev._points.data.copy()
    hotter = scene.with_ring(0, t_in=1600.0)
    result = ev.evaluate(hotter)
    # the outer ring's cached per-point values were reused (same object), the inner recomputed
    outer_key = [k for k in outer_before if k[0] is scene.rings[1] or k[0] == scene.rings[1]]
    assert outer_key and ev._points.data[outer_key[0]] is outer_before[outer_key[0]]
    np.testing.assert_allclose(result.vis, Evaluator(u, v, wl).evaluate(hotter).vis, atol=1e-14)
    assert not np.allclose(result.vis, ev.evaluate(scene).vis)


def test_results_do_not_depend_on_the_history_of_the_caches():
    scene = demo_scene()
    u, v, wl = random_baselines(800, seed=10)
    fresh = Evaluator(u, v, wl).evaluate(scene).vis
    ev = Evaluator(u, v, wl)
    for k in range(5):                      # drag ring 0, then ring 1, then come back
        ev.evaluate(scene.with_ring(0, t_in=1400.0 + 10 * k))
        ev.evaluate(scene.with_ring(1, t_in=500.0 + 10 * k))
    np.testing.assert_array_equal(ev.evaluate(scene).vis, fresh)


def test_callers_own_what_they_are_given():
    scene = demo_scene()
    u, v, wl = random_baselines(300, seed=11)
    ev = Evaluator(u, v, wl)
    first = ev.evaluate(scene).vis
    expected = first.copy()
    first *= 0.0                            # a caller scribbling on its result ...
    np.testing.assert_array_equal(ev.evaluate(scene).vis, expected)   # ... leaves the caches intact


def test_fluxes_only_evaluation_matches_the_full_one():
    scene = demo_scene().replace(extended_fraction=0.1)
    wl = np.geomspace(0.5, 20.0, 30)
    full = Evaluator(np.zeros_like(wl), 0.0, wl).evaluate(scene)
    quick = Evaluator(np.zeros_like(wl), 0.0, wl).evaluate(scene, fluxes_only=True)
    for a, b in zip([full.flux_star, full.flux_extended, full.flux_total] + full.flux_rings,
                    [quick.flux_star, quick.flux_extended, quick.flux_total] + quick.flux_rings):
        np.testing.assert_allclose(b, a, rtol=1e-12)
    with pytest.raises(ValueError, match="fluxes only"):
        quick.vis


def test_star_alone_and_disk_alone():
    disk = demo_scene(star=None)
    assert np.all(disk.sed_components([2.2])["star"] == 0)
    star_only = Scene(distance=100.0, star=Star(t_eff=6000.0, radius=1.5))
    assert star_only.sed(2.2) == pytest.approx(star_only.star.flux(2.2, 100.0))


def test_disabled_ring_contributes_nothing():
    scene = demo_scene()
    off = scene.with_ring(1, enabled=False)
    single = scene.replace(rings=scene.rings[:1])
    u, v, wl = random_baselines(200, seed=9)
    np.testing.assert_allclose(off.visibility(u, v, wl), single.visibility(u, v, wl), atol=1e-12)
