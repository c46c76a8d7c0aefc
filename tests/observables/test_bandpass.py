"""Finite-width spectral channels: scene.visibility(..., bandwidth=), closure phases, SEDs.

The definition checked here (diskexplorer/observables/bandpass.py): a top-hat channel of
full width Δλ centred on λ; V_chan = ∫ F_ν V dλ / ∫ F_ν dλ, V² = |V_chan|², closure phases
from channel-averaged visibilities, fluxes the channel mean of F_ν.
"""
import math

import numpy as np
import pytest
from scipy import integrate, special

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.errors import ParameterError
from diskexplorer.observables import Observer
from diskexplorer.observables.bandpass import channel_node_count, channel_nodes
from diskexplorer.physics.constants import RAD_PER_MAS
from diskexplorer.physics.star import PhotosphereTable

DUST = PowerLawOpacity(kappa_ref=2500.0, wavelength_ref=10.0, beta=1.2)


def smeared_scene():
    """Thin, bright, asymmetric rings many fringes across at 90–130 m: there the channel
    average differs from the centre's value by far more than the tolerances."""
    return Scene(distance=100.0, star=Star(t_eff=7500.0, radius=2.2),
                 rings=[Ring(r_in=0.3, r_out=0.6, t_in=1500.0, q=0.5, sigma_in=1e-2, dust=DUST, name="rim"),
                        Ring(r_in=2.0, r_out=2.1, t_in=1500.0, q=0.5, sigma_in=1.0, dust=DUST,
                             c1=0.5, s1=0.3, name="hot"),
                        Ring(r_in=8.0, r_out=8.4, t_in=350.0, q=0.5, sigma_in=1.0, dust=DUST,
                             c1=-0.4, s1=0.4, name="cool")],
                 inclination=45.0, position_angle=30.0)


def long_baselines(n=12, seed=3):
    rng = np.random.default_rng(seed)
    b, a = rng.uniform(90.0, 130.0, n), rng.uniform(0.0, 2 * np.pi, n)
    return b * np.sin(a), b * np.cos(a)


def triangles(n=8, seed=4):
    rng = np.random.default_rng(seed)
    b1, a1 = rng.uniform(60.0, 90.0, n), rng.uniform(0.0, 2 * np.pi, n)
    b2, a2 = rng.uniform(60.0, 90.0, n), a1 + rng.uniform(0.6, 2.0, n)
    return b1 * np.sin(a1), b1 * np.cos(a1), b2 * np.sin(a2), b2 * np.cos(a2)


def sub_wavelengths(lam, bw, n=801):
    """Centres of n equal sub-channels of [λ − Δλ/2, λ + Δλ/2] (midpoint rule)."""
    edges = np.linspace(lam - 0.5 * bw, lam + 0.5 * bw, n + 1)
    return 0.5 * (edges[1:] + edges[:-1])


def brute_force(scene, lam, bw, u, v, u1, v1, u2, v2):
    """Channel averages from 801 monochromatic calls (a plain loop, no bandpass code)."""
    num = np.zeros(u.size, complex)
    num_t3 = np.zeros((3, u1.size), complex)
    den = 0.0
    for x in sub_wavelengths(lam, bw):
        f = float(scene.sed(x))
        num += f * scene.visibility(u, v, x)
        for k, (uu, vv) in enumerate(((u1, v1), (u2, v2), (-u1 - u2, -v1 - v2))):
            num_t3[k] += f * scene.visibility(uu, vv, x)
        den += f
    vis = num / den
    t3 = np.prod(num_t3 / den, axis=0)
    return np.abs(vis) ** 2, np.degrees(np.angle(t3)), den / 801


