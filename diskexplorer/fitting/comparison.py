"""Model against data: predictions at the data's sampling, residuals and χ² per data set."""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np
from scipy import sparse

from ..errors import DataError, ParameterError
from ..observables.distinct import distinct_rows
from ..observables.observer import Observer
from .data_kinds import DATA_KINDS, KIND_LABELS
from .not_judged import judged_flux, not_judged
from .references import reference_sets

__all__ = ["Comparison", "ComparisonResult", "DATA_KINDS", "KIND_LABELS", "phase_residual",
           "channel_widths", "differential_phase"]


def phase_residual(data_deg, model_deg, error_deg):
    """Normalised closure-phase residual by chord length on the unit circle.

    (180/π) · 2 sin(Δ/2) / σ with Δ = data − model: equal to Δ/σ for small Δ, but
    continuous through ±180° (a wrapped difference jumps there, which traps least-squares
    refinements when a model visibility crosses zero and its phase flips by 180°).
    Common practice for fitting closure phases.
    """
    delta = np.radians(np.asarray(data_deg, float) - np.asarray(model_deg, float))
    return np.degrees(2.0 * np.sin(0.5 * delta)) / np.asarray(error_deg, float)


def differential_phase(vis, vis_ref, flux_ref, ref_index, ref_of_point=None):
    """Model differential phase: each channel's phase relative to its reference channels, degrees.

    OIFITS v2 (Duvert, Young & Hummel 2017, A&A 597, A8, the OI_VIS table) defines a
    differential VISPHI as the phase relative to a reference built from the channels that
    VISREFMAP names; the standard does not prescribe how the reference is formed. Here it
    is the phase of the summed coherent fluxes F_ν V of the reference channels (what an
    instrument measures when it adds those channels up), so

        φ_diff = arg( V · conj( Σ_j F_j V_j ) ).

    Pipelines often also remove a phase slope in 1/λ (the residual atmospheric piston),
    which removes any part of the object's phase that is linear in wavenumber; this
    definition keeps it.

    Parameters
    ----------
    vis : ndarray of complex, shape (n,)
        Model visibility of each point.
    vis_ref, flux_ref : ndarray, shape (s,)
        Model visibility and total flux (Jy) of the samples the references are made of.
    ref_index : ndarray of int, shape (n, m), or sparse matrix (n, s)
        For each point its reference samples (indices into ``vis_ref``), −1 as padding; or
        the equivalent 0/1 matrix (what :class:`Comparison` keeps: one sparse product).
    ref_of_point : ndarray of int, shape (n,), optional
        With a matrix of distinct references (one row each): the row of each point.

    Returns
    -------
    ndarray, shape (n,)
        Degrees in (−180, 180]; NaN where a point has no reference.
    """
    coherent = np.asarray(flux_ref) * np.asarray(vis_ref)
    if sparse.issparse(ref_index):
        ref = ref_index @ coherent
        named = np.diff(ref_index.indptr) > 0
        if ref_of_point is not None:
            ref, named = ref[ref_of_point], named[ref_of_point]
    else:
        ref_index = np.asarray(ref_index)
        padded = np.append(coherent, 0.0)   # index −1 → 0
        ref = padded[ref_index].sum(axis=1) if ref_index.size else np.zeros(len(vis), complex)
        named = (ref_index >= 0).any(axis=1)
    phase = np.degrees(np.angle(np.asarray(vis) * np.conj(ref)))
    return np.where(named, phase, np.nan)


