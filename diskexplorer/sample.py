"""The invented demo scenario: the young star "Aurelis" and its two-ring disk.

Everything here is invented for demonstrations and tutorials: the star, its disk,
the four-telescope "Quartet" array and its instruments. The observations are made by
our own forward model with Gaussian noise, deterministically (fixed seed), so the
true parameters are known (see ``sample_data/README.md``).

The files ship inside the package (``diskexplorer/sample_data/``, found with
:func:`sample_data_dir`); :func:`load_sample_data` reads them, :func:`copy_sample_data` copies
them into a folder of the user's, and :func:`write_sample_data` regenerates them.
"""
from __future__ import annotations

import math
import shutil
from importlib import resources
from pathlib import Path

import numpy as np

from .data.observations import ObservationSet
from .data.oifits_write import write_oifits
from .data.readers import read_data_file
from .dust.mixture import DustMix
from .observables.scene import Scene
from .physics.ring import Ring
from .physics.star import Star

__all__ = ["TARGET", "demo_scene", "write_sample_data", "copy_sample_data", "load_sample_data",
           "sample_data_dir", "SAMPLE_FILES"]

TARGET = "Aurelis"
SEED = 20261202
# Invented site and pointing for the (u, v) tracks.
LATITUDE_DEG = -27.0
DECLINATION_DEG = -31.5
# Invented station pads of the Quartet array, local (East, North, Up) in m.
STATIONS = {
    "Q01": (0.0, 0.0, 0.0), "Q02": (9.0, 5.0, 0.0), "Q03": (-4.0, 14.0, 0.0), "Q04": (15.0, 22.0, 0.0),
    "Q05": (-30.0, 38.0, 0.0), "Q06": (48.0, -12.0, 0.0), "Q07": (-50.0, -40.0, 0.0), "Q08": (50.0, 40.0, 0.0),
}
CONFIGURATIONS = {"compact": ("Q01", "Q02", "Q03", "Q04"), "middle": ("Q01", "Q04", "Q05", "Q06"),
                  "extended": ("Q05", "Q06", "Q07", "Q08")}
HOUR_ANGLES_H = (-2.5, -1.0, 0.5, 2.0)
# Instruments: name -> (channel wavelengths µm, relative V² error, absolute V² error, CP error deg)
INSTRUMENTS = {
    "QT-HK": (np.concatenate([np.linspace(1.52, 1.78, 5), np.linspace(2.02, 2.38, 5)]), 0.03, 0.004, 1.0),
    "QT-LM": (np.concatenate([np.linspace(3.0, 4.0, 32), np.linspace(4.5, 5.0, 28)]), 0.04, 0.006, 1.5),
    "QT-N": (np.linspace(8.0, 13.0, 40), 0.05, 0.01, 3.0),
}
#: Spectral resolution λ/Δλ of each instrument's channels: EFF_BAND = λ/R (top-hat
#: channels, as the comparison models them).
RESOLUTION = {"QT-HK": 35.0, "QT-LM": 30.0, "QT-N": 30.0}
#: Instruments that also deliver OI_VIS (AMPTYP "correlated flux", PHITYP "differential"
#: against every channel of the row): name -> (relative and absolute (Jy) correlated-flux
#: error, differential-phase error floor in degrees; the error grows as the absolute
#: correlated-flux error over the amplitude, see :func:`simulate_observations`).
VIS_ERRORS = {"QT-LM": (0.03, 0.02, 0.7), "QT-N": (0.05, 0.05, 2.0)}
PHOTOMETRY_BANDS = ("B", "V", "R", "I", "J", "H", "Ks", "W1", "W2", "W3", "W4")
SAMPLE_FILES = {
    "oifits": ("aurelis_QT-HK.fits", "aurelis_QT-LM.fits", "aurelis_QT-N.fits"),
    "photometry": "aurelis_photometry.csv",
    "spectrum": "aurelis_nband_spectrum.csv",
    "start": "aurelis_start.json",
}
#: Free parameters of the sample starting point (the recovery tests of sample_data/README.md).
START_FREE = ("rings.0.r_in", "rings.0.t_in", "geometry.inclination", "geometry.position_angle",
              "rings.1.t_in")