@pytest.mark.parametrize("lam, resolving_power", [(2.2, 20.0), (2.2, 30.0), (3.6, 20.0), (10.5, 30.0)])
def test_channel_average_matches_brute_force(lam, resolving_power):
    scene = smeared_scene()
    bw = lam / resolving_power
    u, v = long_baselines()
    u1, v1, u2, v2 = triangles()
    v2_ref, cp_ref, flux_ref = brute_force(scene, lam, bw, u, v, u1, v1, u2, v2)
    v2_band = scene.vis2(u, v, lam, bandwidth=bw)
    cp_band = scene.closure_phase(u1, v1, u2, v2, lam, bandwidth=bw)
    flux_band = float(scene.sed(lam, bandwidth=bw))
    np.testing.assert_allclose(v2_band, v2_ref, rtol=0, atol=2e-4)
    np.testing.assert_allclose(cp_band, cp_ref, rtol=0, atol=2e-4)        # degrees
    # Tighter than the 2e-4 asked of V², since the centre's F_ν misses by 0.6e-4–3e-4.
    assert abs(flux_band / flux_ref - 1.0) < 2e-5
    # The test can fail: the monochromatic values are off by more than the tolerance.
    v2_mono = scene.vis2(u, v, lam)
    cp_mono = scene.closure_phase(u1, v1, u2, v2, lam)
    assert np.max(np.abs(v2_mono - v2_ref)) > 5e-4
    assert np.max(np.abs(cp_mono - cp_ref)) > 0.5


def test_zero_width_limit_is_monochromatic():
    scene = smeared_scene()
    u, v = long_baselines()
    u1, v1, u2, v2 = triangles()
    lam = np.array([2.2, 3.6, 10.5])[:, None]
    for bw in (1e-6, 1e-5):
        np.testing.assert_allclose(scene.vis2(u, v, lam, bandwidth=bw), scene.vis2(u, v, lam), rtol=0, atol=1e-6)
        np.testing.assert_allclose(scene.visibility(u, v, lam, bandwidth=bw), scene.visibility(u, v, lam),
                                   rtol=0, atol=1e-6)
        np.testing.assert_allclose(scene.closure_phase(u1, v1, u2, v2, lam, bandwidth=bw),
                                   scene.closure_phase(u1, v1, u2, v2, lam), rtol=0, atol=1e-6)
        np.testing.assert_allclose(scene.sed(lam, bandwidth=bw), scene.sed(lam), rtol=1e-6)
    # A width of exactly 0 is one node at λ: the monochromatic value itself.
    np.testing.assert_array_equal(scene.visibility(u, v, 2.2, bandwidth=0.0), scene.visibility(u, v, 2.2))
    np.testing.assert_array_equal(scene.sed([2.2, 3.6], bandwidth=0.0), scene.sed([2.2, 3.6]))


def test_per_point_widths_broadcast():
    scene = smeared_scene()
    u, v = long_baselines(4)
    lam = np.array([2.2, 3.6])
    bw = np.array([0.11, 0.0])
    both = scene.visibility(u[:, None], v[:, None], lam, bandwidth=bw)
    assert both.shape == (4, 2)
    # Other samplings have other frequency grids: equal to the engine's rounding, not bit for bit.
    np.testing.assert_allclose(both[:, 0], scene.visibility(u, v, 2.2, bandwidth=0.11), rtol=0, atol=1e-9)
    np.testing.assert_allclose(both[:, 1], scene.visibility(u, v, 3.6), rtol=0, atol=1e-9)
    sed = scene.sed(lam, bandwidth=bw)
    assert sed.shape == (2,)
    assert math.isclose(sed[1], scene.sed(3.6), rel_tol=1e-12)
    comps = scene.sed_components(2.2, bandwidth=0.11)
    assert np.shape(comps["total"]) == ()
    assert math.isclose(float(comps["total"]), float(sum(comps[k] for k in comps if k != "total")), rel_tol=1e-12)


# ---------------------------------------------------------------- analytic cases
# A spectrum F_ν ∝ λ⁻² makes the channel average exact in x = 1/λ, since F_ν dλ ∝ dx:
# V_chan = ∫ V(B x) dx / Δx over x ∈ [1/(λ + Δλ/2), 1/(λ − Δλ/2)].

def _integral_j0(z):
    """∫₀^z J0(t) dt = z J0(z) + (π z / 2) [J1(z) H0(z) − J0(z) H1(z)] (H: Struve functions).

    Abramowitz & Stegun 11.1.7 — FROM MEMORY; test_struve_identity checks it by quadrature.
    """
    return z * special.j0(z) + 0.5 * math.pi * z * (special.j1(z) * special.struve(0, z)
                                                    - special.j0(z) * special.struve(1, z))


def _integral_j1_over_t(z):
    """∫₀^z J1(t)/t dt = ∫₀^z J0 dt − J1(z).

    Since J1' = J0 − J1/t, d/dt[−J1(t)] = −J0(t) + J1(t)/t.
    """
    return _integral_j0(z) - special.j1(z)