@dataclass
class ComparisonResult:
    """What a comparison found for one scene.

    Attributes
    ----------
    prediction : Prediction
        The model at the interferometric points and SED wavelengths.
    model : dict of ndarray
        Model values per data kind, aligned with the data.
    residuals : dict of ndarray
        (data − model)/error per kind (closure phases by chord length, see :func:`phase_residual`).
    chi2 : dict of float
        χ² per kind.
    npoints : dict of int
        Points that enter χ² per kind.
    weights : dict of float
        Weight per kind used in :attr:`total`.
    sed : dict of ndarray
        SED components at the photometry wavelengths (Jy).
    spectrum : dict of ndarray
        SED components at the spectrum wavelengths (Jy).
    left_out : tuple of LeftOut
        Points of the data that no kind judges, with the reason
        (:func:`~diskexplorer.fitting.not_judged.not_judged`); :meth:`summary` lists them.
    """

    prediction: object
    model: dict
    residuals: dict
    chi2: dict
    npoints: dict
    weights: dict = field(default_factory=dict)
    sed: dict = field(default_factory=dict)
    spectrum: dict = field(default_factory=dict)
    left_out: tuple = ()

    @property
    def total(self) -> float:
        """Weighted χ² summed over kinds."""
        return float(sum(self.weights.get(k, 1.0) * c for k, c in self.chi2.items()))

    @property
    def n_total(self) -> int:
        return int(sum(n for k, n in self.npoints.items() if self.weights.get(k, 1.0) > 0))

    @property
    def reduced(self) -> dict:
        """χ²/N per kind (NaN for empty kinds)."""
        return {k: (self.chi2[k] / n if n else float("nan")) for k, n in self.npoints.items()}

    def summary(self) -> str:
        """A text table: N, χ², χ²/N and weight per kind, then the weighted total.

        A kind with weight 0 is marked and left out of the total; a note below the table
        says so.
        """
        lines = [f"{'data':<11}{'N':>8}{'chi2':>14}{'chi2/N':>10}{'weight':>8}"]
        left_out = []
        for k in self.chi2:
            n = self.npoints[k]
            red = self.chi2[k] / n if n else float("nan")
            w = self.weights.get(k, 1.0)
            mark = "" if w > 0 else " *"
            if w <= 0:
                left_out.append(k)
            lines.append(f"{k:<11}{n:>8d}{self.chi2[k]:>14.2f}{red:>10.3f}{w:>8.3g}{mark}")
        n = self.n_total
        lines.append(f"{'total':<11}{n:>8d}{self.total:>14.2f}{(self.total / n if n else float('nan')):>10.3f}")
        if left_out:
            lines.append(f"* weight 0: {', '.join(left_out)} left out of the total")
        lines += [f"not judged: {x}" for x in self.left_out]
        return "\n".join(lines)


def channel_widths(ds, bandpass=True, kind="data"):
    """Channel widths (µm) the model uses for the points of one data kind.

    Parameters
    ----------
    ds : xarray.Dataset
        One kind of an :class:`~diskexplorer.data.ObservationSet` (coordinates
        ``wavelength``, ``bandwidth`` = EFF_BAND in µm, ``file``).
    bandpass : bool or mapping
        ``True``: every point's EFF_BAND; ``False``: none (monochromatic); a mapping
        ``{file: bool}`` decides per file (the points' ``file`` coordinate), files it does
        not name use their EFF_BAND.
    kind : str
        Name of the kind for error messages.

    Returns
    -------
    ndarray or None
        Widths in µm per point, 0 where monochromatic (bandpass off, EFF_BAND missing,
        NaN or ≤ 0); ``None`` when no point has a width (the monochromatic model itself).

    Raises
    ------
    DataError
        An EFF_BAND of twice its EFF_WAVE or more (a channel reaching λ ≤ 0), naming the file.
    """
    if bandpass is False or "bandwidth" not in ds.coords:
        return None
    bw = np.asarray(ds["bandwidth"].values, float).copy()
    lam = np.asarray(ds["wavelength"].values, float)
    files = np.asarray(ds["file"].values).astype(str) if "file" in ds.coords else np.full(bw.shape, "")
    use = np.isfinite(bw) & (bw > 0) & _bandpass_on(ds, bandpass)
    bw = np.where(use, bw, 0.0)
    bad = bw >= 2.0 * lam
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise DataError(f"{files[k] or kind}: OI_WAVELENGTH EFF_BAND = {bw[k]:.6g} µm at EFF_WAVE = "
                        f"{lam[k]:.6g} µm ({kind}): a channel must be narrower than twice its wavelength")
    return bw if np.any(bw > 0) else None


