"""Public helpers for tests: a synthetic OIFITS factory, a small synthetic scene and its
data, and readable comparisons.

Headless and fast. The OIFITS helpers use only the data layer (:mod:`diskexplorer.data`);
:func:`synthetic_scene` and :func:`synthetic_data` import the model lazily.
"""

from __future__ import annotations

from itertools import combinations
from pathlib import Path

import numpy as np

from .data.bands import band_range
from .data.observations import KINDS, ObservationSet
from .data.oifits_write import write_oifits

__all__ = ["make_observations", "make_oifits", "assert_observations_equal", "assert_scenes_equal",
           "make_uncalibrated_night", "make_wide_night",
           "synthetic_scene", "synthetic_data"]

# An invented, non-redundant station layout (east, north, up; m) for synthetic arrays.
_STATIONS = np.array([[0.0, 0.0, 0.0], [32.0, 14.0, 0.0], [-21.0, 47.0, 0.0], [58.0, -36.0, 0.0],
                      [-66.0, -12.0, 0.0], [12.0, 90.0, 0.0], [95.0, 41.0, 0.0], [-40.0, -80.0, 0.0]])


def make_observations(*, n_telescopes: int = 4, n_exposures: int = 3, n_channels: int = 10,
                      band: str = "K", n_triangles: int | None = None, diameter_mas: float = 2.0,
                      target: str = "SIM-DISK-1", insname: str = "SIM_INSTR", arrname: str = "SIM_ARRAY",
                      flag_fraction: float = 0.0, include_vis: bool = False, include_flux: bool = False,
                      noise: float = 0.01, seed: int = 0, mjd0: float = 60000.0,
                      wavelengths=None) -> ObservationSet:
    """Build a synthetic observation set of a uniform disk on an invented array.

    Parameters
    ----------
    n_telescopes : int
        2–8 telescopes; all pairs are baselines.
    n_exposures : int
        Exposures; the (u, v) plane is rotated by 15° between exposures (a stand-in for
        Earth rotation, enough for tests).
    n_channels : int
        Spectral channels spread evenly over the band.
    band : str
        Interferometric band (H, K, L, M, N) setting the wavelength range.
    wavelengths : array_like, optional
        Channel wavelengths, µm, in the order the file lists them (ascending, or
        descending as some instruments write them); overrides ``band`` and ``n_channels``.
    n_triangles : int, optional
        Closure triangles per exposure (default: all).
    diameter_mas : float
        Uniform-disk diameter, mas: V = 2 J1(x)/x, x = π θ B/λ.
    flag_fraction : float
        Fraction of channels flagged at random.
    include_vis, include_flux : bool
        Also make OI_VIS (|V| and zero phases) and OI_FLUX (1 Jy) points.
    noise : float
        Gaussian noise on V² (absolute) and closure phases (degrees × 100·noise).
    seed : int
        Random seed.

    Returns
    -------
    ObservationSet
    """
    from scipy.special import j1

    if not 2 <= n_telescopes <= len(_STATIONS):
        raise ValueError(f"n_telescopes must be 2..{len(_STATIONS)}, got {n_telescopes}")
    rng = np.random.default_rng(seed)
    if wavelengths is None:
        lo, hi = band_range(band)
        wave = np.linspace(lo + 0.05 * (hi - lo), hi - 0.05 * (hi - lo), n_channels)
    else:
        wave = np.asarray(wavelengths, float).ravel()
        if wave.size < 1 or not np.all(np.isfinite(wave) & (wave > 0)):
            raise ValueError(f"wavelengths must be positive and finite (µm), got {wavelengths!r}")
        n_channels = wave.size
        lo, hi = float(wave.min()), float(wave.max())
        if hi == lo:
            lo, hi = 0.95 * lo, 1.05 * hi
    # Single-precision-exact wavelengths so a written file reads back bit for bit.
    wave = ((wave * 1e-6).astype(np.float32).astype(float)) * 1e6
    bw = np.full(n_channels, (hi - lo) * 0.9 / max(n_channels, 1))
    bw = ((bw * 1e-6).astype(np.float32).astype(float)) * 1e6
    st = _STATIONS[:n_telescopes]
    pairs = list(combinations(range(n_telescopes), 2))
    tris = list(combinations(range(n_telescopes), 3))[: n_triangles if n_triangles is not None else None]
    theta = diameter_mas * np.pi / 180 / 3600e3

    def vis(u, v):  # u, v: (..., 1) m; returns (..., nwave)
        x = np.pi * theta * np.hypot(u, v) / (wave * 1e-6)
        return np.where(x > 1e-8, 2 * j1(np.maximum(x, 1e-300)) / np.where(x > 1e-8, x, 1.0), 1.0)

    rows2, rows3 = [], []
    for e in range(n_exposures):
        ang = np.deg2rad(15.0 * e)
        rot = np.array([[np.cos(ang), -np.sin(ang)], [np.sin(ang), np.cos(ang)]])
        xy = st[:, :2] @ rot.T
        mjd = mjd0 + e * 0.01
        for a, b in pairs:
            u, v = xy[b] - xy[a]
            rows2.append((u, v, a + 1, b + 1, mjd))
        for a, b, c in tris:
            u1, v1 = xy[b] - xy[a]
            u2, v2 = xy[c] - xy[b]
            rows3.append((u1, v1, u2, v2, a + 1, b + 1, c + 1, mjd))
    r2 = np.array(rows2)
    u, v = r2[:, 0:1], r2[:, 1:2]
    amp = vis(u, v)
    v2err = np.full(amp.shape, noise)
    cols = dict(u=r2[:, 0], v=r2[:, 1], wavelength=wave, bandwidth=bw, mjd=r2[:, 4], int_time=60.0,
                sta_index1=r2[:, 2].astype(int), sta_index2=r2[:, 3].astype(int),
                vis2=amp ** 2 + rng.normal(0, noise, amp.shape), vis2_err=v2err,
                flag=rng.random(amp.shape) < flag_fraction)
    kinds = {"vis2": cols}
    if rows3:
        r3 = np.array(rows3)
        a1, a2 = vis(r3[:, 0:1], r3[:, 1:2]), vis(r3[:, 2:3], r3[:, 3:4])
        a3 = vis(r3[:, 0:1] + r3[:, 2:3], r3[:, 1:2] + r3[:, 3:4])
        t3amp = np.abs(a1 * a2 * a3)
        phase_noise = 100 * noise
        kinds["t3"] = dict(u1=r3[:, 0], v1=r3[:, 1], u2=r3[:, 2], v2=r3[:, 3], wavelength=wave,
                           bandwidth=bw, mjd=r3[:, 7], int_time=60.0,
                           sta_index1=r3[:, 4].astype(int), sta_index2=r3[:, 5].astype(int),
                           sta_index3=r3[:, 6].astype(int),
                           # A uniform disk's triple product is real (0° or 180°); keep T3AMP
                           # noise-free so it never exceeds 1 + error (an OIFITS rule).
                           t3amp=t3amp, t3amp_err=np.full(t3amp.shape, noise),
                           t3phi=np.where(a1 * a2 * a3 < 0, 180.0, 0.0) + rng.normal(0, phase_noise, t3amp.shape),
                           t3phi_err=np.full(t3amp.shape, phase_noise),
                           flag=rng.random(t3amp.shape) < flag_fraction)
    if include_vis:
        kinds["vis"] = dict(u=r2[:, 0], v=r2[:, 1], wavelength=wave, bandwidth=bw, mjd=r2[:, 4],
                            int_time=60.0, sta_index1=r2[:, 2].astype(int), sta_index2=r2[:, 3].astype(int),
                            visamp=np.abs(amp), visamp_err=np.full(amp.shape, noise),
                            visphi=np.zeros(amp.shape), visphi_err=np.full(amp.shape, 1.0))
    if include_flux:
        kinds["flux"] = dict(wavelength=wave, bandwidth=bw, mjd=np.array([mjd0]), int_time=60.0,
                             flux=np.ones((1, n_channels)), flux_err=np.full((1, n_channels), 0.05))
    stations = {f"ST{i + 1}": tuple(st[i]) for i in range(n_telescopes)}
    return ObservationSet.from_arrays(**kinds, insname=insname, arrname=arrname, target=target,
                                      stations=stations, diameter=8.0, frame="GEOCENTRIC",
                                      target_info=dict(raep0=83.0, decep0=-5.0, equinox=2000.0))


