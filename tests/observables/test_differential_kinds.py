"""Correlated fluxes, visibility amplitudes and differential phases as χ² kinds.

Differential phase as OIFITS v2 defines it (Duvert, Young & Hummel 2017, A&A 597, A8,
OI_VIS: VISPHI relative to the reference channels VISREFMAP names); the reference is the
summed coherent flux of those channels (diskexplorer.fitting.comparison.differential_phase).
"""
import numpy as np
import pytest
from astropy.io import fits

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.data.observations import ObservationSet, reference_from_map
from diskexplorer.data.oifits import read_oifits
from diskexplorer.data.oifits_write import write_oifits
from diskexplorer.fitting.comparison import Comparison, differential_phase, phase_residual

DUST = PowerLawOpacity(kappa_ref=2500.0, wavelength_ref=10.0, beta=1.2)
STATIONS = {"A": (0.0, 0.0, 0.0), "B": (40.0, 10.0, 0.0)}


def lopsided_scene(c1=0.5, s1=0.3):
    return Scene(distance=120.0, star=Star(t_eff=7500.0, radius=2.2),
                 rings=[Ring(r_in=0.4, r_out=0.9, t_in=1400.0, q=0.5, sigma_in=1e-2, dust=DUST,
                             c1=c1, s1=s1, name="rim"),
                        Ring(r_in=3.0, r_out=5.0, t_in=450.0, q=0.5, sigma_in=1e-3, dust=DUST, name="outer")],
                 inclination=40.0, position_angle=70.0)


def baselines(n=6, seed=2):
    rng = np.random.default_rng(seed)
    b, a = rng.uniform(20.0, 110.0, n), rng.uniform(0.0, 2 * np.pi, n)
    return b * np.sin(a), b * np.cos(a)


def channel_model(scene, u, v, wl, bw):
    """Coherent fluxes per row × channel, from the scene's own channel averages."""
    vis = scene.visibility(u[:, None], v[:, None], wl[None, :], bandwidth=bw[None, :])
    flux = scene.sed(wl, bandwidth=bw)
    return vis, flux


def differential_set(scene, *, noise=0.0, seed=0, refmap=None, wl=None, bandpass=True):
    """OI_VIS of correlated fluxes and differential phases of ``scene`` on six baselines."""
    wl = np.linspace(8.0, 13.0, 20) if wl is None else wl
    bw = wl / 30.0
    u, v = baselines()
    vis, flux = channel_model(scene, u, v, wl, bw if bandpass else 0 * bw)
    coherent = flux * vis
    m = np.ones((wl.size, wl.size), bool) if refmap is None else refmap
    ref = np.einsum("ij,rj->ri", m, coherent)
    phi = np.degrees(np.angle(vis * np.conj(ref)))
    rng = np.random.default_rng(seed)
    cf_err = 0.05 * np.abs(coherent) + 0.02
    ph_err = np.full(phi.shape, 1.5)
    return ObservationSet.from_arrays(
        vis=dict(u=u, v=v, wavelength=wl, bandwidth=bw,
                 visamp=np.abs(coherent) + noise * rng.normal(size=phi.shape) * cf_err, visamp_err=cf_err,
                 visphi=(phi + noise * rng.normal(size=phi.shape) * ph_err + 180.0) % 360.0 - 180.0,
                 visphi_err=ph_err, amptyp="correlated flux", phityp="differential", visrefmap=m),
        insname="TEST-N", arrname="TEST", stations=STATIONS, file="n.fits")


def test_binary_differential_phase_follows_the_shift_theorem():
    # Two point sources, flux ratio f, companion at (x, y): V = (1 + f e^{-2πi(ux+vy)/λ})/(1 + f)
    # by the Fourier shift theorem (e.g. Berger & Segransan 2007, New Astron. Rev. 51, 576 —
    # FROM MEMORY). With one reference channel k the differential phase is arg V_i − arg V_k.
    lam = np.linspace(2.0, 2.4, 9) * 1e-6
    u, v = 80.0, -30.0
    x, y = 2e-8, 1.2e-8   # rad (about 4 and 2.5 mas)
    f = 0.3
    vis = (1 + f * np.exp(-2j * np.pi * (u * x + v * y) / lam)) / (1 + f)
    flux = np.linspace(1.0, 2.0, lam.size)
    k = 4
    index = np.full((lam.size, 1), k)
    got = differential_phase(vis, vis, flux, index)
    want = (np.degrees(np.angle(vis) - np.angle(vis[k])) + 180.0) % 360.0 - 180.0
    np.testing.assert_allclose(got, want, atol=1e-10)
    assert np.ptp(want) > 5.0   # a real test: the phases vary over the band


