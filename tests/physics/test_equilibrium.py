"""Optically thin radiative equilibrium per grain species, against the outside world.

Balance: σ T⁴ κ_P(T) = L κ_* / (16 π r²) (Spitzer 1978 §9.1; Draine 2011 ch. 24 — FROM
MEMORY); grey grains: σ T⁴ = L / (16 π r²), the sublimation-radius relation of
tests/reference/CHECK_VALUES.md §4.
"""
import math

import numpy as np
import pytest
from scipy import special

import diskexplorer.dust  # noqa: F401  (registers species names as dust)
from diskexplorer import PhotosphereTable, PowerLawOpacity, Ring, Scene, Star
from diskexplorer.dust import DustMix
from diskexplorer.errors import ParameterError
from diskexplorer.physics import equilibrium as eq
from diskexplorer.physics.constants import AU_M, C, H, K_B, L_SUN_W, SIGMA_SB
from diskexplorer.physics.planck import planck_nu

SPECIES = ["olivine_glass", "pyroxene_glass", "enstatite_glass", "forsterite", "silica", "iron",
           "amorphous_carbon", "astronomical_silicate"]


# --- grey grains: σT⁴ = L/(16πr²) and the worked R_sub numbers -------------------------------

# tests/reference/CHECK_VALUES.md §4 "Worked number" (COMPUTED there with astropy's constants,
# L☉ = 3.828e26 W): grey grains (Q_R = 1); tolerance rel 1e-6 there, the numbers have 6 digits.
WORKED_RSUB = [  # (L / L☉, T_s K, R_s au)
    (10.0, 1500.0, 0.108877),
    (10.0, 2000.0, 0.061243),
    (1.0, 1500.0, 0.034430),
    (100.0, 1500.0, 0.344300),
]


@pytest.mark.parametrize("lum, t_sub, r_sub", WORKED_RSUB)
@pytest.mark.parametrize("grey", [None, PowerLawOpacity(kappa_ref=300.0, beta=0.0)])
def test_grey_sublimation_radius_matches_worked_numbers(lum, t_sub, r_sub, grey):
    star = Star(t_eff=8000.0, luminosity=lum)
    # the quoted numbers are rounded to 1e-6 au
    assert eq.equilibrium_sublimation_radius(grey, star, t_sub) == pytest.approx(r_sub, abs=5e-7)
    # and the temperature there is T_s (T ∝ R^(-1/2): half the relative rounding of R)
    assert float(eq.equilibrium_temperature(grey, star, r_sub)) == pytest.approx(t_sub, rel=0.5 * 5e-7 / r_sub)


@pytest.mark.parametrize("grey", [None, PowerLawOpacity(kappa_ref=50.0, beta=0.0)])
def test_grey_grains_follow_sigma_t4_law(grey):
    star = Star(t_eff=6000.0, luminosity=3.0)
    r = np.geomspace(0.02, 50.0, 40)
    expected = (3.0 * L_SUN_W / (16 * math.pi * SIGMA_SB * (r * AU_M) ** 2)) ** 0.25
    np.testing.assert_allclose(eq.equilibrium_temperature(grey, star, r), expected, rtol=1e-12)
    # T ∝ r^(-1/2)
    np.testing.assert_allclose(np.diff(np.log(expected)) / np.diff(np.log(r)), -0.5, rtol=1e-12)


# --- Planck means against closed forms ---------------------------------------------------------

def _power_law_planck_mean(op, t):
    """∫ κ B_ν dν / ∫ B_ν dν for κ = κ_ref (λ/λ_ref)^-β: κ_ref (λ_ref k T/(h c))^β Γ(4+β)ζ(4+β)/(Γ(4)ζ(4)).

    Derived here from ∫₀^∞ x^(s-1)/(eˣ−1) dx = Γ(s) ζ(s) (standard; FROM MEMORY).
    """
    b = op.beta
    x = op.wavelength_ref * 1e-6 * K_B * t / (H * C)
    return op.kappa_ref * x**b * special.gamma(4 + b) * special.zeta(4 + b) / (6.0 * special.zeta(4.0))


@pytest.mark.parametrize("beta", [0.5, 1.0, 1.5, 2.0])
def test_planck_mean_of_power_law_opacity_is_closed_form(beta):
    op = PowerLawOpacity(kappa_ref=1000.0, wavelength_ref=10.0, beta=beta)
    t = np.array([30.0, 100.0, 300.0, 1000.0, 1500.0, 3000.0])
    np.testing.assert_allclose(eq.planck_mean(op, t), _power_law_planck_mean(op, t), rtol=1e-6)
    np.testing.assert_allclose(eq.planck_mean_direct(op, t), _power_law_planck_mean(op, t), rtol=1e-6)