def demo_scene() -> Scene:
    """The true scene of the demo data: star, inner rim, gap, modulated outer ring."""
    star = Star(t_eff=7900.0, luminosity=21.0, mass=2.2)
    inner = Ring(r_in=0.34, r_out=0.95, t_in=1480.0, q=0.55, sigma_in=2.0e-3, p=1.0,
                 dust=DustMix({"olivine_glass": 0.55, "pyroxene_glass": 0.2, "forsterite": 0.15,
                               "iron": 0.1}, grain_size=1.5, shape="dhs"), name="inner")
    outer = Ring(r_in=3.6, r_out=8.5, t_in=310.0, q=0.45, sigma_in=6.0e-3, p=0.5,
                 dust=DustMix({"olivine_glass": 0.5, "forsterite": 0.2, "amorphous_carbon": 0.3},
                              grain_size=1.5, shape="dhs"),
                 c1=0.28, s1=0.12, name="outer")
    return Scene(distance=162.0, star=star, rings=(inner, outer), inclination=41.0,
                 position_angle=123.0, extended_fraction=0.04)


def _uv(enu, hour_angle_h):
    """(u, v) in m of a local (E, N, U) baseline at an hour angle (standard rotation)."""
    lat, dec = math.radians(LATITUDE_DEG), math.radians(DECLINATION_DEG)
    h = math.radians(15.0 * hour_angle_h)
    e, n, up = enu
    x = -n * math.sin(lat) + up * math.cos(lat)
    y = e
    z = n * math.cos(lat) + up * math.sin(lat)
    u = math.sin(h) * x + math.cos(h) * y
    v = -math.sin(dec) * math.cos(h) * x + math.sin(dec) * math.sin(h) * y + math.cos(dec) * z
    return u, v


def _sampling():
    """Rows of baselines and triangles of every configuration and hour angle."""
    index = {name: k + 1 for k, name in enumerate(STATIONS)}
    base_rows, tri_rows = [], []
    mjd0 = 61200.0
    for c, (cname, tels) in enumerate(CONFIGURATIONS.items()):
        for k, ha in enumerate(HOUR_ANGLES_H):
            mjd = mjd0 + 3.0 * c + ha / 24.0
            pos = {t: np.array(STATIONS[t]) for t in tels}
            for i in range(4):
                for j in range(i + 1, 4):
                    a, b = tels[i], tels[j]
                    u, v = _uv(pos[b] - pos[a], ha)
                    base_rows.append((u, v, mjd, index[a], index[b]))
            for a, b, cc in ((0, 1, 2), (0, 1, 3), (0, 2, 3), (1, 2, 3)):
                ta, tb, tc = tels[a], tels[b], tels[cc]
                u1, v1 = _uv(pos[tb] - pos[ta], ha)
                u2, v2 = _uv(pos[tc] - pos[tb], ha)
                tri_rows.append((u1, v1, u2, v2, mjd, index[ta], index[tb], index[tc]))
    return np.array(base_rows), np.array(tri_rows)


def _single(x_um):
    """Values in µm as the file stores them (EFF_WAVE and EFF_BAND are single precision, m)."""
    return (np.asarray(x_um, float) * 1e-6).astype(np.float32).astype(float) * 1e6


