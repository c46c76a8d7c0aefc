"""Each species' part of a ring's spectrum and coherent flux (diskexplorer.observables.species_parts).

References: a mixture's mass absorption coefficient is the mass-weighted sum of its
species', κ = Σ f_s κ_s (common practice for mixtures of separate grains); with every
species at one temperature, species s then emits the fraction f_s κ_s / κ of the ring's
light at each wavelength, at every optical depth (its share of τ = Σ τ_s). The coherent
flux of a scene is the sum of its components' F_i V_i (the visibility of a sum of
brightness distributions, van Cittert–Zernike; the fully resolved component adds 0).
"""
import numpy as np
import pytest

from diskexplorer import DustMix, Ring, Scene, Star
from diskexplorer.observables.species_parts import species_coherent_flux, species_parts, species_spectra
from diskexplorer.sample import demo_scene

WL = np.linspace(7.5, 13.5, 41)


def two_species_scene(sigma_in=2e-3, temperature_mode="power_law"):
    dust = DustMix({"olivine_glass": 0.7, "forsterite": 0.3}, grain_size=1.5, shape="dhs")
    ring = Ring(r_in=0.5, r_out=2.0, t_in=1200.0, q=0.5, sigma_in=sigma_in, p=1.0, dust=dust, name="rim",
                temperature_mode=temperature_mode)
    return Scene(distance=150.0, star=Star(t_eff=8000.0, luminosity=20.0, mass=2.0), rings=(ring,),
                 inclination=35.0, position_angle=60.0)


@pytest.mark.parametrize("sigma_in", [1e-6, 2e-3, 0.5], ids=["thin", "moderate", "thick"])
def test_with_one_temperature_each_species_emits_its_share_of_kappa(sigma_in):
    scene = two_species_scene(sigma_in)
    dust = scene.rings[0].dust
    parts = {p.name: p for p in dust.species_parts()}
    kappa = dust.kappa(WL)
    ring = scene.sed_components(WL)["rim"]
    got = species_spectra(scene, WL)
    for name in ("olivine_glass", "forsterite"):
        want = parts[name].fraction * parts[name].opacity.kappa(WL) / kappa * ring
        # 1e-5: the thin and the thick ring are integrated on different radial nodes
        np.testing.assert_allclose(got[f"rim: {name}"], want, rtol=1e-5)


@pytest.mark.parametrize("mode", ["power_law", "equilibrium"])
def test_the_parts_add_up_to_the_ring_in_flux_and_coherent_flux(mode):
    scene = two_species_scene(0.05, mode)
    spectra = species_spectra(scene, WL)
    np.testing.assert_allclose(sum(spectra.values()), scene.sed_components(WL)["rim"], rtol=1e-12)
    u, v = np.array([[25.0], [70.0]]), np.array([[5.0], [-30.0]])
    coherent = species_coherent_flux(scene, u, v, WL[None, :])
    total = scene.visibility(u, v, WL[None, :]) * scene.sed(WL)[None, :]
    star = scene.replace(rings=())
    star_coherent = star.visibility(u, v, WL[None, :]) * star.sed(WL)[None, :]
    np.testing.assert_allclose(sum(coherent.values()), total - star_coherent, atol=1e-4 * np.abs(total).max())


def test_every_dusty_ring_of_the_demo_is_split_and_a_ring_can_be_chosen():
    scene = demo_scene()
    labels = [p.label for p in species_parts(scene)]
    assert labels == ["inner: forsterite", "inner: iron", "inner: olivine_glass", "inner: pyroxene_glass",
                      "outer: amorphous_carbon", "outer: forsterite", "outer: olivine_glass"]
    assert [p.label for p in species_parts(scene, rings=[1])] == labels[4:]
    fractions = {p.species: p.fraction for p in species_parts(scene, rings=[0])}
    assert fractions == pytest.approx({"forsterite": 0.15, "iron": 0.1, "olivine_glass": 0.55, "pyroxene_glass": 0.2})


def test_a_ring_without_dust_has_no_species():
    scene = two_species_scene()
    blackbody = scene.with_ring(0, dust=None)
    assert species_parts(blackbody) == [] and species_spectra(blackbody, WL) == {}