@pytest.mark.parametrize("beta", [1.0, 2.0])
def test_power_law_grains_hotter_than_grey_by_closed_form(beta):
    # A blackbody star: κ_* = κ_P(T_*), so T_s^(4+β) = T_grey⁴ T_*^β (derived from the balance).
    op = PowerLawOpacity(kappa_ref=1000.0, wavelength_ref=10.0, beta=beta)
    star = Star(t_eff=7000.0, luminosity=20.0)
    r = np.geomspace(0.1, 30.0, 25)
    t_grey = eq.grey_temperature(star, r)
    expected = (t_grey**4 * 7000.0**beta) ** (1.0 / (4.0 + beta))
    np.testing.assert_allclose(eq.equilibrium_temperature(op, star, r), expected, rtol=1e-6)


def _dense_mean(kappa, weight_spectrum):
    """An independent quadrature: 40 000 log nodes over 0.01–1e5 µm, trapezoid in ln ν."""
    lam = np.geomspace(0.01, 1e5, 40001)
    nu = C / (lam * 1e-6)
    f = weight_spectrum(lam) * nu
    x = np.log(lam)
    return np.trapezoid(kappa(lam) * f, x) / np.trapezoid(f, x)


@pytest.mark.parametrize("name", ["olivine_glass", "iron", "amorphous_carbon", "forsterite"])
def test_planck_mean_of_species_against_dense_quadrature(name):
    mix = DustMix({name: 1.0})
    for t in (100.0, 800.0, 1500.0):
        dense = _dense_mean(mix.kappa, lambda lam: planck_nu(lam, t))
        # the dense grid does not hold every library node: κ between nodes is linear in ln λ
        assert float(eq.planck_mean(mix, t)) == pytest.approx(dense, rel=2e-4)


# --- absorbed = emitted per species ------------------------------------------------------------

def _photosphere(t_eff, radius_rsun):
    lam = np.geomspace(0.05, 200.0, 3000)
    flux = np.pi * planck_nu(lam, t_eff) * (radius_rsun * 6.957e8 / 3.0857e16) ** 2
    return PhotosphereTable(lam, flux, reference_distance=1.0, label="invented blackbody table")


@pytest.mark.parametrize("name", SPECIES)
@pytest.mark.parametrize("shape, size", [("dhs", 0.1), ("mie", 1.0), ("cde", None)])
def test_absorbed_equals_emitted_per_species(name, shape, size):
    mix = DustMix({name: 1.0}, grain_size=size or 0.1, shape=shape)
    r = np.geomspace(0.05, 20.0, 30)
    for star in (Star(t_eff=7500.0, luminosity=12.0), Star(t_eff=4200.0, luminosity=0.8)):
        t = eq.equilibrium_temperature(mix, star, r)
        # emitted 4σT⁴κ_P(T) against absorbed κ_* L/(4πr²), κ_P by the quadrature itself (no table)
        emitted = 4.0 * SIGMA_SB * t**4 * eq.planck_mean_direct(mix, t)
        absorbed = eq.stellar_mean(mix, star) * star.luminosity * L_SUN_W / (4 * math.pi * (r * AU_M) ** 2)
        np.testing.assert_allclose(emitted, absorbed, rtol=1e-6)
        np.testing.assert_allclose(eq.power_balance(mix, star, r, t), 0.0, atol=1e-10)
        # hotter than grey by (κ_*/κ_P(T))^(1/4)
        ratio = (eq.stellar_mean(mix, star) / eq.planck_mean_direct(mix, t)) ** 0.25
        np.testing.assert_allclose(t / eq.grey_temperature(star, r), ratio, rtol=1e-6)


def test_stellar_mean_uses_the_photosphere_table():
    mix = DustMix({"olivine_glass": 1.0})
    bb = Star(t_eff=6500.0, radius=1.5)
    tab = Star(t_eff=6500.0, radius=1.5, photosphere=_photosphere(6500.0, 1.5))
    # the table is the same blackbody sampled from 0.05 µm: the means agree closely ...
    assert eq.stellar_mean(mix, tab) == pytest.approx(eq.stellar_mean(mix, bb), rel=2e-3)
    # ... and a table of another spectrum changes κ_*
    cool = Star(t_eff=6500.0, radius=1.5, photosphere=_photosphere(3500.0, 3.0))
    assert eq.stellar_mean(mix, cool) < 0.8 * eq.stellar_mean(mix, bb)