@pytest.mark.parametrize("z", [0.5, 3.0, 11.0, 25.0])
def test_struve_identity(z):
    assert math.isclose(_integral_j0(z), integrate.quad(special.j0, 0, z, limit=200)[0], rel_tol=1e-9)
    assert math.isclose(_integral_j1_over_t(z), integrate.quad(lambda t: special.j1(t) / t, 0, z,
                                                               limit=200)[0], rel_tol=1e-9)


@pytest.mark.parametrize("lam, resolving_power", [(2.2, 20.0), (2.2, 30.0), (1.65, 5.0)])
def test_uniform_disk_with_rayleigh_jeans_spectrum(lam, resolving_power):
    """A uniform disk of diameter θ has V = 2 J1(z)/z, z = π θ B/λ (Born & Wolf, Principles
    of Optics, §8.5 — FROM MEMORY, and the engine's own monochromatic case); with F_ν ∝ λ⁻²
    the channel average is 2 [G(π θ B x₊) − G(π θ B x₋)] / (π θ B Δx), G(z) = ∫₀^z J1(t)/t dt."""
    table = PhotosphereTable([0.5, 20.0], [1.0, (0.5 / 20.0) ** 2], reference_distance=100.0)
    star = Star(t_eff=5000.0, radius=200.0, photosphere=table)
    scene = Scene(distance=100.0, star=star)
    theta = star.angular_diameter(100.0) * RAD_PER_MAS
    bw = lam / resolving_power
    b = np.linspace(5.0, 130.0, 60)
    x_hi, x_lo = 1.0 / ((lam - 0.5 * bw) * 1e-6), 1.0 / ((lam + 0.5 * bw) * 1e-6)
    a = math.pi * theta * b
    expected = 2.0 * (_integral_j1_over_t(a * x_hi) - _integral_j1_over_t(a * x_lo)) / (a * (x_hi - x_lo))
    got = scene.visibility(b, 0.0, lam, bandwidth=bw)
    np.testing.assert_allclose(got.real, expected, rtol=0, atol=2e-5)
    np.testing.assert_allclose(got.imag, 0.0, atol=1e-12)
    # The channel mean of F_ν ∝ λ⁻² over the top-hat is F(λ) λ² / (λ₋ λ₊).
    f = float(star.flux(lam, 100.0))
    assert math.isclose(float(scene.sed(lam, bandwidth=bw)), f * lam**2 / ((lam - bw / 2) * (lam + bw / 2)),
                        rel_tol=1e-9)
    mono = scene.visibility(b, 0.0, lam).real
    assert np.max(np.abs(mono - expected)) > 1e-4


@pytest.mark.parametrize("resolving_power", [20.0, 30.0])
@pytest.mark.parametrize("fringes", [0.5, 3.0, 12.0])
def test_binary_fringe_smearing(resolving_power, fringes):
    """Two point sources, flux ratio f, separation s: V = (1 + f e^{−2πi B·s/λ})/(1 + f).
    With F_ν ∝ λ⁻² the channel average is exactly (1 + f e^{−2πi B·s x_c} sinc(π B·s Δx))/(1 + f),
    x_c and Δx the centre and width of the channel in 1/λ (derived: ∫ e^{−2πi p x} dx over
    the channel); to first order in Δλ/λ, sinc(π B·s Δλ/λ²) — the bandwidth-smearing factor
    of the textbooks (e.g. Thompson, Moran & Swenson, ch. 6 — FROM MEMORY)."""
    lam, f = 2.2, 0.4
    bw = lam / resolving_power
    p = fringes * lam            # B·s in µm (B in µm times s in rad): B·s/λ = fringes at the centre
    nodes, weights = channel_nodes(lam, bw)
    w = weights * nodes**-2.0
    quad = np.sum(w * (1 + f * np.exp(-2j * np.pi * p / nodes))) / np.sum(w) / (1 + f)
    x_hi, x_lo = 1.0 / (lam - bw / 2), 1.0 / (lam + bw / 2)
    dx, xc = x_hi - x_lo, 0.5 * (x_hi + x_lo)
    exact = (1 + f * np.exp(-2j * np.pi * p * xc) * np.sinc(p * dx)) / (1 + f)     # np.sinc(y) = sin(πy)/(πy)
    assert abs(quad - exact) < 2e-5
    first_order = np.sinc(p * bw / lam**2)
    assert abs(abs(np.sinc(p * dx)) - abs(first_order)) < 0.02


