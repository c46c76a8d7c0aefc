"""Which samples each differential phase refers to (diskexplorer.fitting.references).

The comparison builds each point's reference from small integer codes (pattern, row,
channel) so that wide files stay fast. These tests check the result against the
definition, point by point: the reference of a point is the coherent sum of the model's
F_ν V over the channels its VISREFMAP names, on the point's own (u, v) (OIFITS v2,
Duvert, Young & Hummel 2017, A&A 597, A8, OI_VIS/VISREFMAP), computed here directly with
the scene's own visibility and SED.
"""
import numpy as np
import pytest

from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.data.observations import ObservationSet
from diskexplorer.fitting.comparison import Comparison
from diskexplorer.fitting.references import reference_sets
from diskexplorer.observables.distinct import distinct_rows

DUST = PowerLawOpacity(kappa_ref=2500.0, wavelength_ref=10.0, beta=1.2)


def lopsided():
    return Scene(distance=120.0, star=Star(t_eff=7500.0, radius=2.2),
                 rings=[Ring(r_in=0.4, r_out=0.9, t_in=1400.0, q=0.5, sigma_in=1e-2, dust=DUST,
                             c1=0.5, s1=0.3, name="rim")],
                 inclination=40.0, position_angle=70.0)


def mixed_maps(n_rows=6, n_wave=9, seed=3):
    """OI_VIS rows whose maps differ: all channels, all but the channel itself, a band."""
    rng = np.random.default_rng(seed)
    b, a = rng.uniform(20.0, 110.0, n_rows), rng.uniform(0.0, 2 * np.pi, n_rows)
    u, v = b * np.sin(a), b * np.cos(a)
    wl = np.linspace(3.0, 4.6, n_wave)
    bw = wl / 40.0
    refmap = np.ones((n_rows, n_wave, n_wave), bool)
    refmap[1] = ~np.eye(n_wave, dtype=bool)           # every other channel
    refmap[2] = False
    refmap[2][:, 2:5] = True                          # a fixed continuum band
    refmap[4] = refmap[1]                             # a pattern seen twice
    vis = dict(u=u, v=v, wavelength=wl, bandwidth=bw, mjd=60000.0 + np.arange(n_rows) * 0.01,
               visamp=np.full((n_rows, n_wave), 0.5), visamp_err=np.full((n_rows, n_wave), 0.05),
               visphi=np.zeros((n_rows, n_wave)), visphi_err=np.ones((n_rows, n_wave)),
               amptyp="absolute", phityp="differential", visrefmap=refmap)
    return ObservationSet.from_arrays(vis=vis, insname="SIM-LM", target="SIM-DISK")


def direct_differential_phase(scene, vis, banded=True):
    """φ_i = arg(V_i · conj(Σ_j F(λ_j) V(u_i, v_i, λ_j))), point by point."""
    out = np.full(vis.sizes["point"], np.nan)
    for i in range(vis.sizes["point"]):
        ref_wl = vis["ref_wavelength"].values[i]
        keep = np.isfinite(ref_wl)
        if not keep.any():
            continue
        ref_wl = ref_wl[keep]
        ref_bw = vis["ref_bandwidth"].values[i][keep] if banded else np.zeros(ref_wl.size)
        u, v = vis["u"].values[i], vis["v"].values[i]
        own_bw = vis["bandwidth"].values[i] if banded else 0.0
        own = scene.visibility(np.array([u]), np.array([v]), np.array([vis["wavelength"].values[i]]),
                               bandwidth=np.array([own_bw]))[0]
        ref = np.sum(scene.sed(ref_wl, bandwidth=ref_bw)
                     * scene.visibility(np.full(ref_wl.size, u), np.full(ref_wl.size, v), ref_wl,
                                        bandwidth=ref_bw))
        out[i] = np.degrees(np.angle(own * np.conj(ref)))
    return out