def simulate_observations(scene, rng=None):
    """Noisy data of ``scene`` for each instrument: dict insname -> ObservationSet.

    V², closure phases and triple amplitudes for every instrument; correlated fluxes and
    differential phases for those in :data:`VIS_ERRORS`. Every observable is the channel
    average over EFF_BAND = λ/R (:mod:`diskexplorer.observables.bandpass`).
    """
    rng = np.random.default_rng(SEED) if rng is None else rng
    base, tri = _sampling()
    out = {}
    for insname, (wl, rel, absolute, cp_err) in INSTRUMENTS.items():
        wl = _single(wl)
        bw = _single(wl / RESOLUTION[insname])
        u = base[:, 0][:, None]
        v = base[:, 1][:, None]
        v2 = scene.vis2(u, v, wl[None, :], bandwidth=bw[None, :])
        v2_err = rel * v2 + absolute
        v2_obs = v2 + rng.normal(0.0, 1.0, v2.shape) * v2_err
        tri_uv = (tri[:, 0][:, None], tri[:, 1][:, None], tri[:, 2][:, None], tri[:, 3][:, None])
        cp = scene.closure_phase(*tri_uv, wl[None, :], bandwidth=bw[None, :])
        t3 = np.abs(scene.triple_product(*tri_uv, wl[None, :], bandwidth=bw[None, :]))
        t3_err = 0.05 * t3 + 0.005
        # Closure-phase noise grows as the triple amplitude falls (σ_φ ≈ σ_|T3| / |T3| rad),
        # on top of the instrument's floor: near a visibility null the phase is poorly known.
        cp_e = np.hypot(cp_err, np.degrees(0.005 / np.maximum(t3, 1e-6)))
        cp_e = np.minimum(cp_e, 90.0)
        cp_obs = (cp + rng.normal(0.0, 1.0, cp.shape) * cp_e + 180.0) % 360.0 - 180.0
        t3_obs = t3 + rng.normal(0.0, 1.0, t3.shape) * t3_err
        rows = dict(mjd=base[:, 2], int_time=60.0, sta_index1=base[:, 3].astype(int),
                    sta_index2=base[:, 4].astype(int))
        vis = None
        if insname in VIS_ERRORS:
            cf_rel, cf_abs, dphi_err = VIS_ERRORS[insname]
            coherent = scene.sed(wl, bandwidth=bw)[None, :] * scene.visibility(u, v, wl[None, :],
                                                                                 bandwidth=bw[None, :])
            # The reference of every channel is the coherent sum of all channels of its row
            # (VISREFMAP all true), as diskexplorer.fitting.comparison.differential_phase models it.
            dphi = np.degrees(np.angle(coherent * np.conj(coherent.sum(axis=1, keepdims=True))))
            cf = np.abs(coherent)
            cf_err = cf_rel * cf + cf_abs
            # As for closure phases: the phase of a weak coherent flux is poorly known
            # (σ_φ ≈ σ_F / |F| rad for the additive noise), on top of the instrument's floor,
            # so phases near a null of the correlated flux carry large errors.
            dphi_e = np.minimum(np.hypot(dphi_err, np.degrees(cf_abs / np.maximum(cf, 1e-9))), 90.0)
            vis = dict(u=base[:, 0], v=base[:, 1], wavelength=wl, bandwidth=bw, **rows,
                       visamp=cf + rng.normal(0.0, 1.0, cf.shape) * cf_err, visamp_err=cf_err,
                       visphi=(dphi + rng.normal(0.0, 1.0, dphi.shape) * dphi_e + 180.0) % 360.0 - 180.0,
                       visphi_err=dphi_e,
                       amptyp="correlated flux", phityp="differential")
        obs = ObservationSet.from_arrays(
            vis2=dict(u=base[:, 0], v=base[:, 1], wavelength=wl, bandwidth=bw, vis2=v2_obs, vis2_err=v2_err,
                      **rows),
            t3=dict(u1=tri[:, 0], v1=tri[:, 1], u2=tri[:, 2], v2=tri[:, 3], wavelength=wl, bandwidth=bw,
                    t3phi=cp_obs, t3phi_err=cp_e, t3amp=t3_obs, t3amp_err=t3_err, mjd=tri[:, 4],
                    int_time=60.0, sta_index1=tri[:, 5].astype(int), sta_index2=tri[:, 6].astype(int),
                    sta_index3=tri[:, 7].astype(int)),
            vis=vis,
            insname=insname, arrname="QUARTET", target=TARGET,
            stations={k: v for k, v in STATIONS.items()}, diameter=1.8, frame="GEOCENTRIC",
            target_info=dict(raep0=211.7364, decep0=DECLINATION_DEG))
        out[insname] = obs
    return out