def make_oifits(tmp_path, name: str = "synthetic.fits", *, overwrite: bool = False, **kwargs) -> Path:
    """Write a synthetic OIFITS v2 file and return its path.

    Parameters
    ----------
    tmp_path : str or os.PathLike
        Directory (e.g. pytest's ``tmp_path``).
    name : str
        File name inside ``tmp_path``.
    overwrite : bool
        Replace an existing file of that name.
    **kwargs
        Passed to :func:`make_observations`.

    Returns
    -------
    pathlib.Path
    """
    path = Path(tmp_path) / name
    write_oifits(path, make_observations(**kwargs), overwrite=overwrite, date="2024-01-01T00:00:00")
    return path


def assert_observations_equal(actual: ObservationSet, expected: ObservationSet, *,
                              ignore=("file",), rtol: float = 0.0, atol: float = 0.0) -> None:
    """Assert two observation sets hold the same points, with a readable difference.

    Parameters
    ----------
    actual, expected : ObservationSet
    ignore : sequence of str
        Variables and coordinates not compared (default: the source file name).
    rtol, atol : float
        Tolerances for floating-point variables (default: exact, NaN equal to NaN).

    Raises
    ------
    AssertionError
        Listing each kind and variable that differs, with the first differing point.
    """
    problems = []
    for kind in KINDS:
        a, e = getattr(actual, kind), getattr(expected, kind)
        na = 0 if a is None else a.sizes["point"]
        ne = 0 if e is None else e.sizes["point"]
        if na != ne:
            problems.append(f"{kind}: {na} points, expected {ne}")
            continue
        if not na:
            continue
        names = sorted((set(a.variables) | set(e.variables)) - set(ignore))
        for name in names:
            if name not in a.variables or name not in e.variables:
                problems.append(f"{kind}.{name}: present in only one set")
                continue
            x, y = a[name].values, e[name].values
            if x.dtype.kind == "f" or y.dtype.kind == "f":
                ok = np.isclose(x, y, rtol=rtol, atol=atol, equal_nan=True)
            else:
                ok = x == y
            if not np.all(ok):
                i = int(np.flatnonzero(~np.asarray(ok))[0])
                problems.append(f"{kind}.{name}: {int((~np.asarray(ok)).sum())} point(s) differ; first at "
                                f"point {i}: {x[i]!r} != {y[i]!r}")
    if problems:
        raise AssertionError("observation sets differ:\n  " + "\n  ".join(problems))