@pytest.mark.parametrize("bandpass", [True, False])
def test_every_point_refers_to_the_channels_its_map_names(bandpass):
    obs = mixed_maps()
    scene = lopsided()
    got = Comparison(obs, bandpass=bandpass).compare(scene).model["diffphi"]
    want = direct_differential_phase(scene, obs.vis, banded=bandpass)
    assert np.all(np.isfinite(got))
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-9)


def test_reference_channels_that_are_not_points_become_samples_of_their_own():
    # A band filter drops channels that other points' references still name.
    obs = mixed_maps()
    wl = obs.vis["wavelength"].values
    kept = obs.vis.isel(point=np.flatnonzero(wl > 3.5))
    sub = ObservationSet(vis=kept, targets=obs.targets, arrays=obs.arrays)
    scene = lopsided()
    comparison = Comparison(sub)
    assert comparison._slices["visref"].stop > comparison._slices["visref"].start   # extra samples exist
    got = comparison.compare(scene).model["diffphi"]
    np.testing.assert_allclose(got, direct_differential_phase(scene, sub.vis), rtol=0, atol=1e-9)


def test_points_sharing_a_row_and_a_map_share_one_reference():
    obs = mixed_maps(n_rows=6, n_wave=9)
    vis = obs.vis
    sets = reference_sets(vis["u"].values, vis["v"].values, vis["wavelength"].values,
                          vis["bandwidth"].values, vis["ref_wavelength"].values, vis["ref_bandwidth"].values)
    # Rows 0, 3, 5 (all channels) and 2 (a band): one reference per row. Rows 1 and 4
    # (all but the channel itself): one per point.
    assert sets.matrix.shape[0] == 4 * 1 + 2 * 9
    assert sets.extra[0].size == 0          # every reference channel is a point
    assert np.array_equal(np.diff(sets.matrix.indptr)[sets.of_point], np.isfinite(vis["ref_wavelength"].values).sum(1))


def test_points_without_a_differential_phase_get_no_reference():
    obs = mixed_maps()
    vis = obs.vis
    differential = np.arange(vis.sizes["point"]) % 2 == 0
    sets = reference_sets(vis["u"].values, vis["v"].values, vis["wavelength"].values, vis["bandwidth"].values,
                          vis["ref_wavelength"].values, vis["ref_bandwidth"].values, differential=differential)
    named = np.diff(sets.matrix.indptr)[sets.of_point] > 0
    assert np.array_equal(named, differential)


def test_distinct_rows_agree_with_numpy_unique():
    # numpy's own np.unique(axis=0) is the reference.
    rng = np.random.default_rng(4)
    a = rng.integers(-3, 4, size=(4000, 4)) * rng.choice([0.25, 1.5], size=(4000, 4))
    a[::17, 0] = -0.0
    rows, inverse = distinct_rows(a)
    want, want_inverse = np.unique(a + 0.0, axis=0, return_inverse=True)
    assert np.array_equal(rows, want)
    assert np.array_equal(inverse, want_inverse.ravel())
    assert np.array_equal(rows[inverse], a + 0.0)


def test_rows_that_a_fingerprint_cannot_tell_apart_are_still_grouped_exactly(monkeypatch):
    # Fingerprints that are all equal (weights of zero) must not merge different
    # references: the grouping falls back to comparing the rows' bytes.
    import diskexplorer.fitting.references as references

    class ZeroWeights:
        def integers(self, low, high, size, dtype):
            return np.zeros(size, dtype=dtype)

    obs = mixed_maps()
    scene = lopsided()
    want = Comparison(obs).compare(scene).model["diffphi"]
    monkeypatch.setattr(references.np.random, "default_rng", lambda seed: ZeroWeights())
    got = Comparison(obs).compare(scene).model["diffphi"]
    np.testing.assert_array_equal(got, want)
    vis = obs.vis
    sets = reference_sets(vis["u"].values, vis["v"].values, vis["wavelength"].values,
                          vis["bandwidth"].values, vis["ref_wavelength"].values, vis["ref_bandwidth"].values)
    assert sets.matrix.shape[0] == 4 * 1 + 2 * 9