def write_sample_data(folder, overwrite=False, progress=print):
    """Regenerate the demo data set into ``folder`` deterministically.

    Writes one OIFITS v2 file per instrument, a photometry CSV (magnitudes by band name
    in the optical and near-infrared, Jy in the mid-infrared) and an N-band spectrum CSV.
    Refuses to overwrite existing files unless ``overwrite``.

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    from .data.bands import photometric_band  # zero points and effective wavelengths by name

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    targets = [folder / n for n in SAMPLE_FILES["oifits"]] + [folder / SAMPLE_FILES[k]
                                                              for k in ("photometry", "spectrum", "start")]
    existing = [p for p in targets if p.exists()]
    if existing and not overwrite:
        raise FileExistsError(f"{existing[0]} exists; refusing to overwrite the files in {folder} "
                              f"({len(existing)} of them exist)")
    rng = np.random.default_rng(SEED)
    scene = demo_scene()
    written = []
    for (insname, obs), name in zip(simulate_observations(scene, rng).items(), SAMPLE_FILES["oifits"]):
        path = folder / name
        write_oifits(path, obs, overwrite=True, origin="diskexplorer sample-data", observer="simulated",
                     insmode=insname, object_name=TARGET, date="2026-12-02T00:00:00")
        written.append(path)
        extra = (f", {obs.n_points('vis')} correlated fluxes and differential phases"
                 if obs.n_points("vis") else "")
        progress(f"wrote {path} ({obs.n_points('vis2')} V², {obs.n_points('t3')} closure phases{extra})")
    # photometry: 3 % errors (mag bands as magnitudes with 0.03 mag)
    lines = ["# Invented photometry of the demo star Aurelis (simulated by diskexplorer).",
             "band,wavelength,value,error,unit"]
    for band in PHOTOMETRY_BANDS:
        info = photometric_band(band)
        flux = float(scene.sed(info.wavelength))
        noisy = flux * (1.0 + 0.03 * rng.normal())
        if band not in ("W3", "W4"):
            mag = -2.5 * math.log10(noisy / info.zero_point)
            lines.append(f"{band},,{mag:.4f},0.0300,mag")
        else:
            lines.append(f"{band},,{noisy:.6g},{0.05 * noisy:.3g},Jy")
    for wl in (8.0, 12.0, 18.0, 24.0):  # wavelengths without band names, in mJy for variety
        flux = float(scene.sed(wl)) * 1e3
        noisy = flux * (1.0 + 0.05 * rng.normal())
        lines.append(f",{wl:g},{noisy:.6g},{0.07 * noisy:.3g},mJy")
    path = folder / SAMPLE_FILES["photometry"]
    path.write_text("\n".join(lines) + "\n")
    written.append(path)
    progress(f"wrote {path}")
    wl = np.round(np.linspace(7.6, 13.4, 146), 4)
    flux = scene.sed(wl)
    err = 0.02 * flux
    noisy = flux + rng.normal(0.0, 1.0, flux.shape) * err
    lines = ["# Invented N-band spectrum of the demo star Aurelis (simulated by diskexplorer).",
             "wavelength [um],flux [Jy],error [Jy]"]
    lines += [f"{a:.4f},{b:.6g},{c:.3g}" for a, b, c in zip(wl, noisy, err)]
    path = folder / SAMPLE_FILES["spectrum"]
    path.write_text("\n".join(lines) + "\n")
    written.append(path)
    progress(f"wrote {path}")
    written.append(write_sample_start(folder, scene))
    progress(f"wrote {written[-1]}")
    return written


def write_sample_start(folder, scene=None):
    """Write the sample starting point: the true scene, five free parameters, the sample data.

    Data paths in the document are relative to ``folder`` (where the document lives).
    """
    from .fitting.comparison import Comparison
    from .fitting.data_description import DataDescription
    from .fitting.start_document import export_start, write_start

    folder = Path(folder)
    scene = demo_scene() if scene is None else scene
    data = DataDescription.from_dict({
        "oifits": [{"path": n} for n in SAMPLE_FILES["oifits"]],
        "photometry": {"path": SAMPLE_FILES["photometry"]},
        "spectrum": {"path": SAMPLE_FILES["spectrum"]},
    })
    loaded = load_sample_data(folder)
    judged = Comparison(loaded["observations"], loaded["photometry"], loaded["spectrum"]).compare(scene)
    doc = export_start(scene, free=list(START_FREE), data=data, comparison_result=judged,
                       title="Aurelis (invented demo star): true scene of the sample data")
    doc["created"] = "2026-12-02T00:00:00Z"  # fixed, so regeneration is byte-identical
    path = folder / SAMPLE_FILES["start"]
    write_start(path, doc, overwrite=True)
    return path


def sample_data_dir() -> Path:
    """The installed sample data folder (package data of :mod:`diskexplorer`).

    Found with :mod:`importlib.resources`, so it works from a clone, an editable install
    and a wheel alike. Treat it as read-only: copy it with :func:`copy_sample_data` to
    work on the files.
    """
    # A regular package installed as files (wheels are unpacked), so the resource is a
    # real folder; as_file would only matter for zipped imports, which we do not support.
    return Path(str(resources.files("diskexplorer").joinpath("sample_data")))


def _sample_names():
    return list(SAMPLE_FILES["oifits"]) + [SAMPLE_FILES[k] for k in ("photometry", "spectrum", "start")] \
        + ["README.md"]


def copy_sample_data(folder, overwrite=False):
    """Copy the shipped sample files into ``folder`` (created if missing).

    The starting-point document names its data files relative to itself, so the copy
    works where it lands (``diskexplorer evaluate FOLDER/aurelis_start.json``).

    Parameters
    ----------
    folder : str or os.PathLike
        Destination folder.
    overwrite : bool
        Replace files of the same names; otherwise nothing is copied if any exists.

    Returns
    -------
    list of pathlib.Path
        The files written.

    Raises
    ------
    FileExistsError
        If a sample file exists in ``folder`` and ``overwrite`` is false.
    NotADirectoryError
        If ``folder`` exists and is not a folder.
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise NotADirectoryError(f"{folder} exists and is not a folder")
    source = sample_data_dir()
    names = _sample_names()
    existing = [folder / n for n in names if (folder / n).exists()]
    if existing and not overwrite:
        raise FileExistsError(f"{existing[0]} exists; refusing to overwrite the files in {folder} "
                              f"({len(existing)} of them exist)")
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for name in names:
        shutil.copyfile(source / name, folder / name)
        written.append(folder / name)
    return written


def load_sample_data(folder=None):
    """Read the demo data set: dict with ``observations``, ``photometry``, ``spectrum`` and ``paths``."""
    folder = Path(folder) if folder is not None else sample_data_dir()
    paths = [folder / n for n in SAMPLE_FILES["oifits"]]
    return {
        "observations": read_data_file([str(p) for p in paths], "oifits"),
        "photometry": read_data_file(folder / SAMPLE_FILES["photometry"], "photometry"),
        "spectrum": read_data_file(folder / SAMPLE_FILES["spectrum"], "spectrum"),
        "paths": {"oifits": [str(p) for p in paths],
                  "photometry": str(folder / SAMPLE_FILES["photometry"]),
                  "spectrum": str(folder / SAMPLE_FILES["spectrum"])},
    }