def synthetic_scene():
    """A small invented scene: a star with two rings and a gap (140 pc, inclination 35°).

    Cheaper to evaluate than the sample's scene; the app's widget tests use it with
    :func:`synthetic_data`.

    Returns
    -------
    Scene
    """
    from .dust import DustMix
    from .observables.scene import Scene
    from .physics.ring import Ring
    from .physics.star import Star

    inner = Ring(r_in=0.35, r_out=0.9, t_in=1450.0, q=0.6, sigma_in=3e-3, p=1.0,
                 dust=DustMix({"olivine_glass": 0.6, "forsterite": 0.25, "iron": 0.15}, grain_size=1.5, shape="dhs"),
                 name="inner")
    outer = Ring(r_in=3.0, r_out=8.0, t_in=420.0, q=0.5, sigma_in=1e-3, p=1.0,
                 dust=DustMix({"olivine_glass": 0.8, "enstatite_glass": 0.2}, grain_size=0.1, shape="dhs"),
                 name="outer")
    return Scene(distance=140.0, star=Star(t_eff=7600.0, radius=2.1, mass=2.2),
                 rings=(inner, outer), inclination=35.0, position_angle=60.0,
                 extended_fraction=0.03)


def synthetic_data(scene=None, seed: int = 1) -> dict:
    """Synthetic V², closure phases, photometry and an N-band spectrum of ``scene``.

    The "truth" is ``scene`` with a slightly hotter, larger inner ring and a bright side,
    so ``scene`` itself does not fit perfectly. Noise is Gaussian. Two invented
    instruments (K band, 6 telescopes, 8 channels; N band, 4 telescopes, 24 channels),
    each on an array of its own.

    Parameters
    ----------
    scene : Scene, optional
        Defaults to :func:`synthetic_scene`.
    seed : int
        Random seed.

    Returns
    -------
    dict
        ``observations`` (ObservationSet), ``photometry`` and ``spectrum``
        (xarray.Dataset), as :func:`diskexplorer.explore` accepts them.
    """
    from .data.photometry import photometry_dataset
    from .data.spectrum import spectrum_dataset
    from .physics.ring import Ring

    scene = scene or synthetic_scene()
    c1, s1 = Ring.modulation(0.3, 50.0)
    truth = scene.with_ring(0, r_in=scene.rings[0].r_in * 1.1, t_in=scene.rings[0].t_in + 80.0,
                            c1=c1, s1=s1) if scene.rings else scene
    rng = np.random.default_rng(seed)
    sets = []
    for band, ntel, nch, ins, noise in (("K", 6, 8, "DEMO-K", 0.02), ("N", 4, 24, "DEMO-N", 0.03)):
        obs = make_observations(n_telescopes=ntel, n_exposures=4, n_channels=nch, band=band,
                                insname=ins, arrname=f"{ins}-ARRAY", target="DEMO-DISK", noise=noise, seed=seed)
        v2 = obs.vis2
        model = truth.vis2(v2["u"].values, v2["v"].values, v2["wavelength"].values)
        v2 = v2.assign(vis2=("point", model + rng.normal(0, noise, model.shape)),
                       vis2_err=("point", np.full(model.shape, noise)))
        t3 = obs.t3
        cp = truth.closure_phase(t3["u1"].values, t3["v1"].values, t3["u2"].values, t3["v2"].values,
                                 t3["wavelength"].values)
        err = 1.5 if band == "K" else 3.0
        t3 = t3.assign(t3phi=("point", cp + rng.normal(0, err, cp.shape)),
                       t3phi_err=("point", np.full(cp.shape, err)))
        sets.append(ObservationSet(vis2=v2, t3=t3, targets=obs.targets, arrays=obs.arrays,
                                   files=(f"demo-{band}",)))
    observations = ObservationSet.concat(sets)
    phot_wl = np.array([0.44, 0.55, 0.64, 0.79, 1.25, 1.65, 2.2, 3.4, 4.6, 12.0, 22.0, 60.0, 100.0])
    phot = truth.sed(phot_wl)
    photometry = photometry_dataset(phot_wl, phot * (1 + rng.normal(0, 0.05, phot.shape)), 0.08 * phot,
                                    band=["B", "V", "R", "I", "J", "H", "K", "W1", "W2", "W3", "W4",
                                          "F60", "F100"])
    spec_wl = np.linspace(7.6, 13.4, 90)
    spec = truth.sed(spec_wl)
    spectrum = spectrum_dataset(spec_wl, spec * (1 + rng.normal(0, 0.02, spec.shape)), 0.03 * spec)
    return {"observations": observations, "photometry": photometry, "spectrum": spectrum}