def test_node_counts():
    assert channel_node_count(0.0) == 1
    counts = [channel_node_count(1.0 / r) for r in (1000.0, 100.0, 30.0, 20.0, 10.0)]
    assert counts == sorted(counts)
    assert 5 <= channel_node_count(1 / 20.0) <= 9 and 5 <= channel_node_count(1 / 30.0) <= 9
    nodes, weights = channel_nodes(2.2, 0.11)
    assert math.isclose(weights.sum(), 1.0, rel_tol=1e-14)
    assert nodes.min() > 2.2 - 0.055 and nodes.max() < 2.2 + 0.055


# ---------------------------------------------------------------- Observer and errors

def test_observer_with_bandwidths_matches_scene():
    scene = smeared_scene()
    u, v = long_baselines(10)
    u1, v1, u2, v2 = triangles(6)
    wl = np.repeat([2.2, 3.6], 5)
    bw = wl / 25.0
    wl3 = np.repeat([2.2, 3.6], 3)
    sed_wl = np.array([1.6, 2.2, 10.0])
    obs = Observer(u, v, wl, u1, v1, u2, v2, wl3, sed_wavelength=sed_wl,
                   bandwidth=bw, t3_bandwidth=wl3 / 25.0, sed_bandwidth=sed_wl / 10.0)
    pred = obs.observe(scene)
    # Each sampling picks its channels' node counts from its own longest baselines (the
    # Observer's include the triangles'), so the two agree to the quadrature's accuracy
    # (QUADRATURE_TOLERANCE = 2e-5 in V), not bit for bit.
    np.testing.assert_allclose(pred.vis2, scene.vis2(u, v, wl, bandwidth=bw), rtol=0, atol=1e-8)
    np.testing.assert_allclose(pred.t3phi, scene.closure_phase(u1, v1, u2, v2, wl3, bandwidth=wl3 / 25.0),
                               rtol=0, atol=1e-5)
    np.testing.assert_allclose(pred.sed["total"], scene.sed(sed_wl, bandwidth=sed_wl / 10.0), rtol=1e-12)
    np.testing.assert_allclose(pred.correlated_flux, scene.correlated_flux(u, v, wl, bandwidth=bw), rtol=1e-7)
    # A second observation of a changed ring reuses everything else and stays consistent.
    changed = scene.with_ring(0, t_in=1400.0)
    np.testing.assert_allclose(obs.observe(changed).vis2, changed.vis2(u, v, wl, bandwidth=bw), rtol=0, atol=1e-8)
    mono = Observer(u, v, wl).observe(scene)
    assert np.max(np.abs(mono.vis2 - pred.vis2)) > 1e-3


@pytest.mark.parametrize("bw", [-0.1, float("nan"), 5.0])
def test_bad_bandwidth_is_refused(bw):
    with pytest.raises(ParameterError, match="bandwidth"):
        smeared_scene().visibility(100.0, 0.0, 2.2, bandwidth=bw)


# ---------------------------------------------------------------- comparison with data

def _two_files(tmp_path):
    from diskexplorer.testing import make_oifits

    a = make_oifits(tmp_path, "k.fits", band="K", n_channels=6, include_flux=True, seed=1)
    b = make_oifits(tmp_path, "l.fits", band="L", n_channels=5, seed=2, insname="SIM_L")
    return a, b