def _bandpass_on(ds, bandpass):
    """Per point: whether its file's channels are averaged (bool array over ``point``)."""
    n = ds.sizes["point"]
    if bandpass is False:
        return np.zeros(n, bool)
    on = np.ones(n, bool)
    if isinstance(bandpass, dict) and "file" in ds.coords:
        files = np.asarray(ds["file"].values).astype(str)
        for name, value in bandpass.items():
            if not value:
                on &= files != str(name)
    return on


class Comparison:
    """Binds loaded data to the engine; :meth:`compare` judges a scene against all of it.

    Parameters
    ----------
    observations : ObservationSet, optional
        Interferometric data (V², closure phases, visibilities, OI_FLUX).
    photometry : xarray.Dataset, optional
        From :func:`~diskexplorer.data.photometry.read_photometry` (upper limits enter χ²
        only where the model exceeds them).
    spectrum : xarray.Dataset, optional
        From :func:`~diskexplorer.data.spectrum.read_spectrum`; samples without an error
        are compared with a 5 % error (common practice for shape comparisons).
    weights : dict, optional
        Weight per data kind of :data:`DATA_KINDS` in the total χ² (default 1; ``t3amp``
        defaults to 0); a key that names no kind is refused.
    accuracy : int
        Engine accuracy factor.
    bandpass : bool or dict
        Whether the model of interferometric data (V², visibilities, closure phases,
        OI_FLUX) is averaged over each channel's EFF_BAND (a top-hat channel, see
        :mod:`diskexplorer.observables.bandpass`): ``True`` (default) for all, ``False``
        for none (monochromatic at EFF_WAVE), or ``{file: bool}`` per file (the points'
        ``file`` coordinate; files not named: True). Photometry and spectra stay
        monochromatic (their readers carry no channel widths).
    """

    def __init__(self, observations=None, photometry=None, spectrum=None, weights=None, accuracy=1,
                 bandpass=True):
        self.observations = observations
        self.bandpass = dict(bandpass) if isinstance(bandpass, dict) else bool(bandpass)
        self.photometry = photometry
        self.spectrum = spectrum
        unknown = sorted(set(weights or {}) - set(DATA_KINDS))
        if unknown:
            raise ParameterError(f"Comparison: weights for unknown data kind(s) {', '.join(map(repr, unknown))}; "
                                 f"known: {', '.join(DATA_KINDS)}")
        self.weights = {"t3amp": 0.0}
        self.weights.update(weights or {})
        obs = observations
        _check_spatial_frequencies(obs)
        #: Groups of points left out of χ² and why (:mod:`~diskexplorer.fitting.not_judged`).
        self.left_out = tuple(not_judged(obs))
        flux_ds = getattr(obs, "flux", None)
        self._flux_judged = judged_flux(flux_ds) if flux_ds is not None else None
        vis2 = getattr(obs, "vis2", None)
        t3 = getattr(obs, "t3", None)
        vis = getattr(obs, "vis", None)
        self._flags = {}
        for kind in ("vis2", "vis", "t3", "flux"):
            ds = getattr(obs, kind, None)
            if ds is not None and "flag" in ds and np.any(ds["flag"].values):
                self._flags[kind] = np.asarray(ds["flag"].values, bool)
        uv, widths = [], []
        self._slices = {}
        start = 0
        for name, ds in (("vis2", vis2), ("vis", vis)):
            if ds is not None and ds.sizes.get("point", 0):
                n = ds.sizes["point"]
                uv.append((ds["u"].values, ds["v"].values, ds["wavelength"].values))
                widths.append(channel_widths(ds, self.bandpass, name))
                self._slices[name] = slice(start, start + n)
                start += n
        self._ref_index = None
        self._kinds = self._types = None
        if "vis" in self._slices:
            ref = _reference_samples(vis, self.bandpass, widths[-1])
            if ref is not None:
                ru, rv, rwl, rbw = ref.extra
                self._ref_index, self._ref_of_point = ref.matrix, ref.of_point
                uv.append((ru, rv, rwl))
                widths.append(rbw if np.any(rbw > 0) else None)
                self._slices["visref"] = slice(start, start + ru.size)
                start += ru.size
        u = np.concatenate([a[0] for a in uv]) if uv else np.zeros(0)
        v = np.concatenate([a[1] for a in uv]) if uv else np.zeros(0)
        wl = np.concatenate([a[2] for a in uv]) if uv else np.zeros(0)
        has_t3 = t3 is not None and t3.sizes.get("point", 0)
        t3_args = ((t3["u1"].values, t3["v1"].values, t3["u2"].values, t3["v2"].values, t3["wavelength"].values)
                   if has_t3 else ((), (), (), (), ()))
        t3_bw = channel_widths(t3, self.bandpass, "t3") if has_t3 else None
        sed_parts, sed_widths = [], []
        self._sed_slices = {}
        start = 0
        for name, ds in (("photometry", photometry), ("spectrum", spectrum),
                         ("flux", getattr(obs, "flux", None))):
            if ds is not None and ds["wavelength"].size:
                n = ds["wavelength"].size
                sed_parts.append(np.asarray(ds["wavelength"].values, float))
                sed_widths.append(channel_widths(ds, self.bandpass, name) if name == "flux" else None)
                self._sed_slices[name] = slice(start, start + n)
                start += n
        sed_wl = np.concatenate(sed_parts) if sed_parts else np.zeros(0)
        # None where no point has a width: those groups keep the monochromatic evaluator.
        vis_bw = _join_widths(widths, [a[2] for a in uv])
        sed_bw = _join_widths(sed_widths, sed_parts)
        # V² and OI_VIS points of one file usually share (u, v, λ, Δλ), and differential
        # references are mostly such points: the model is evaluated once per distinct sample.
        samples = np.stack([u, v, wl, np.zeros(u.size) if vis_bw is None else vis_bw], axis=1)
        self._vis_samples = None
        if u.size:
            distinct, inverse = distinct_rows(samples)
            if distinct.shape[0] < u.size:
                self._vis_samples = inverse.ravel()
                u, v, wl = distinct[:, 0], distinct[:, 1], distinct[:, 2]
                vis_bw = distinct[:, 3] if vis_bw is not None else None
        self.observer = Observer(u, v, wl, *t3_args, sed_wavelength=sed_wl, accuracy=accuracy,
                                 bandwidth=vis_bw, t3_bandwidth=t3_bw, sed_bandwidth=sed_bw)

    @property
    def banded(self):
        """Whether any interferometric or OI_FLUX point is averaged over its channel."""
        from ..observables.bandpass import ChannelEvaluator

        return any(isinstance(e, ChannelEvaluator)
                   for e in (self.observer.interferometric, self.observer.photometric))

    @property
    def kinds(self):
        """Data kinds present (a new list each time; the data are fixed, so it is found once)."""
        if self._kinds is None:
            self._kinds = self._find_kinds()
        return list(self._kinds)

    def _vis_types(self):
        """AMPTYP and PHITYP of the OI_VIS points as str arrays (converted once: 7 000 object
        strings take about a millisecond each time)."""
        if self._types is None:
            vis = self.observations.vis
            self._types = tuple(np.asarray(vis[k].values).astype(str) for k in ("amptyp", "phityp"))
        return self._types

    def _find_kinds(self):
        out = []
        obs = self.observations
        if "vis2" in self._slices:
            out.append("vis2")
        if obs is not None and obs.t3 is not None and obs.t3.sizes.get("point", 0):
            out += ["t3phi", "t3amp"]
        if "vis" in self._slices:
            amptyp = set(obs.vis["amptyp"].values.tolist())
            if "absolute" in amptyp:
                out.append("visamp")
            if "correlated flux" in amptyp:
                out.append("corrflux")
            if self._ref_index is not None:
                out.append("diffphi")
        out += [k for k in ("photometry", "spectrum") if k in self._sed_slices]
        # OI_FLUX counts only if some of it can be compared in Jy (see not_judged).
        if "flux" in self._sed_slices and self._flux_judged is not None and self._flux_judged.any():
            out.append("flux")
        return out

    def compare(self, scene) -> ComparisonResult:
        """Predictions, residuals and χ² of ``scene`` against every loaded data set."""
        pred = self.observer.observe(scene)
        if self._vis_samples is not None:
            k = self._vis_samples
            pred = dataclasses.replace(pred, vis=pred.vis[k], vis2=pred.vis2[k], flux_at_vis=pred.flux_at_vis[k])
        model, resid = {}, {}
        obs = self.observations
        kinds = self.kinds
        if "vis2" in self._slices:
            ds = obs.vis2
            m = pred.vis2[self._slices["vis2"]]
            model["vis2"] = m
            resid["vis2"] = (ds["vis2"].values - m) / ds["vis2_err"].values
        if "t3phi" in kinds:
            ds = obs.t3
            model["t3phi"] = pred.t3phi
            resid["t3phi"] = phase_residual(ds["t3phi"].values, pred.t3phi, ds["t3phi_err"].values)
            amp = np.abs(pred.t3)
            model["t3amp"] = amp
            with np.errstate(invalid="ignore", divide="ignore"):
                r = (ds["t3amp"].values - amp) / ds["t3amp_err"].values
            resid["t3amp"] = r
        if "vis" in self._slices:
            ds = obs.vis
            sl = self._slices["vis"]
            amptyp = self._vis_types()[0]
            absolute = np.abs(pred.vis[sl])
            # Every kind is aligned with all vis points; points of other types are NaN
            # (no residual), so figures and tables can index one array per kind.
            for kind, amp, m in (("visamp", "absolute", absolute),
                                 ("corrflux", "correlated flux", absolute * pred.flux_at_vis[sl])):
                if kind in kinds:
                    with np.errstate(invalid="ignore", divide="ignore"):
                        r = (ds["visamp"].values - m) / ds["visamp_err"].values
                    model[kind] = np.where(amptyp == amp, m, np.nan)
                    resid[kind] = np.where(amptyp == amp, r, np.nan)
            if self._ref_index is not None:
                rs = self._slices["visref"]
                samples = np.concatenate([pred.vis[sl], pred.vis[rs]])
                sample_flux = np.concatenate([pred.flux_at_vis[sl], pred.flux_at_vis[rs]])
                m = differential_phase(pred.vis[sl], samples, sample_flux, self._ref_index, self._ref_of_point)
                differential = self._vis_types()[1] == "differential"
                m = np.where(differential, m, np.nan)
                model["diffphi"] = m
                with np.errstate(invalid="ignore"):
                    resid["diffphi"] = phase_residual(ds["visphi"].values, m, ds["visphi_err"].values)
        sed, spec = {}, {}
        for name, sl in self._sed_slices.items():
            if name not in kinds:
                continue
            comps = {k: v[sl] for k, v in pred.sed.items()}
            ds = {"photometry": self.photometry, "spectrum": self.spectrum,
                  "flux": getattr(obs, "flux", None)}[name]
            total = comps["total"]
            model[name] = total
            flux = ds["flux"].values
            err = ds["flux_err"].values if "flux_err" in ds else np.full(flux.shape, np.nan)
            if name == "spectrum":
                err = np.where(np.isfinite(err) & (err > 0), err, 0.05 * np.abs(flux))
                spec = comps
            r = (flux - total) / err
            if name == "photometry":
                sed = comps
                upper = ds["upper_limit"].values.astype(bool)
                r = np.where(upper, np.where(total > flux, (total - flux) / err, 0.0), r)
            if name == "flux":
                r = np.where(self._flux_judged, r, np.nan)   # uncalibrated: never judged as Jy
            resid[name] = r
        # Flagged points (kept by a reader's keep_flagged) are shown but never judged.
        for kind, names in (("vis2", ("vis2",)), ("t3", ("t3phi", "t3amp")),
                            ("vis", ("visamp", "corrflux", "diffphi")), ("flux", ("flux",))):
            flag = self._flags.get(kind)
            if flag is not None:
                for k in names:
                    if k in resid:
                        resid[k] = np.where(flag, np.nan, resid[k])
        chi2, npts = {}, {}
        for k, r in resid.items():
            good = np.isfinite(r)
            chi2[k] = float(np.sum(r[good] ** 2))
            npts[k] = int(good.sum())
        weights = {k: float(self.weights.get(k, 1.0)) for k in chi2}
        return ComparisonResult(prediction=pred, model=model, residuals=resid, chi2=chi2, npoints=npts,
                                weights=weights, sed=sed, spectrum=spec, left_out=self.left_out)