def assert_scenes_equal(actual, expected, where="scene"):
    """Assert that two scenes hold the same model, naming the first field that differs.

    Scenes, stars, rings and mixtures compare field by field; tabulated opacities and
    photospheres (which compare by identity) by their columns, label and reference
    distance. Numbers must be equal exactly: a codec that loses a bit fails.

    Raises
    ------
    AssertionError
        ``"<path>: <actual> != <expected>"`` for the first difference.
    """
    import dataclasses

    def same(a, b, at):
        if type(a) is not type(b):
            raise AssertionError(f"{at}: {type(a).__name__} != {type(b).__name__}")
        if dataclasses.is_dataclass(a):
            for f in dataclasses.fields(a):
                same(getattr(a, f.name), getattr(b, f.name), f"{at}.{f.name}")
        elif isinstance(a, (tuple, list)):
            if len(a) != len(b):
                raise AssertionError(f"{at}: {len(a)} items != {len(b)} items")
            for k, (x, y) in enumerate(zip(a, b)):
                same(x, y, f"{at}[{k}]")
        elif isinstance(a, dict):
            same(sorted(a.items()), sorted(b.items()), at)
        elif hasattr(a, "wavelength") and not isinstance(a, np.ndarray):   # κ or photosphere table
            for name in ("wavelength", "values", "flux", "label", "reference_distance"):
                if hasattr(a, name):
                    same(getattr(a, name), getattr(b, name), f"{at}.{name}")
        elif isinstance(a, np.ndarray):
            if a.shape != b.shape or not np.array_equal(a, b):
                raise AssertionError(f"{at}: arrays differ ({a!r} != {b!r})")
        elif a != b:
            raise AssertionError(f"{at}: {a!r} != {b!r}")

    same(actual, expected, where)