def test_comparison_uses_eff_band_by_default_and_per_file_switch(tmp_path):
    from diskexplorer.data import read_oifits
    from diskexplorer.fitting import Comparison

    a, b = _two_files(tmp_path)
    obs = read_oifits([a, b])
    scene = smeared_scene()
    vis2 = obs.vis2
    bw = vis2["bandwidth"].values
    assert np.all(bw > 0)
    default = Comparison(obs).compare(scene)
    assert Comparison(obs).banded
    expected = scene.vis2(vis2["u"].values, vis2["v"].values, vis2["wavelength"].values, bandwidth=bw)
    np.testing.assert_allclose(default.model["vis2"], expected, rtol=0, atol=1e-12)
    t3 = obs.t3
    np.testing.assert_allclose(
        default.model["t3phi"],
        scene.closure_phase(t3["u1"].values, t3["v1"].values, t3["u2"].values, t3["v2"].values,
                            t3["wavelength"].values, bandwidth=t3["bandwidth"].values), rtol=0, atol=1e-9)
    flux = obs.flux
    np.testing.assert_allclose(default.model["flux"],
                               scene.sed(flux["wavelength"].values, bandwidth=flux["bandwidth"].values),
                               rtol=1e-12)
    mono = Comparison(obs, bandpass=False)
    assert not mono.banded
    mono_result = mono.compare(scene)
    np.testing.assert_allclose(mono_result.model["vis2"],
                               scene.vis2(vis2["u"].values, vis2["v"].values, vis2["wavelength"].values),
                               rtol=0, atol=1e-12)
    assert np.max(np.abs(mono_result.model["vis2"] - default.model["vis2"])) > 1e-4
    # Per file: the K file monochromatic, the L file averaged over its channels.
    mixed = Comparison(obs, bandpass={str(a): False}).compare(scene).model["vis2"]
    in_a = vis2["file"].values.astype(str) == str(a)
    assert in_a.any() and (~in_a).any()
    np.testing.assert_allclose(mixed[in_a], mono_result.model["vis2"][in_a], rtol=0, atol=1e-12)
    np.testing.assert_allclose(mixed[~in_a], default.model["vis2"][~in_a], rtol=0, atol=1e-12)


def test_missing_or_zero_eff_band_is_monochromatic_and_too_wide_is_refused(tmp_path):
    from diskexplorer.data import read_oifits
    from diskexplorer.errors import DataError
    from diskexplorer.fitting import Comparison
    from diskexplorer.fitting.comparison import channel_widths

    a, _ = _two_files(tmp_path)
    obs = read_oifits(a)
    nan_bw = obs.vis2.assign_coords(bandwidth=("point", np.full(obs.vis2.sizes["point"], np.nan)))
    assert channel_widths(nan_bw) is None
    wide = obs.vis2.assign_coords(bandwidth=("point", 2.5 * obs.vis2["wavelength"].values))
    with pytest.raises(DataError, match=r"k\.fits: OI_WAVELENGTH EFF_BAND"):
        channel_widths(wide, kind="vis2")
    assert Comparison(obs, bandpass={str(a): False}).banded is False


def test_data_description_records_the_bandpass_choice(tmp_path):
    from diskexplorer.errors import SeedError
    from diskexplorer.fitting import Comparison
    from diskexplorer.fitting.data_description import DataDescription, describe_data

    a, b = _two_files(tmp_path)
    old = DataDescription.from_dict({"oifits": [{"path": str(a)}]})      # a document from before the key
    assert old.oifits[0]["bandpass"] is True
    desc = DataDescription.from_dict({"oifits": [{"path": str(a), "bandpass": False}, {"path": str(b)}]})
    assert [e["bandpass"] for e in desc.as_dict()["oifits"]] == [False, True]
    comparison = desc.comparison()
    assert comparison.bandpass == {str(a): False}
    scene = smeared_scene()
    files = comparison.observations.vis2["file"].values.astype(str)
    by_hand = Comparison(comparison.observations, bandpass={str(a): False})
    np.testing.assert_array_equal(comparison.compare(scene).model["vis2"], by_hand.compare(scene).model["vis2"])
    assert set(files) == {str(a), str(b)}
    back = describe_data(comparison).as_dict()["oifits"]
    assert {e["path"]: e["bandpass"] for e in back} == {str(a): False, str(b): True}
    off = describe_data(Comparison(comparison.observations, bandpass=False)).as_dict()["oifits"]
    assert all(e["bandpass"] is False for e in off)
    with pytest.raises(SeedError, match=r"data\.oifits\.0\.bandpass = 'yes': expected true or false"):
        DataDescription.from_dict({"oifits": [{"path": str(a), "bandpass": "yes"}]})