#: Largest spatial frequency B/λ (rad⁻¹) the model is evaluated at: 1.5·10⁹, i.e. 1.5 km at
#: 1 µm. The engine resolves a ring's visibility on radial nodes whose number grows with
#: B/λ; at 10⁹ a sample scene already needs about 1 GB, and the longest optical baselines
#: of today (a few hundred m in the visible) stay below 10⁹.
MAX_SPATIAL_FREQUENCY = 1.5e9


def _check_spatial_frequencies(obs):
    """Refuse data the engine cannot evaluate in memory, naming the file and table."""
    for kind, table, pairs in (("vis2", "OI_VIS2", (("u", "v"),)), ("vis", "OI_VIS", (("u", "v"),)),
                               ("t3", "OI_T3", (("u1", "v1"), ("u2", "v2")))):
        ds = getattr(obs, kind, None)
        if ds is None or not ds.sizes.get("point", 0):
            continue
        wl = ds["wavelength"].values * 1e-6
        lengths = [np.hypot(ds[a].values, ds[b].values) for a, b in pairs]
        if kind == "t3":
            lengths.append(np.hypot(ds["u1"].values + ds["u2"].values, ds["v1"].values + ds["v2"].values))
        too_far = np.max(lengths, axis=0) / wl > MAX_SPATIAL_FREQUENCY
        if too_far.any():
            files = sorted({str(f) for f in np.asarray(ds["file"].values)[too_far]}) if "file" in ds.coords else []
            where = ", ".join(f for f in files if f) or "data"
            raise DataError(f"{where}: {table}: {int(too_far.sum())} point(s) at a spatial frequency B/λ above "
                            f"{MAX_SPATIAL_FREQUENCY:.1e} (1.5 km at 1 µm): beyond what the model engine can "
                            "evaluate in memory; remove those baselines to judge the file")


def _join_widths(widths, wavelengths):
    """One width array over concatenated groups (zeros for groups without), or None if none has any."""
    if all(w is None for w in widths):
        return None
    return np.concatenate([np.zeros(np.size(lam)) if w is None else w for w, lam in zip(widths, wavelengths)])


def _reference_samples(vis, bandpass, point_widths):
    """The reference samples of the differential phases of ``vis``, or None.

    The points' own channels are sampled with ``point_widths`` (µm; None: monochromatic);
    a file's bandpass choice holds for its reference channels too. See
    :func:`~diskexplorer.fitting.references.reference_sets`.
    """
    if "ref_wavelength" not in vis:
        return None
    n = vis.sizes["point"]
    own_bw = np.zeros(n) if point_widths is None else np.asarray(point_widths, float)
    return reference_sets(vis["u"].values, vis["v"].values, vis["wavelength"].values, own_bw,
                          vis["ref_wavelength"].values, vis["ref_bandwidth"].values,
                          differential=np.asarray(vis["phityp"].values).astype(str) == "differential",
                          banded=_bandpass_on(vis, bandpass))