def test_reference_is_the_coherent_sum_of_the_named_channels():
    vis = np.exp(1j * np.radians([10.0, 40.0, -20.0]))
    flux = np.array([1.0, 3.0, 2.0])
    index = np.array([[1, 2], [0, -1], [-1, -1]])
    got = differential_phase(vis, vis, flux, index)
    ref0 = 3.0 * vis[1] + 2.0 * vis[2]
    assert got[0] == pytest.approx(np.degrees(np.angle(vis[0] / ref0)), abs=1e-12)
    assert got[1] == pytest.approx(30.0, abs=1e-12)
    assert np.isnan(got[2])


def test_centrosymmetric_scene_has_zero_differential_phase():
    # A point-symmetric brightness has a real visibility (Bracewell, the Fourier transform
    # of an even function is real): phases 0 or 180° only.
    obs = differential_set(lopsided_scene(0.0, 0.0))
    r = Comparison(obs).compare(lopsided_scene(0.0, 0.0))
    phi = r.model["diffphi"]
    assert np.all(np.minimum(np.abs(phi), 180.0 - np.abs(phi)) < 1e-6)
    lop = Comparison(obs).compare(lopsided_scene())
    assert np.nanmax(np.abs(lop.model["diffphi"])) > 1.0


def test_true_scene_gives_zero_chi2_and_noise_gives_chi2_per_point_near_one():
    scene = lopsided_scene()
    exact = Comparison(differential_set(scene)).compare(scene)
    assert exact.chi2["corrflux"] == pytest.approx(0.0, abs=1e-16)
    assert exact.chi2["diffphi"] == pytest.approx(0.0, abs=1e-16)
    noisy = Comparison(differential_set(scene, noise=1.0, seed=5)).compare(scene)
    n = noisy.npoints["diffphi"]
    assert n == 120 and noisy.npoints["corrflux"] == 120
    for kind in ("corrflux", "diffphi"):
        # χ²/N of N unit normals: mean 1, standard deviation sqrt(2/N).
        assert abs(noisy.reduced[kind] - 1.0) < 4 * np.sqrt(2.0 / n)
    other = Comparison(differential_set(scene)).compare(lopsided_scene(-0.5, 0.2))
    assert other.reduced["diffphi"] > 1.0


def test_kinds_are_split_by_amptyp_and_phityp():
    scene = lopsided_scene()
    corr = differential_set(scene)
    u, v = baselines()
    wl = np.linspace(8.0, 13.0, 20)
    vis, _ = channel_model(scene, u, v, wl, wl / 30.0)
    absolute = ObservationSet.from_arrays(
        vis=dict(u=u, v=v, wavelength=wl, bandwidth=wl / 30.0, visamp=np.abs(vis),
                 visamp_err=np.full(vis.shape, 0.02), visphi=np.zeros(vis.shape),
                 visphi_err=np.full(vis.shape, 5.0)),
        insname="TEST-ABS", arrname="TEST", stations=STATIONS, file="abs.fits")
    comp = Comparison(corr + absolute)
    assert comp.kinds == ["visamp", "corrflux", "diffphi"]
    r = comp.compare(scene)
    # Each kind is aligned with all vis points; the other type's points are NaN.
    assert r.npoints == {"visamp": 120, "corrflux": 120, "diffphi": 120}
    assert r.chi2["visamp"] == pytest.approx(0.0, abs=1e-16)
    assert np.isnan(r.model["visamp"][:120]).all() and np.isnan(r.model["corrflux"][120:]).all()


def test_phase_residual_is_wrap_safe_for_differential_phases():
    # 179° against −179° is 2° apart, not 358°: the squared residual is that of 2°.
    assert phase_residual(179.0, -179.0, 1.0) ** 2 == pytest.approx(np.degrees(2 * np.sin(np.radians(1.0))) ** 2)
    assert phase_residual(179.0, -179.0, 1.0) ** 2 == pytest.approx(phase_residual(1.0, -1.0, 1.0) ** 2)


def test_a_selection_keeps_the_file_reference():
    # The file's phases refer to all 20 channels; dropping channels must not change the model
    # of the channels kept (their references become extra samples).
    scene = lopsided_scene()
    obs = differential_set(scene)
    full = Comparison(obs).compare(scene).model["diffphi"]
    keep = obs.vis["wavelength"].values < 10.0
    part = Comparison(obs.select_wavelength(0.0, 10.0))
    assert part._slices["visref"].stop - part._slices["visref"].start > 0
    np.testing.assert_allclose(part.compare(scene).model["diffphi"], full[keep], atol=1e-9)