def make_uncalibrated_night(folder):
    """Write a K-band night file whose OI_FLUX is uncalibrated, and the same file without it.

    The invented demo star and array of :mod:`diskexplorer.sample`: calibrated V² and
    closure phases of its H/K instrument, plus one OI_FLUX table left uncalibrated
    (CALSTAT 'U', counts in ADU, 2·10⁴ counts per Jy) as pipelines deliver raw total
    fluxes. For tests of what the comparison must not judge as Jy.

    Returns
    -------
    (Path, Path, int)
        The file with the OI_FLUX table, the one without it, and the number of OI_FLUX points.
    """
    from .sample import STATIONS, demo_scene, simulate_observations

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    scene = demo_scene()
    hk = simulate_observations(scene)["QT-HK"]
    wl = np.unique(hk.vis2["wavelength"].values)
    counts = 2.0e4 * scene.sed(wl)
    flux = ObservationSet.from_arrays(
        flux=dict(wavelength=wl, bandwidth=wl / 35.0, mjd=np.array([61000.2]), int_time=60.0,
                  flux=counts[None, :], flux_err=0.02 * counts[None, :], calstat="U", flux_unit="adu",
                  sta_index=np.array([1])),
        insname="QT-HK", arrname="QUARTET", target="Aurelis", stations=dict(STATIONS), diameter=1.8)
    with_flux = folder / "night_uncalibrated_flux.fits"
    write_oifits(with_flux, ObservationSet.concat([hk, flux]))
    without = folder / "night_interferometry_only.fits"
    write_oifits(without, hk)
    return with_flux, without, wl.size


