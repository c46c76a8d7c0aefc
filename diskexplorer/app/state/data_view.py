"""The data as the figures see them: filtered, bound to a comparison, with derived axes."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ...errors import DiskExplorerError
from ...fitting.comparison import Comparison
from ...fitting.not_judged import select_target
from ...observables.distinct import distinct_rows

__all__ = ["DataView", "data_view", "filter_observations"]

#: Correlated-flux spectra drawn at most for this many baselines (more is unreadable).
MAX_BASELINES = 8


def filter_observations(observations, bands=(), instruments=(), baseline_range=(0.0, math.inf)):
    """Apply the app's filters; empty selections keep everything.

    Parameters
    ----------
    observations : ObservationSet or None
    bands : sequence of str
        Interferometric band names (J, H, K, L, M, N).
    instruments : sequence of str
        INSNAME values.
    baseline_range : (float, float)
        Projected baseline range in m.
    """
    obs = observations
    if obs is None:
        return None
    if bands:
        obs = obs.select_band(*bands)
    if instruments:
        obs = obs.select_instrument(*instruments)
    lo, hi = baseline_range
    if lo > 0 or math.isfinite(hi):
        obs = obs.select_baseline(lo, hi)
    return obs


def _has(ds):
    return ds is not None and ds.sizes.get("point", 0) > 0


class DataView:
    """Filtered data, its :class:`Comparison`, and per-point axes for the figures.

    Attributes
    ----------
    observations : ObservationSet or None
        After the filters.
    comparison : Comparison
    vis2 : dict or None
        ``freq`` (spatial frequency, Mλ), ``wavelength`` (µm), ``value``, ``error``.
    t3 : dict or None
        ``freq`` (largest spatial frequency of the triangle, Mλ), ``wavelength``, ``value``,
        ``error`` (degrees).
    visamp, corrflux, diffphi : dict or None
        OI_VIS points of AMPTYP "absolute" (|V|), "correlated flux" (Jy) and PHITYP
        "differential" (degrees): as ``vis2`` plus ``index``, their positions among the
        OI_VIS points (the alignment of the comparison's arrays). ``diffphi`` has
        ``freq`` = wavelength (µm): differential phases are read along the spectrum.
    baselines : list of dict
        Up to :data:`MAX_BASELINES` baselines for correlated-flux spectra: ``index`` (V²
        points of that baseline, sorted by wavelength), ``length`` (m), ``label``.
    curve_wavelengths : ndarray
        One representative wavelength (µm) per instrument for the continuous V² curve.
    freq_max : float
        Largest spatial frequency of the data, Mλ.
    """

    def __init__(self, observations=None, photometry=None, spectrum=None, *, bands=(), instruments=(),
                 baseline_range=(0.0, math.inf), bandpass=True, target=""):
        # One target at a time: a model of one disk is not judged against a calibrator.
        try:
            observations, self.target, self.target_reason, others = _select_target(observations, target or None)
        except DiskExplorerError:   # the chosen target is gone with its file: choose anew
            observations, self.target, self.target_reason, others = _select_target(observations)
        obs = filter_observations(observations, bands, instruments, baseline_range)
        self.observations = obs
        self.photometry = photometry
        self.spectrum = spectrum
        self.comparison = Comparison(obs, photometry, spectrum, bandpass=bandpass)
        # The other targets' points are named wherever the comparison's left-out points are.
        self.comparison.left_out = tuple(others) + self.comparison.left_out
        self.vis2 = self.t3 = None
        self.visamp = self.corrflux = self.diffphi = None
        self.baselines = []
        self.curve_wavelengths = np.array([2.2, 10.0])
        self.freq_max = 60.0
        if obs is not None and _has(obs.vis2):
            ds = obs.vis2
            wl = ds["wavelength"].values
            b = np.hypot(ds["u"].values, ds["v"].values)
            self.vis2 = {"freq": b / wl, "wavelength": wl, "value": ds["vis2"].values,
                         "error": ds["vis2_err"].values}
            self.baselines = _pick_baselines(ds, b)
            ins = ds["insname"].values
            self.curve_wavelengths = np.array(sorted(float(np.median(wl[ins == name]))
                                                     for name in np.unique(ins)))
            self.freq_max = float(np.max(b / wl))
        if obs is not None and _has(obs.t3):
            ds = obs.t3
            wl = ds["wavelength"].values
            u1, v1, u2, v2 = (ds[k].values for k in ("u1", "v1", "u2", "v2"))
            longest = np.max([np.hypot(u1, v1), np.hypot(u2, v2), np.hypot(u1 + u2, v1 + v2)], axis=0)
            self.t3 = {"freq": longest / wl, "wavelength": wl, "value": ds["t3phi"].values,
                       "error": ds["t3phi_err"].values}
            self.freq_max = max(self.freq_max if self.vis2 is not None else 0.0, float(np.max(longest / wl)))

        if obs is not None and _has(obs.vis):
            ds = obs.vis
            wl = ds["wavelength"].values
            freq = np.hypot(ds["u"].values, ds["v"].values) / wl
            for name, typ, value, column in (("visamp", "amptyp", "absolute", "visamp"),
                                             ("corrflux", "amptyp", "correlated flux", "visamp"),
                                             ("diffphi", "phityp", "differential", "visphi")):
                index = np.flatnonzero(np.asarray(ds[typ].values).astype(str) == value)
                if index.size:
                    setattr(self, name, {"freq": (wl if name == "diffphi" else freq)[index], "wavelength": wl[index],
                                         "value": ds[column].values[index], "error": ds[f"{column}_err"].values[index],
                                         "index": index})

    @property
    def wavelength_range(self):
        """(min, max) wavelength of the interferometric data, µm."""
        parts = [d["wavelength"] for d in (self.vis2, self.t3, self.visamp, self.corrflux, self.diffphi)
                 if d is not None]
        if not parts:
            return (1.5, 13.0)
        w = np.concatenate(parts)
        return float(w.min()), float(w.max())


#: The last view built by :func:`data_view`: (key, view).
_LAST_VIEW = [None, None]


def data_view(observations=None, photometry=None, spectrum=None, *, bands=(), instruments=(),
              baseline_range=(0.0, math.inf), bandpass=True, target=""):
    """A :class:`DataView` of these data and settings; the last one again if nothing changed.

    A load is checked by building the view it will show before it is accepted
    (:class:`~diskexplorer.app.state.explorer_state.ExplorerState`); the explorer's recompute
    that follows asks for the same view, and on a wide night file building it twice would
    double the wait. Data are compared by identity (they are never changed in place).
    """
    key = (id(observations), id(photometry), id(spectrum), tuple(bands), tuple(instruments),
           tuple(baseline_range), tuple(sorted(bandpass.items())) if isinstance(bandpass, dict) else bandpass,
           target)
    last_key, view = _LAST_VIEW
    if view is not None and last_key == key and all(a is b for a, b in zip(view.sources, (observations, photometry, spectrum))):
        return view
    view = DataView(observations, photometry, spectrum, bands=bands, instruments=instruments,
                    baseline_range=baseline_range, bandpass=bandpass, target=target)
    view.sources = (observations, photometry, spectrum)
    _LAST_VIEW[:] = [key, view]
    return view


#: The last target selection: (observations, wanted, result). Filter clicks rebuild the view
#: on the same observations, and counting a wide night file's targets costs ~30 ms.
_LAST_SELECTION = [None, None, None]


def _select_target(observations, wanted=None):
    last_obs, last_wanted, result = _LAST_SELECTION
    if observations is not None and last_obs is observations and last_wanted == wanted:
        return result
    result = select_target(observations, wanted)
    _LAST_SELECTION[:] = [observations, wanted, result]
    return result


def _pick_baselines(ds, length):
    """Group V² points by (instrument, time, station pair); keep a spread of lengths."""
    instrument = pd.factorize(np.asarray(ds["insname"].values), sort=True)[0]
    _, inverse = distinct_rows(np.stack([instrument, np.round(ds["mjd"].values, 5), ds["sta_index1"].values,
                                         ds["sta_index2"].values], axis=1))
    # One sort by (group, wavelength) splits every group at once (a scan per group costs
    # groups × points on a wide night file).
    order = np.lexsort((ds["wavelength"].values, inverse))
    cuts = np.flatnonzero(np.diff(inverse[order])) + 1
    groups = []
    for idx in np.split(order, cuts) if order.size else ():
        if idx.size < 2:
            continue
        groups.append({"index": idx, "length": float(np.median(length[idx])),
                       "insname": str(ds["insname"].values[idx[0]])})
    if len(groups) > MAX_BASELINES:
        order = np.argsort([g["length"] for g in groups])
        pick = order[np.unique(np.linspace(0, len(order) - 1, MAX_BASELINES).round().astype(int))]
        groups = [groups[k] for k in pick]
    for g in groups:
        g["label"] = f"{g['insname']} {g['length']:.0f} m"
    return sorted(groups, key=lambda g: g["length"])