def test_small_silicate_grains_run_hotter_than_grey():
    star = Star(t_eff=7500.0, luminosity=12.0)
    r = np.geomspace(0.2, 5.0, 10)
    t = eq.equilibrium_temperature(DustMix({"olivine_glass": 1.0}, grain_size=0.1), star, r)
    assert np.all(t > 1.5 * eq.grey_temperature(star, r))


@pytest.mark.parametrize("shape", ["dhs", "mie"])
def test_small_iron_hotter_than_small_olivine_glass_at_1au(shape):
    # Common practice: metallic iron absorbs starlight well and emits poorly in the infrared,
    # so small iron grains run hotter than silicates at the same distance (solar-type star).
    sun = Star(t_eff=5772.0, luminosity=1.0)
    iron = float(eq.equilibrium_temperature(DustMix({"iron": 1.0}, grain_size=0.1, shape=shape), sun, 1.0))
    olivine = float(eq.equilibrium_temperature(DustMix({"olivine_glass": 1.0}, grain_size=0.1, shape=shape),
                                               sun, 1.0))
    assert iron > olivine + 50.0
    assert iron > float(eq.grey_temperature(sun, 1.0))


# --- rings ---------------------------------------------------------------------------------------

def _grey_pair(dust, star, r_in=0.5, r_out=3.0, **kw):
    t_in = float(eq.grey_temperature(star, r_in))
    eq_ring = Ring(r_in=r_in, r_out=r_out, sigma_in=1e-3, p=1.0, dust=dust, temperature_mode="equilibrium",
                   sublimation={"blackbody" if dust is None else dust.label: 4000.0}, **kw)
    pl_ring = Ring(r_in=r_in, r_out=r_out, t_in=t_in, q=0.5, sigma_in=1e-3, p=1.0, dust=dust, **kw)
    return eq_ring, pl_ring


@pytest.mark.parametrize("dust", [None, PowerLawOpacity(kappa_ref=800.0, beta=0.0)])
def test_equilibrium_grey_ring_equals_power_law_q_half(dust):
    star = Star(t_eff=9000.0, luminosity=25.0)
    eq_ring, pl_ring = _grey_pair(dust, star)
    a = Scene(distance=150.0, star=star, rings=[eq_ring], inclination=40.0, position_angle=20.0)
    b = a.replace(rings=[pl_ring])
    lam = np.geomspace(1.0, 30.0, 60)
    np.testing.assert_allclose(a.sed(lam), b.sed(lam), rtol=1e-12)
    np.testing.assert_allclose(a.sed(lam, bandwidth=lam / 20), b.sed(lam, bandwidth=lam / 20), rtol=1e-12)
    u = np.linspace(0.0, 120.0, 30)
    np.testing.assert_allclose(a.visibility(u, 0.3 * u, 3.5), b.visibility(u, 0.3 * u, 3.5), rtol=1e-11, atol=1e-14)
    np.testing.assert_allclose(a.dust_temperature(0, [0.5, 1.0, 2.0])[eq_ring.species()[0].name],
                               pl_ring.temperature([0.5, 1.0, 2.0]), rtol=1e-12)


def test_each_species_emits_at_its_own_temperature():
    star = Star(t_eff=7500.0, luminosity=12.0)
    ring = Ring(r_in=0.8, r_out=2.0, sigma_in=0.05, dust={"olivine_glass": 0.7, "iron": 0.3},
                temperature_mode="equilibrium")
    r = np.array([0.9, 1.3, 1.9])
    lam = np.array([2.2, 4.0, 10.0])
    inten = ring.intensity(r, lam, 30.0, star)
    by_hand = np.zeros_like(inten)
    tau = np.zeros_like(inten)
    for name, f in (("olivine_glass", 0.7), ("iron", 0.3)):
        mix = DustMix({name: 1.0})
        t = eq.equilibrium_temperature(mix, star, r)
        tau_s = f * mix.kappa(lam)[:, None] * ring.surface_density(r)[None, :]
        tau += tau_s
        by_hand += tau_s * planck_nu(lam[:, None], t[None, :])
    by_hand *= -np.expm1(-tau / math.cos(math.radians(30.0))) / tau
    np.testing.assert_allclose(inten, by_hand, rtol=1e-12)
    temps = Scene(distance=140.0, star=star, rings=[ring]).dust_temperature(0, r)
    assert set(temps) == {"olivine_glass", "iron"}
    assert not np.allclose(temps["olivine_glass"], temps["iron"], rtol=1e-2)