def test_bandpass_switch_applies_to_reference_channels():
    scene = lopsided_scene()
    mono = differential_set(scene, bandpass=False)
    r = Comparison(mono, bandpass={"n.fits": False}).compare(scene)
    assert r.chi2["diffphi"] == pytest.approx(0.0, abs=1e-14)
    assert Comparison(mono).compare(scene).chi2["diffphi"] > 1e-6


def test_visrefmap_round_trip_and_reading(tmp_path):
    nw = 6
    refmap = ~np.eye(nw, dtype=bool)          # every other channel
    refmap[0] = False
    refmap[0, 3] = True                       # channel 0 against channel 3 alone
    scene = lopsided_scene()
    obs = differential_set(scene, refmap=refmap, wl=np.linspace(8.0, 12.0, nw))
    path = write_oifits(tmp_path / "diff.fits", obs)
    with fits.open(path) as h:
        assert h["OI_VIS"].header["PHITYP"] == "differential"
        assert h["OI_VIS"].columns["VISAMP"].unit == "Jy"
        np.testing.assert_array_equal(h["OI_VIS"].data["VISREFMAP"][0], refmap)
    back = read_oifits(path)
    np.testing.assert_allclose(back.vis["ref_wavelength"].values, obs.vis["ref_wavelength"].values,
                               rtol=1e-6, equal_nan=True)
    r = Comparison(back).compare(scene)
    assert r.reduced["diffphi"] < 1e-6   # float32 EFF_WAVE only


def test_reference_from_map_pads_with_nan():
    refmap = np.array([[[True, False, True], [False, False, False], [True, True, True]]])
    wl, bw = reference_from_map(refmap, np.array([1.0, 2.0, 3.0]), np.array([0.1, 0.2, 0.3]),
                                rows=np.array([0, 0, 0]), channels=np.array([0, 1, 2]))
    np.testing.assert_array_equal(wl, [[1.0, 3.0, np.nan], [np.nan] * 3, [1.0, 2.0, 3.0]])
    np.testing.assert_array_equal(bw[0, :2], [0.1, 0.3])


def test_correlated_flux_in_mjy_is_converted(tmp_path):
    obs = differential_set(lopsided_scene())
    path = write_oifits(tmp_path / "d.fits", obs)
    with fits.open(path, mode="update") as h:
        t = h["OI_VIS"]
        t.data["VISAMP"] *= 1e3
        t.data["VISAMPERR"] *= 1e3
        t.columns["VISAMP"].unit = "mJy"
        t.columns["VISAMPERR"].unit = "mJy"
        t.header["TUNIT5"] = t.header.get("TUNIT5")
    with fits.open(path) as h:
        assert h["OI_VIS"].columns["VISAMP"].unit == "mJy"
    back = read_oifits(path, check_checksums=False)
    np.testing.assert_allclose(back.vis["visamp"].values, obs.vis["visamp"].values, rtol=1e-12)


def test_concatenation_pads_references_of_different_lengths():
    scene = lopsided_scene()
    short = differential_set(scene, wl=np.linspace(8.0, 10.0, 3))
    long = differential_set(scene, wl=np.linspace(10.5, 13.0, 7))
    absolute = ObservationSet.from_arrays(
        vis=dict(u=[30.0], v=[5.0], wavelength=np.array([9.0]), visamp=np.ones((1, 1)),
                 visamp_err=np.ones((1, 1)), visphi=np.zeros((1, 1)), visphi_err=np.ones((1, 1))),
        insname="ABS", arrname="TEST", stations=STATIONS)
    both = ObservationSet.concat([short, long, absolute])
    ref = both.vis["ref_wavelength"].values
    assert ref.shape == (18 + 42 + 1, 7)
    assert np.isnan(ref[:18, 3:]).all() and np.isfinite(ref[18:60]).all() and np.isnan(ref[-1]).all()
    # each part's model is unchanged by the company it keeps
    r = Comparison(both).compare(scene)
    assert r.chi2["diffphi"] == pytest.approx(0.0, abs=1e-14)