def test_start_document_round_trips_the_bandpass_choice(tmp_path):
    from diskexplorer.fitting import export_start, read_start, write_start

    a, b = _two_files(tmp_path)
    scene = smeared_scene()
    doc = export_start(scene, data={"oifits": [{"path": str(a), "bandpass": False}, {"path": str(b)}]})
    assert [e["bandpass"] for e in doc["data"]["oifits"]] == [False, True]
    path = tmp_path / "start.json"
    write_start(path, doc)                       # validated against the shipped schema
    start = read_start(path)
    assert [e["bandpass"] for e in start.data.oifits] == [False, True]
    assert start.comparison().bandpass == {str(a): False}


# ------------------------------------------------- node counts from the scene's extent

def wide_scene():
    """A bright thin ring 400 mas from the star: ~180 fringe cycles at 100 m in K, far
    beyond a rule made for 40."""
    return Scene(distance=50.0, star=Star(t_eff=7500.0, radius=2.2),
                 rings=[Ring(r_in=0.3, r_out=0.6, t_in=1500.0, q=0.5, sigma_in=1e-2, dust=DUST, name="rim"),
                        Ring(r_in=19.5, r_out=20.0, t_in=1200.0, q=0.5, sigma_in=1.0, dust=DUST,
                             c1=0.4, s1=0.2, name="far")],
                 inclination=30.0, position_angle=20.0)


def test_source_extent_is_the_outermost_edge():
    from diskexplorer.observables.bandpass import source_extent

    # 20 au at 50 pc: 0.4 arcsec (1 au at 1 pc subtends 1 arcsec)
    assert source_extent(wide_scene()) == pytest.approx(0.4 * RAD_PER_MAS * 1e3, rel=1e-12)
    off = wide_scene().with_ring(1, enabled=False)
    assert source_extent(off) == pytest.approx(0.6 / 50.0 * RAD_PER_MAS * 1e3, rel=1e-12)


def test_a_scene_larger_than_forty_fringes_matches_brute_force():
    from diskexplorer.observables.bandpass import ChannelEvaluator, ChannelSampling

    scene = wide_scene()
    lam, bw = 2.2, 2.2 / 100.0
    rng = np.random.default_rng(1)
    b, a = rng.uniform(40.0, 100.0, 8), rng.uniform(0.0, 2 * np.pi, 8)
    u, v = b * np.sin(a), b * np.cos(a)
    num, den = 0.0, 0.0
    for x in sub_wavelengths(lam, bw):          # 801 monochromatic calls
        f = float(scene.sed(x))
        num = num + f * scene.visibility(u, v, x)
        den += f
    ref = num / den
    ev = ChannelEvaluator(sampling=ChannelSampling(u, v, lam, bw))
    e = ev.evaluate(scene)
    got = (e.numerator_real + 1j * e.numerator_imag) / e.flux_total[e.wave_index]
    np.testing.assert_allclose(got, ref, rtol=0, atol=2e-5)
    # the rule follows the scene: more nodes than one made for 40 fringe cycles
    fixed = ChannelEvaluator(sampling=ChannelSampling(u, v, lam, bw), fringes=40.0)
    fixed.evaluate(scene)
    assert ev.node_count > fixed.node_count


def test_compact_scenes_use_fewer_nodes_and_growing_ones_switch_class():
    from diskexplorer.observables.bandpass import ChannelEvaluator, ChannelSampling

    u, v = long_baselines(8)
    lam = np.repeat([[2.2, 3.6, 10.5]], 8, axis=0)
    ev = ChannelEvaluator(sampling=ChannelSampling(u[:, None], v[:, None], lam, lam / 30.0))
    compact = smeared_scene().replace(distance=400.0)
    ev.evaluate(compact)
    few = ev.node_count
    ev.evaluate(wide_scene())
    many = ev.node_count
    assert 3 <= few < 6 < many
    # back to the compact scene: its class is kept, the same rule is used again
    ev.evaluate(compact)
    assert ev.node_count == few
    # and the compact scene's values agree with a generous fixed rule
    fixed = ChannelEvaluator(sampling=ChannelSampling(u[:, None], v[:, None], lam, lam / 30.0), fringes=200.0)
    a, b = ev.evaluate(compact), fixed.evaluate(compact)
    va = (a.numerator_real + 1j * a.numerator_imag) / a.flux_total[a.wave_index]
    vb = (b.numerator_real + 1j * b.numerator_imag) / b.flux_total[b.wave_index]
    np.testing.assert_allclose(va, vb, rtol=0, atol=2e-5)