def make_wide_night(folder, name: str = "wide_night_K.fits", *, n_exposures: int = 8,
                    n_channels: int = 210, n_ft_channels: int = 5, seed: int = 7) -> Path:
    """Write a K-band four-telescope night file shaped like today's wide-band products.

    The invented demo star and array of :mod:`diskexplorer.sample` (compact configuration),
    observed by an invented instrument with a fringe-tracker and a science spectrograph,
    each in two split polarisations: four INSNAMEs (``SIMK-FT-P1``, ``SIMK-FT-P2`` with
    ``n_ft_channels`` channels, ``SIMK-SC-P1``, ``SIMK-SC-P2`` with ``n_channels``). Every INSNAME has V², closure phases and
    triple amplitudes, absolute visibility amplitudes with differential phases against
    every channel of the row (VISREFMAP all true) and per-telescope total fluxes (OI_FLUX,
    Jy); values are the demo scene's channel averages plus Gaussian noise, errors as in
    :func:`diskexplorer.sample.simulate_observations`. For speed benchmarks and tests of
    wide files: each science exposure holds 6 × 3 + 4 × 2 + 4 × 2 = 34 points per
    channel and polarisation.

    Parameters
    ----------
    folder : str or os.PathLike
        Where the file is written (created if missing).
    name : str
        File name.
    n_exposures : int
        Exposures, spread over hour angles −3 h … +3 h.
    n_channels, n_ft_channels : int
        Science and fringe-tracker channels (1.99–2.45 µm and 2.0–2.4 µm).
    seed : int
        Noise seed.

    Returns
    -------
    pathlib.Path
    """
    from .sample import CONFIGURATIONS, STATIONS, _single, _uv, demo_scene

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    scene = demo_scene()
    index = {s: k + 1 for k, s in enumerate(STATIONS)}
    tels = CONFIGURATIONS["compact"]
    pos = {t: np.array(STATIONS[t]) for t in tels}
    base, tri = [], []
    for e, ha in enumerate(np.linspace(-3.0, 3.0, n_exposures)):
        mjd = 61300.0 + ha / 24.0
        for a, b in combinations(tels, 2):
            base.append((*_uv(pos[b] - pos[a], ha), mjd, index[a], index[b]))
        for a, b, c in combinations(tels, 3):
            tri.append((*_uv(pos[b] - pos[a], ha), *_uv(pos[c] - pos[b], ha), mjd, index[a], index[b], index[c]))
    base, tri = np.array(base), np.array(tri)
    parts = []
    for insname, wl, resolution in (
            ("SIMK-FT", np.linspace(2.0, 2.4, n_ft_channels), 20.0),
            ("SIMK-SC", np.linspace(2.45, 1.99, n_channels), 500.0)):
        wl = _single(wl)
        bw = _single(wl / resolution)
        u, v = base[:, 0:1], base[:, 1:2]
        sed = scene.sed(wl, bandwidth=bw)
        vis = scene.visibility(u, v, wl[None, :], bandwidth=bw[None, :])
        v2 = np.abs(vis) ** 2
        tri_uv = (tri[:, 0:1], tri[:, 1:2], tri[:, 2:3], tri[:, 3:4])
        cp = scene.closure_phase(*tri_uv, wl[None, :], bandwidth=bw[None, :])
        t3 = np.abs(scene.triple_product(*tri_uv, wl[None, :], bandwidth=bw[None, :]))
        coherent = sed[None, :] * vis
        dphi = np.degrees(np.angle(coherent * np.conj(coherent.sum(axis=1, keepdims=True))))
        for pol in ("P1", "P2"):
            def noisy(x, err):
                return x + rng.normal(0.0, 1.0, np.shape(x)) * err

            v2_err = 0.03 * v2 + 0.004
            t3_err = 0.05 * t3 + 0.005
            cp_err = np.minimum(np.hypot(1.0, np.degrees(0.005 / np.maximum(t3, 1e-6))), 90.0)
            amp_err = 0.03 * np.abs(vis) + 0.01
            dphi_err = np.minimum(np.hypot(0.5, np.degrees(0.01 / np.maximum(np.abs(vis), 1e-6))), 90.0)
            rows = dict(mjd=base[:, 2], int_time=30.0, sta_index1=base[:, 3].astype(int),
                        sta_index2=base[:, 4].astype(int))
            flux = np.broadcast_to(sed, (len(tels), wl.size))
            parts.append(ObservationSet.from_arrays(
                vis2=dict(u=base[:, 0], v=base[:, 1], wavelength=wl, bandwidth=bw, vis2=noisy(v2, v2_err),
                          vis2_err=v2_err, **rows),
                t3=dict(u1=tri[:, 0], v1=tri[:, 1], u2=tri[:, 2], v2=tri[:, 3], wavelength=wl, bandwidth=bw,
                        t3phi=(noisy(cp, cp_err) + 180.0) % 360.0 - 180.0, t3phi_err=cp_err,
                        t3amp=noisy(t3, t3_err), t3amp_err=t3_err, mjd=tri[:, 4], int_time=30.0,
                        sta_index1=tri[:, 5].astype(int), sta_index2=tri[:, 6].astype(int),
                        sta_index3=tri[:, 7].astype(int)),
                vis=dict(u=base[:, 0], v=base[:, 1], wavelength=wl, bandwidth=bw, **rows,
                         visamp=noisy(np.abs(vis), amp_err), visamp_err=amp_err,
                         visphi=(noisy(dphi, dphi_err) + 180.0) % 360.0 - 180.0, visphi_err=dphi_err,
                         amptyp="absolute", phityp="differential"),
                flux=dict(wavelength=wl, bandwidth=bw, mjd=np.full(len(tels), base[0, 2]), int_time=30.0,
                          flux=noisy(flux, 0.05 * flux), flux_err=0.05 * flux,
                          sta_index1=np.array([index[t] for t in tels])),
                insname=f"{insname}-{pol}", arrname="QUARTET", target="Aurelis",
                stations=dict(STATIONS), diameter=1.8, frame="GEOCENTRIC",
                target_info=dict(raep0=211.7364, decep0=-31.5)))
    path = folder / name
    write_oifits(path, ObservationSet.concat(parts), overwrite=True, date="2026-01-01T00:00:00")
    return path