def _sublimating_scene(**kw):
    star = Star(t_eff=7500.0, luminosity=30.0)
    ring = Ring(r_in=0.1, r_out=2.0, sigma_in=1e-3, dust={"olivine_glass": 0.6, "iron": 0.4},
                temperature_mode="equilibrium", **kw)
    return Scene(distance=140.0, star=star, rings=[ring], inclination=35.0, position_angle=60.0)


def test_species_absent_where_hotter_than_sublimation_temperature():
    scene = _sublimating_scene()
    ring = scene.rings[0]
    radii = scene.sublimation_radii(0)
    assert ring.r_in < radii["iron"] < radii["olivine_glass"] < ring.r_out
    r = np.geomspace(0.1, 2.0, 200)
    temps = scene.dust_temperature(0, r)
    for name, t_sub in ring.sublimation_temperatures().items():
        absent = np.isnan(temps[name])
        np.testing.assert_array_equal(absent, r < radii[name])
        assert np.all(temps[name][~absent] <= t_sub)
    # no dust at all inside the iron front: the ring emits nothing there
    inner = np.array([0.5 * radii["iron"] + 0.05])
    assert np.all(ring.intensity(inner, [2.2, 10.0], 35.0, scene.star) == 0.0)
    # an override of the sublimation temperature moves the front
    hotter = scene.with_ring(0, sublimation={"iron": 2200.0})
    assert hotter.sublimation_radii(0)["iron"] < radii["iron"]
    assert hotter.sublimation_radii(0)["olivine_glass"] == radii["olivine_glass"]


def test_inner_edge_follows_sublimation_front():
    fixed = _sublimating_scene()
    front = min(fixed.sublimation_radii(0).values())
    following = _sublimating_scene(inner_edge="sublimation")
    resolved = following.rings[0].resolved(following.star)
    assert resolved.r_in == pytest.approx(front, rel=1e-12)
    # the ring between the front and r_out, Σ referenced at the front
    same = fixed.with_ring(0, r_in=front)
    lam = np.geomspace(1.5, 20.0, 30)
    np.testing.assert_allclose(following.sed(lam), same.sed(lam), rtol=1e-12)
    # a brighter star pushes the front out; beyond r_out the ring is empty
    far = following.replace(star=Star(t_eff=7500.0, luminosity=30000.0))
    assert far.rings[0].resolved(far.star) is None
    assert far.sed_components([2.2])[far.rings[0].name][0] == 0.0
    with pytest.raises(ParameterError, match="inner_edge = 'sublimation' needs"):
        Ring(inner_edge="sublimation")


def test_engine_matches_direct_transform_for_equilibrium_rings():
    from diskexplorer.observables.engine import direct_visibility

    scene = _sublimating_scene()
    scene = scene.replace(rings=list(scene.rings) + [
        Ring(r_in=2.5, r_out=6.0, sigma_in=1e-2, dust={"forsterite": 0.2, "olivine_glass": 0.8},
             temperature_mode="equilibrium", c1=0.3, name="outer")])
    rng = np.random.default_rng(3)
    u, v = rng.uniform(-130, 130, (2, 200))
    lam = rng.choice([2.2, 3.5, 10.0], 200)
    np.testing.assert_allclose(scene.visibility(u, v, lam), direct_visibility(scene, u, v, lam),
                               atol=2e-5)


def test_equilibrium_ring_errors_name_the_ring():
    ring = Ring(r_in=0.5, r_out=1.0, dust="olivine_glass", temperature_mode="equilibrium", name="hot")
    with pytest.raises(ParameterError, match="'hot'.*need a star"):
        Scene(distance=100.0, star=None, rings=[ring]).sed([2.2])
    with pytest.raises(ParameterError, match="temperature_mode = 'grey'"):
        Ring(temperature_mode="grey")
    with pytest.raises(ParameterError, match="sublimation of iron"):
        Ring(sublimation={"iron": -3.0})


def test_power_law_ring_defaults_unchanged():
    ring = Ring()
    assert ring.temperature_mode == "power_law" and ring.inner_edge == "fixed" and ring.sublimation == ()
    star = Star(t_eff=7000.0, radius=2.0)
    temps = Scene(distance=140.0, star=star, rings=[Ring(dust="iron")]).dust_temperature(0, [0.6, 0.9])
    np.testing.assert_array_equal(temps["iron"], Ring(dust="iron").temperature([0.6, 0.9]))