def test_report_tables_hold_only_their_points_and_figures_follow_the_kinds(tmp_path):
    from diskexplorer.report import chi2_breakdown, residual_tables
    from diskexplorer.report.figures import write_figures
    from diskexplorer.report.outputs import planned_outputs

    scene = lopsided_scene()
    u, v = baselines()
    wl = np.linspace(8.0, 13.0, 20)
    vis, _ = channel_model(scene, u, v, wl, wl / 30.0)
    absolute = ObservationSet.from_arrays(
        vis=dict(u=u, v=v, wavelength=wl, bandwidth=wl / 30.0, visamp=np.abs(vis) + 0.01,
                 visamp_err=np.full(vis.shape, 0.02), visphi=np.zeros(vis.shape),
                 visphi_err=np.full(vis.shape, 5.0)),
        insname="TEST-ABS", arrname="TEST", stations=STATIONS, file="abs.fits")
    comparison = Comparison(differential_set(scene, noise=1.0) + absolute)
    result = comparison.compare(scene)
    tables = residual_tables(comparison, result)
    assert len(tables["visamp"]["data"]) == 120 and len(tables["corrflux"]["data"]) == 120
    assert set(tables["diffphi"]["instrument"]) == {"TEST-N"}
    np.testing.assert_allclose(tables["visamp"]["residual"], 0.5)   # 0.01 / 0.02
    rows = {(r["kind"], r["subset"]): r for r in chi2_breakdown(result, tables)}
    assert rows[("diffphi", "all")]["chi2"] == pytest.approx(result.chi2["diffphi"])
    assert rows[("visamp", "all")]["chi2"] == pytest.approx(120 * 0.25)
    plan = planned_outputs(tmp_path, comparison.kinds, ("png",), cube=False)
    names = ("visibility_amplitude", "correlated_flux", "differential_phase")
    assert all(n in plan["figures"] for n in names)
    assert "differential_phase" not in planned_outputs(tmp_path, ["vis2"], ("png",))["figures"]
    paths = {n: plan["figures"][n] for n in names}
    written = write_figures(scene, comparison, result, None, paths)
    assert sorted(p.name for p in written) == sorted(f"{n}.png" for n in names)


def test_weights_must_name_known_kinds():
    from diskexplorer.errors import ParameterError
    from diskexplorer.fitting.data_description import DataDescription
    from diskexplorer.errors import SeedError

    with pytest.raises(ParameterError, match="'visphi'.*known: vis2"):
        Comparison(differential_set(lopsided_scene()), weights={"visphi": 2.0})
    with pytest.raises(SeedError, match=r"data\.weights: unknown data kind\(s\) 'diff_phi'"):
        DataDescription.from_dict({"weights": {"diff_phi": 1.0}})
    assert DataDescription.from_dict({"weights": {"diffphi": 0.5, "corrflux": 2}}).weights == {
        "diffphi": 0.5, "corrflux": 2.0}


def test_refinement_and_scans_use_the_new_kinds():
    from diskexplorer.fitting import refine
    from diskexplorer.fitting.scan import scan_grid

    truth = lopsided_scene()
    comparison = Comparison(differential_set(truth))
    # Only the differential phases see the brightness asymmetry here (correlated fluxes too,
    # weakly): weight the amplitudes out, and refinement must find c1, s1 from the phases.
    phases_only = Comparison(comparison.observations, weights={"corrflux": 0.0})
    start = truth.with_ring(0, c1=0.2, s1=0.5)
    result = refine(start, phases_only, free=["rings.0.c1", "rings.0.s1"])
    assert result.scene.rings[0].c1 == pytest.approx(0.5, abs=1e-4)
    assert result.scene.rings[0].s1 == pytest.approx(0.3, abs=1e-4)
    ds = scan_grid(truth, comparison, {"rings.0.c1": [0.3, 0.5], "rings.0.s1": [0.3, 0.1]})
    assert {"chi2_corrflux", "chi2_diffphi"} <= set(ds.data_vars)
    assert float(ds["chi2_diffphi"].values[1, 0]) == pytest.approx(0.0, abs=1e-12)
    assert float(ds["chi2_diffphi"].values[0, 1]) > 1.0


def test_start_document_records_the_new_kinds(tmp_path):
    from diskexplorer.fitting import export_start, read_start, write_start
    from diskexplorer.fitting.data_description import DataDescription

    scene = lopsided_scene()
    path = write_oifits(tmp_path / "n.fits", differential_set(scene, noise=1.0))
    data = DataDescription.from_dict({"oifits": [{"path": str(path)}], "weights": {"diffphi": 0.5}})
    judged = data.comparison().compare(scene)
    doc = export_start(scene, free=["rings.0.c1"], data=data, comparison_result=judged)
    write_start(tmp_path / "start.json", doc)
    back = read_start(tmp_path / "start.json")
    assert set(back.judgement["chi2"]) == {"corrflux", "diffphi"}
    assert back.judgement["weights"]["diffphi"] == 0.5
    again = back.comparison().compare(back.scene)
    assert again.weights["diffphi"] == 0.5
    assert again.total == pytest.approx(back.judgement["total"], rel=1e-9)
