"""Which minerals, and how much of each: a ring's dust composition solved against data.

:func:`solve_composition` finds the non-negative mass fractions of chosen components (dust
species, or species with their own size and shape) in one or more rings — optionally
also each ring's Σ_in — that minimise the weighted χ² of chosen data kinds, everything
else held. :func:`drop_one` asks whether each component is needed (it is dropped in turn
and the others re-solved); :func:`compare_alternatives` puts named alternatives side by
side (metallic iron against amorphous carbon as the featureless absorber, crystalline
against amorphous-only silicates) with χ², reduced χ², the number of free parameters, ΔAIC
(Akaike 1974, IEEE Trans. Autom. Control 19, 716) and ΔBIC (Schwarz 1978, Ann. Stat. 6,
461).

Method
------
1. *Linear start.* In the optically thin limit a ring emits Σ_s τ_s B_s with
   τ_s = f_s κ_s Σ(r): every flux and every complex coherent flux F·V is linear in the
   component surface densities x_s = f_s Σ_in, for power-law and equilibrium temperatures
   alike (an equilibrium species' temperature depends on its own κ, not on its
   fraction). Each component is evaluated once alone at a tiny Σ_in (τ ≪ 1, through the
   comparison's own evaluators, so channel averages are included) and the rest of the
   scene once without the ring; the residuals of the linear kinds are then affine in x,
   and :func:`scipy.optimize.nnls` gives the exact non-negative least-squares solution of
   that linear problem. Linear kinds: photometry (upper limits left out), spectra,
   calibrated OI_FLUX and correlated fluxes |F V| (taken along the phase of the current
   model, exact while a component does not turn the phase); V² and |V| enter linearised as
   |V|_data F(x) − Re(F V(x) e^{−iφ₀}) over σ_|V| F₀. Closure phases and differential
   phases are not linear in x and wait for step 2.
2. *Polish.* :func:`scipy.optimize.least_squares` (trust-region reflective, bounds x ≥ 0;
   a fraction that ends below 1e-7 is set to exactly 0: the iterates stay strictly inside
   the bounds, so a component the data do not want ends a hair above its bound) on the full model: optical depth,
   channel averages, every chosen kind. With Σ_in held, the variables are weights w ≥ 0
   with f = w / Σw; χ² does not depend on the scale of w, so one extra residual
   c (Σw − 1) fixes it without moving the optimum. With Σ_in free the variables are x / Σ_in₀.
   The better of the linear start and the current fractions (by the full χ²) starts it.
3. *Errors.* At the solution the components still present are parameterised by the free
   fractions with the sum eliminated: the largest fraction of each ring is
   f_ref = 1 − Σ_(others) f (components at 0 stay at 0: a bound, not a Gaussian
   direction). J is the Jacobian of the weighted residual vector (the one whose squared
   norm is the χ² of the chosen kinds) with respect to those fractions (and Σ_in in g cm⁻²
   when free), by central differences on the full model; the covariance is (JᵀJ)⁻¹, mapped
   back to every fraction by the linear map of the elimination (so the reference fraction's
   variance and its correlations come out too). It is not rescaled by the reduced χ²
   unless ``scale_errors=True`` (then ×χ²/(N − k)).

The solve never changes the scene it is given; ``result.scene`` is a new scene that the
caller applies when the user accepts it.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np
from scipy.optimize import least_squares, nnls

from ..errors import ParameterError
from ..observables.scene import ring_labels
from .comparison import Comparison

__all__ = ["CompositionResult", "RingComposition", "solve_composition", "DropOneResult", "drop_one",
           "AlternativesResult", "compare_alternatives", "swap_alternatives", "component_label"]

#: Optical-depth scale of the one-component evaluations of the linear start: Σ_in is
#: multiplied by this, so 1 − e^(−τ) = τ (1 − τ/2) is τ to ~1e-7 relative for any ring of the
#: library's κ (< 10⁵ cm² g⁻¹) and Σ_in ≤ 10 g cm⁻², while the Jy values stay far above
#: rounding.
_THIN = 1e-7
#: Weight of the scale-fixing residual c (Σw − 1) when Σ_in is held (see the module's Notes).
_SCALE_ROW = 10.0
#: Residuals of a trial the model refuses (all weights at 0): the step is rejected.
_REFUSED = 1e8
#: Fractions below this after the polish are set to 0 (see :func:`solve_composition`).
_AT_ZERO = 1e-7
#: Step in mass fraction (and relative step in Σ_in) of the central differences of the errors.
_ERROR_STEP = 1e-4


class _Cancelled(Exception):
    pass


def component_label(key):
    """A component's display name: the species name, or ``"name (SHAPE size µm)"`` for a triple."""
    if isinstance(key, str):
        return key
    name, size, shape = key
    return f"{name} (CDE)" if shape == "cde" else f"{name} ({str(shape).upper()} {size:g} µm)"


@dataclass
class RingComposition:
    """The solved composition of one ring.

    Attributes
    ----------
    index : int
        The ring's index in the scene.
    name : str
        Its display name.
    components : tuple
        Component keys (species names or (species, grain size µm, shape) triples).
    fractions : ndarray
        Mass fractions after the solve (sum 1).
    errors : ndarray
        1σ errors of the fractions (0 for a component at 0, see :attr:`at_zero`; NaN when
        the Jacobian is singular).
    correlation : ndarray
        (n, n) correlation matrix of the fractions (NaN rows for components at 0).
    covariance : ndarray
        (n, n) covariance of the fractions.
    start : ndarray
        Fractions of the linear start.
    before : ndarray
        Fractions of the components in the ring's mixture before the solve (0 where absent).
    sigma_in, sigma_in_before : float
        Σ_in in g cm⁻² after and before.
    sigma_in_error : float or None
        1σ error of Σ_in in g cm⁻² when it was free, else None.
    """

    index: int
    name: str
    components: tuple
    fractions: np.ndarray
    errors: np.ndarray
    correlation: np.ndarray
    covariance: np.ndarray
    start: np.ndarray
    before: np.ndarray
    sigma_in: float
    sigma_in_before: float
    sigma_in_error: float | None = None

    @property
    def labels(self):
        return [component_label(k) for k in self.components]

    @property
    def at_zero(self):
        """Per component: whether the data drove it to exactly 0."""
        return self.fractions <= 0.0

    def table(self) -> str:
        """Fractions ± σ, one line per component (and Σ_in when solved)."""
        lines = [f"ring {self.name}: {'component':<26}{'before':>8}{'after':>9}{'± 1σ':>9}"]
        for lab, b, f, e, z in zip(self.labels, self.before, self.fractions, self.errors, self.at_zero):
            err = "at 0" if z else f"{e:.2g}"
            lines.append(f"{'':<{len(self.name) + 7}}{lab:<26}{b:>8.3f}{f:>9.4f}{err:>9}")
        if self.sigma_in_error is not None:
            lines.append(f"{'':<{len(self.name) + 7}}{'Σ_in (g/cm2)':<26}{self.sigma_in_before:>8.3g}"
                         f"{self.sigma_in:>9.4g}{self.sigma_in_error:>9.2g}")
        return "\n".join(lines)


@dataclass
class CompositionResult:
    """Outcome of :func:`solve_composition`.

    Attributes
    ----------
    scene : Scene
        A new scene with the solved mixtures (and Σ_in); the input scene is unchanged.
    rings : list of RingComposition
        Per solved ring: fractions, 1σ errors, correlations.
    chi2_before, chi2_start, chi2_after : float
        Weighted χ² of the chosen kinds at the input scene, at the linear start (full
        model) and at :attr:`scene`.
    kinds : tuple of str
        The data kinds judged.
    weights : dict
        Weight per judged kind.
    n_points : int
        Points entering χ² (the judged kinds with weight > 0).
    n_free : int
        Free parameters: per ring, components − 1 (the fractions sum to 1), + 1 with Σ_in.
    success : bool
        Whether the polish converged (False when cancelled).
    message : str
    nfev : int
        Full-model evaluations (start, polish and errors).
    """

    scene: object
    rings: list
    chi2_before: float
    chi2_start: float
    chi2_after: float
    kinds: tuple
    weights: dict
    n_points: int
    n_free: int
    success: bool
    message: str
    nfev: int = 0

    @property
    def reduced_chi2(self) -> float:
        """χ² / (N − k) after the solve."""
        dof = self.n_points - self.n_free
        return self.chi2_after / dof if dof > 0 else float("nan")

    @property
    def aic(self) -> float:
        """Akaike (1974) information criterion χ² + 2k (Gaussian errors, up to a constant)."""
        return self.chi2_after + 2.0 * self.n_free

    @property
    def bic(self) -> float:
        """Schwarz (1978) Bayesian information criterion χ² + k ln N (up to a constant)."""
        return self.chi2_after + self.n_free * math.log(max(self.n_points, 1))

    def ring_changes(self, k=0):
        """``{"dust": DustMix, "sigma_in": g cm⁻²}`` of solved ring ``k``, for ``update_ring``."""
        ring = self.scene.rings[self.rings[k].index]
        return {"dust": ring.dust, "sigma_in": ring.sigma_in}

    def summary(self) -> str:
        lines = [f"χ² {self.chi2_before:.6g} → {self.chi2_after:.6g} (linear start {self.chi2_start:.6g}; "
                 f"N = {self.n_points}, k = {self.n_free}; {self.message})"]
        lines += [r.table() for r in self.rings]
        return "\n".join(lines)


# --------------------------------------------------------------------------- set-up
def _ring_index(scene, ring):
    labels = ring_labels(scene.rings)
    if isinstance(ring, (int, np.integer)) and not isinstance(ring, bool):
        if not 0 <= int(ring) < len(scene.rings):
            raise ParameterError(f"composition: ring index {ring} out of range; the scene has "
                                 f"{len(scene.rings)} ring(s)")
        return int(ring)
    if isinstance(ring, str):
        if ring in labels:
            return labels.index(ring)
        if ring.isdigit() and int(ring) < len(scene.rings):
            return int(ring)
        raise ParameterError(f"composition: no ring named {ring!r}; rings: {', '.join(labels) or 'none'}")
    raise ParameterError(f"composition: ring {ring!r}: expected a ring name or index")


def _mix_settings(ring):
    from ..dust.mixture import DEFAULT_GRAIN_SIZE, DEFAULT_SHAPE, DustMix

    if isinstance(ring.dust, DustMix):
        return ring.dust.grain_size, ring.dust.shape
    return DEFAULT_GRAIN_SIZE, DEFAULT_SHAPE


def _current_fractions(ring):
    from ..dust.mixture import DustMix

    if isinstance(ring.dust, DustMix):
        return dict(ring.dust.fractions)
    return {}


def _canonical_components(ring, components):
    """Candidate keys in DustMix canonical form, each checked, duplicates refused."""
    from ..dust.mixture import DustMix

    if components is None:
        keys = list(_current_fractions(ring))
        if not keys:
            raise ParameterError(f"composition: ring {ring.name!r} holds no dust mixture; name the candidate "
                                 "components")
    else:
        if isinstance(components, str):
            components = [c.strip() for c in components.split(",") if c.strip()]
        keys = list(components)
    if not keys:
        raise ParameterError(f"composition: ring {ring.name!r}: no candidate components given")
    size, shape = _mix_settings(ring)
    out = []
    for key in keys:
        if isinstance(key, list):
            key = tuple(key)
        # DustMix checks the name (known species), size and shape and gives the canonical key.
        (canon, _), = DustMix({key: 1.0}, grain_size=size, shape=shape).fractions
        if canon in out:
            raise ParameterError(f"composition: component {component_label(canon)!r} given twice for ring "
                                 f"{ring.name!r}")
        out.append(canon)
    return tuple(out)


@dataclass
class _Block:
    index: int
    name: str
    keys: tuple
    grain_size: float
    shape: str
    sigma0: float
    free_sigma: bool
    before: np.ndarray

    def mix(self, fractions):
        from ..dust.mixture import DustMix

        return DustMix({k: float(f) for k, f in zip(self.keys, fractions) if f > 0},
                       grain_size=self.grain_size, shape=self.shape)


def _blocks(scene, rings, components, sigma_in):
    if isinstance(rings, (str, int, np.integer)):
        rings = [rings]
    idx = [_ring_index(scene, r) for r in rings]
    if len(set(idx)) != len(idx):
        raise ParameterError("composition: a ring is named twice")
    labels = ring_labels(scene.rings)
    out = []
    for j, i in enumerate(idx):
        ring = scene.rings[i]
        if isinstance(components, Mapping):
            comps = components.get(rings[j], components.get(labels[i], components.get(i)))
        else:
            comps = components
        keys = _canonical_components(ring, comps)
        size, shape = _mix_settings(ring)
        current = _current_fractions(ring)
        free = bool(sigma_in.get(labels[i], sigma_in.get(i, False))) if isinstance(sigma_in, Mapping) else bool(sigma_in)
        out.append(_Block(i, labels[i], keys, size, shape, float(ring.sigma_in), free,
                          np.array([current.get(k, 0.0) for k in keys])))
    return out


def _kind_weights(comparison, kinds, weights):
    available = comparison.kinds
    if kinds is None:
        chosen = [k for k in available if float((weights or {}).get(k, comparison.weights.get(k, 1.0))) > 0]
    else:
        if isinstance(kinds, str):
            kinds = [k.strip() for k in kinds.split(",") if k.strip()]
        missing = [k for k in kinds if k not in available]
        if missing:
            raise ParameterError(f"composition: data kind(s) {', '.join(missing)} not in the data "
                                 f"(present: {', '.join(available) or 'none'})")
        chosen = list(kinds)
    w = {k: float((weights or {}).get(k, comparison.weights.get(k, 1.0))) for k in chosen}
    w = {k: v for k, v in w.items() if v > 0}
    if not w:
        raise ParameterError("composition: no data kind with weight > 0 to judge the composition against")
    return w


# --------------------------------------------------------------------------- the model
class _Problem:
    """The scene, the chosen rings and kinds, and the full-model residual vector."""

    def __init__(self, scene, comparison, blocks, weights, progress=None, cancel=None):
        self.scene = scene
        self.comparison = comparison
        self.blocks = blocks
        self.weights = weights
        self.progress = progress
        self.cancel = cancel
        self.nfev = 0
        self.best = math.inf
        self.kept = None      # (χ², parts) of the best state evaluated by the polish or a start
        self._size = 0        # length of the residual vector (set by the first judgement)
        self.sizes = [len(b.keys) for b in blocks]
        self.offsets = np.cumsum([0] + self.sizes)

    def keep(self, chi2, parts):
        if self.kept is None or chi2 < self.kept[0]:
            self.kept = (chi2, [(np.array(f, float), float(sg)) for f, sg in parts])

    # theta → per-block (fractions, sigma_in)
    def unpack(self, theta):
        out = []
        for b, lo, hi in zip(self.blocks, self.offsets[:-1], self.offsets[1:]):
            w = np.asarray(theta[lo:hi], float)
            total = float(w.sum())
            if not total > 0:
                return None
            out.append((w / total, b.sigma0 * total if b.free_sigma else b.sigma0))
        return out

    def pack(self, parts):
        theta = []
        for b, (f, sigma) in zip(self.blocks, parts):
            theta.append(np.asarray(f, float) * (sigma / b.sigma0 if b.free_sigma else 1.0))
        return np.concatenate(theta)

    def scene_at(self, parts):
        scene = self.scene
        for b, (f, sigma) in zip(self.blocks, parts):
            scene = scene.with_ring(b.index, dust=b.mix(f), sigma_in=float(sigma))
        return scene

    def judge(self, scene):
        """(weighted residual vector, χ², points) of ``scene`` for the chosen kinds."""
        if self.cancel is not None and self.cancel():
            raise _Cancelled
        res = self.comparison.compare(scene)
        self.nfev += 1
        parts, chi2, n = [], 0.0, 0
        for kind, w in self.weights.items():
            r = np.asarray(res.residuals[kind], float)
            good = np.isfinite(r)
            parts.append(np.where(good, r, 0.0) * math.sqrt(w))
            chi2 += w * res.chi2[kind]
            n += res.npoints[kind]
        if chi2 < self.best:
            self.best = chi2
        if self.progress is not None:
            self.progress(self.nfev, self.best)
        return np.concatenate(parts), chi2, n

    def residuals(self, theta):
        parts = self.unpack(theta)
        size = self._size
        if parts is None:
            return np.full(size, _REFUSED)
        r, chi2, _ = self.judge(self.scene_at(parts))
        self.keep(chi2, parts)
        extra = [_SCALE_ROW * (float(np.sum(theta[lo:hi])) - 1.0)
                 for b, lo, hi in zip(self.blocks, self.offsets[:-1], self.offsets[1:]) if not b.free_sigma]
        return np.concatenate([r, extra]) if extra else r


# --------------------------------------------------------------------------- linear start
def _quantities(comparison, scene):
    """(coherent flux N, total flux F at the interferometric data points; SED total flux), Jy."""
    obs = comparison.observer
    n_vis = obs.n_vis
    N = F = S = None
    if obs.interferometric is not None and n_vis:
        ev = obs.interferometric.evaluate(scene)
        N = np.array(ev.numerator_real[:n_vis], complex)
        if ev.numerator_imag is not None:
            N.imag = ev.numerator_imag[:n_vis]
        F = ev.flux_total[ev.wave_index[:n_vis]]
        if comparison._vis_samples is not None:
            N, F = N[comparison._vis_samples], F[comparison._vis_samples]
    if obs.photometric is not None:
        ev = obs.photometric.evaluate(scene, fluxes_only=True)
        S = ev.flux_total[ev.wave_index]
    return N, F, S


class _LinearRows:
    """The linear kinds' residuals as affine functions of the quantities of :func:`_quantities`."""

    def __init__(self, comparison, weights, reference):
        self.rows = []   # (kind, what, index array, data, scale, sqrt weight)
        c = comparison
        obs = c.observations
        n0, f0, _ = reference
        for kind, w in weights.items():
            sw = math.sqrt(w)
            if kind in ("photometry", "spectrum", "flux"):
                ds = {"photometry": c.photometry, "spectrum": c.spectrum,
                      "flux": getattr(obs, "flux", None)}[kind]
                sl = c._sed_slices[kind]
                flux = np.asarray(ds["flux"].values, float)
                err = np.asarray(ds["flux_err"].values, float) if "flux_err" in ds else np.full(flux.shape, np.nan)
                if kind == "spectrum":
                    err = np.where(np.isfinite(err) & (err > 0), err, 0.05 * np.abs(flux))
                use = np.isfinite(flux) & np.isfinite(err) & (err > 0)
                if kind == "photometry":
                    use &= ~ds["upper_limit"].values.astype(bool)
                if kind == "flux":
                    use &= c._flux_judged
                idx = np.arange(sl.start, sl.stop)[use]
                self.rows.append((kind, "sed", idx, flux[use], err[use], sw, None))
            elif kind in ("corrflux", "visamp", "vis2"):
                if kind == "vis2":
                    ds, sl = obs.vis2, c._slices["vis2"]
                    v2 = np.asarray(ds["vis2"].values, float)
                    e2 = np.asarray(ds["vis2_err"].values, float)
                    amp = np.sqrt(np.clip(v2, 0.0, None))
                    err = e2 / (2.0 * np.maximum(amp, np.sqrt(np.abs(e2))))
                    use = np.isfinite(v2) & np.isfinite(e2) & (e2 > 0)
                else:
                    ds, sl = obs.vis, c._slices["vis"]
                    amp = np.asarray(ds["visamp"].values, float)
                    err = np.asarray(ds["visamp_err"].values, float)
                    want = "correlated flux" if kind == "corrflux" else "absolute"
                    use = (c._vis_types()[0] == want) & np.isfinite(amp) & np.isfinite(err) & (err > 0)
                idx = np.arange(sl.start, sl.stop)[use]
                # The phase of the current model: |N| ≈ Re(N e^{−iφ₀}), exact while the
                # components share the phase (axisymmetric rings: N real, of either sign).
                ref = n0[idx]
                phase = np.where(np.abs(ref) > 0, np.conj(ref) / np.where(np.abs(ref) > 0, np.abs(ref), 1.0), 1.0)
                what = "coherent" if kind == "corrflux" else "visibility"
                self.rows.append((kind, what, idx, amp[use], err[use], sw, (phase, f0[idx])))

    def matrix(self, q, with_data):
        """Residual rows (data − model)/σ · √w of quantities ``q``; without the data terms
        when ``with_data`` is False (then linear and homogeneous in ``q``)."""
        n, f, s = q
        out = []
        for kind, what, idx, data, err, sw, extra in self.rows:
            if what == "sed":
                r = ((data if with_data else 0.0) - s[idx]) / err
            elif what == "coherent":
                r = ((data if with_data else 0.0) - (n[idx] * extra[0]).real) / err
            else:
                # |V|_d F − Re(N e^{−iφ₀}) over σ_|V| F₀: V = N/F linearised, homogeneous in (N, F).
                r = (data * f[idx] - (n[idx] * extra[0]).real) / (err * extra[1])
            out.append(sw * r)
        return np.concatenate(out) if out else np.zeros(0)


def _linear_start(problem):
    """Per-block (fractions, Σ_in) from non-negative least squares on the thin-limit model,
    or None when no chosen kind is linear."""
    from ..dust.mixture import DustMix

    scene, comparison = problem.scene, problem.comparison
    rows = _LinearRows(comparison, problem.weights, _quantities(comparison, scene))
    if not rows.rows:
        return None
    background = scene
    for b in problem.blocks:
        background = background.with_ring(b.index, enabled=False)
    q_background = _quantities(comparison, background)
    const = rows.matrix(q_background, True)
    zero = rows.matrix(q_background, False)
    columns = []
    for b in problem.blocks:
        ring = scene.rings[b.index]
        if ring.inner_edge == "sublimation":
            # The mixture of every candidate starts at the front of its most refractory
            # species; each one alone is evaluated from that same radius.
            every = replace(ring, dust=DustMix({k: 1.0 / len(b.keys) for k in b.keys},
                                               grain_size=b.grain_size, shape=b.shape)).resolved(scene.star)
            ring = ring if every is None else every
        for key in b.keys:
            alone = replace(ring, dust=DustMix({key: 1.0}, grain_size=b.grain_size, shape=b.shape),
                            sigma_in=b.sigma0 * _THIN)
            q = _quantities(comparison, background.with_ring(b.index, **_ring_fields(alone)))
            # Per unit of theta (x / Σ_in₀): the difference from the background over _THIN.
            columns.append((rows.matrix(q, False) - zero) / _THIN)
    a = np.column_stack(columns)
    good = np.all(np.isfinite(a), axis=1) & np.isfinite(const)
    theta, _ = nnls(a[good], -const[good])
    parts = []
    for b, lo, hi in zip(problem.blocks, problem.offsets[:-1], problem.offsets[1:]):
        x = theta[lo:hi]
        total = float(x.sum())
        if not total > 0:
            return None
        parts.append((x / total, b.sigma0 * total))
    return parts


def _ring_fields(ring):
    return {"dust": ring.dust, "sigma_in": ring.sigma_in, "r_in": ring.r_in, "inner_edge": ring.inner_edge,
            "enabled": True}


# --------------------------------------------------------------------------- errors
def _errors(problem, parts):
    """Covariance of every fraction (and Σ_in) per block, from the Jacobian on the simplex."""
    directions = []   # (block number, kind, index): kind "f" moves f_i against f_ref; "s" Σ_in
    refs = []
    for j, (b, (f, sigma)) in enumerate(zip(problem.blocks, parts)):
        present = np.flatnonzero(f > 0)
        ref = int(present[np.argmax(f[present])])
        refs.append(ref)
        directions += [(j, "f", i) for i in present if i != ref]
        if b.free_sigma:
            directions.append((j, "s", None))
    base_r, _, _ = problem.judge(problem.scene_at(parts))
    jac = np.zeros((base_r.size, len(directions)))
    steps = []
    for c, (j, kind, i) in enumerate(directions):
        f, sigma = parts[j]
        if kind == "f":
            h = min(_ERROR_STEP, 0.5 * f[i], 0.5 * f[refs[j]])
        else:
            h = _ERROR_STEP * sigma
        steps.append(h)
        vals = []
        for sign in (1.0, -1.0):
            moved = [(ff.copy(), s) for ff, s in parts]
            if kind == "f":
                moved[j][0][i] += sign * h
                moved[j][0][refs[j]] -= sign * h
            else:
                moved[j] = (moved[j][0], sigma + sign * h)
            vals.append(problem.judge(problem.scene_at(moved))[0])
        jac[:, c] = (vals[0] - vals[1]) / (2.0 * h)
    with np.errstate(invalid="ignore"):
        try:
            cov_free = np.linalg.inv(jac.T @ jac) if directions else np.zeros((0, 0))
        except np.linalg.LinAlgError:
            cov_free = np.full((len(directions), len(directions)), np.nan)
    out = []
    for j, (b, (f, sigma)) in enumerate(zip(problem.blocks, parts)):
        n = len(b.keys)
        # Linear map from the free directions to this block's fractions (and Σ_in).
        a = np.zeros((n + 1, len(directions)))
        for c, (jj, kind, i) in enumerate(directions):
            if jj != j:
                continue
            if kind == "f":
                a[i, c] = 1.0
                a[refs[j], c] = -1.0
            else:
                a[n, c] = 1.0
        out.append(a @ cov_free @ a.T)
    return out


def _correlation(cov):
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(sd, sd)
    corr[np.outer(sd, sd) == 0] = np.nan
    return corr


# --------------------------------------------------------------------------- the solve
def solve_composition(scene, comparison, rings, components=None, *, kinds=None, weights=None, sigma_in=False,
                      scale_errors=False, max_nfev=None, progress=None, cancel=None, errors=True):
    """Solve the mass fractions of candidate components in one or more rings.

    Parameters
    ----------
    scene : Scene
        The starting state; never modified (everything but the solved mixtures and Σ_in is held).
    comparison : Comparison
        The data; its weights per kind are used unless ``weights`` overrides them.
    rings : int, str or sequence of them
        The ring(s) to solve: index or display name (``ring_labels``).
    components : sequence, str or mapping, optional
        Candidate components: species names (the ring's grain size and shape) or
        ``(species, grain size µm, shape)`` triples; a comma-separated string; or a mapping
        ring → such a sequence. Default: the components of each ring's current mixture.
    kinds : sequence of str or str, optional
        Data kinds to judge (default: every kind of the data with weight > 0).
    weights : mapping, optional
        Weight per kind, overriding the comparison's.
    sigma_in : bool or mapping
        Also solve each ring's Σ_in (g cm⁻² at the inner radius), whose total sets the band
        strength; a mapping ring → bool decides per ring.
    scale_errors : bool
        Multiply the covariance by the reduced χ² χ²/(N − k) (default: errors at face value).
    max_nfev : int, optional
        Model evaluations of the polish (default 30 per variable, at least 100).
    progress : callable, optional
        ``progress(i, chi2)`` after each full-model evaluation (best weighted χ² so far).
    cancel : callable, optional
        ``cancel() -> bool``, polled before each evaluation; the best state so far is then
        returned (``success=False``, no errors).
    errors : bool
        Compute the errors (drop-one tests and comparisons of alternatives skip them).

    Returns
    -------
    CompositionResult

    Raises
    ------
    ParameterError
        An unknown ring, kind or component, or no kind with weight > 0.

    Notes
    -----
    See the module docstring: thin-limit linear start by non-negative least squares, polish
    on the full model with the fractions on the simplex, errors from the Jacobian with the
    sum constraint eliminated, covariance (JᵀJ)⁻¹.

    Examples
    --------
    >>> res = solve_composition(scene, comparison, "inner",
    ...                         ["olivine_glass", "forsterite", "iron"])      # doctest: +SKIP
    >>> print(res.summary())                                                 # doctest: +SKIP
    """
    if not isinstance(comparison, Comparison):
        raise ParameterError(f"composition: expected a Comparison, got {type(comparison).__name__}")
    blocks = _blocks(scene, rings, components, sigma_in)
    w = _kind_weights(comparison, kinds, weights)
    problem = _Problem(scene, comparison, blocks, w, progress, cancel)
    before_parts = [(b.before / b.before.sum() if b.before.sum() > 0 else np.full(len(b.keys), 1.0 / len(b.keys)),
                     b.sigma0) for b in blocks]
    _, chi2_before, n_points = problem.judge(scene)
    r0, chi2_mixture, _ = problem.judge(problem.scene_at(before_parts))
    problem._size = r0.size
    n_free = sum(len(b.keys) - 1 + (1 if b.free_sigma else 0) for b in blocks)
    try:
        start = _linear_start(problem)
        candidates = [(chi2_mixture, before_parts)]
        chi2_start = float("nan")
        if start is not None:
            chi2_start = problem.judge(problem.scene_at(start))[1]
            candidates.append((chi2_start, start))
            if any(b.free_sigma for b in blocks):
                # The thin limit underestimates Σ_in of an optically thick ring: try the
                # start's fractions at the current Σ_in too.
                held = [(f, b.sigma0) for b, (f, _) in zip(blocks, start)]
                candidates.append((problem.judge(problem.scene_at(held))[1], held))
        chi2_first, first = min(candidates, key=lambda c: c[0])
        problem.keep(chi2_first, first)
        theta0 = problem.pack(first)
        nvar = theta0.size
        fit = least_squares(problem.residuals, theta0, bounds=(0.0, np.inf), method="trf",
                            max_nfev=max_nfev or max(100, 30 * nvar))
        theta, success, message = fit.x, bool(fit.success), str(fit.message)
    except _Cancelled:
        theta, success, message = None, False, "cancelled"
        start = start if "start" in locals() else None
    problem.cancel = None   # the closing evaluations below always run
    if theta is None:
        parts = problem.kept[1] if problem.kept is not None else before_parts
    else:
        parts = problem.unpack(theta)
        # The trust region keeps its iterates strictly inside the bounds: a component the
        # data push against 0 ends a hair above it, and is the bound's (exactly 0).
        snapped = [(np.where(f < _AT_ZERO, 0.0, f), s) for f, s in parts]
        snapped = [(f / f.sum(), s) for f, s in snapped]
        chi2_polished = problem.judge(problem.scene_at(parts))[1]
        chi2_snapped = problem.judge(problem.scene_at(snapped))[1]
        # Removing a species can move a sublimation-front inner edge (and with it where
        # Σ_in holds): keep the hair when the zero is worse.
        parts = snapped if chi2_snapped <= chi2_polished * (1 + 1e-9) + 1e-9 else parts
        if min(chi2_snapped, chi2_polished) > problem.kept[0]:
            # Never hand back a worse state than the best start (a model discontinuity
            # the trust region stepped across).
            parts, message = problem.kept[1], message + "; kept the best start (the polish ended worse)"
    scene_after = problem.scene_at(parts)
    _, chi2_after, _ = problem.judge(scene_after)
    problem.cancel = None if theta is None else cancel
    covs = None
    if errors and theta is not None:
        try:
            covs = _errors(problem, parts)
        except _Cancelled:
            covs, success, message = None, False, "cancelled while estimating the errors"
    if covs is not None and scale_errors:
        dof = n_points - n_free
        factor = chi2_after / dof if dof > 0 else float("nan")
        covs = [c * factor for c in covs]
    out = []
    for j, (b, (f, sigma)) in enumerate(zip(blocks, parts)):
        n = len(b.keys)
        if covs is None:
            cov = np.full((n + 1, n + 1), np.nan)
        else:
            cov = covs[j]
        errs = np.sqrt(np.clip(np.diag(cov)[:n], 0.0, None)) if covs is not None else np.full(n, np.nan)
        st = start[j][0] if start is not None else b.before
        out.append(RingComposition(
            index=b.index, name=b.name, components=b.keys, fractions=np.asarray(f, float), errors=errs,
            correlation=_correlation(cov[:n, :n]), covariance=cov[:n, :n], start=np.asarray(st, float),
            before=b.before, sigma_in=float(sigma), sigma_in_before=b.sigma0,
            sigma_in_error=(float(math.sqrt(max(cov[n, n], 0.0))) if covs is not None else float("nan"))
            if b.free_sigma else None))
    return CompositionResult(scene=scene_after, rings=out, chi2_before=chi2_before, chi2_start=chi2_start,
                             chi2_after=chi2_after, kinds=tuple(w), weights=dict(w), n_points=n_points,
                             n_free=n_free, success=success, message=message, nfev=problem.nfev)


# --------------------------------------------------------------------------- which minerals
@dataclass
class DropOneResult:
    """Outcome of :func:`drop_one`: the full solve and one re-solve per dropped component.

    Attributes
    ----------
    full : CompositionResult
        Every component.
    rows : list of dict
        Per component: ``component`` (label), ``key``, ``chi2`` (without it),
        ``delta_chi2`` = χ²_without − χ²_full, ``delta_aic`` = Δχ² − 2 and ``delta_bic`` =
        Δχ² − ln N (one free parameter fewer; Akaike 1974, Schwarz 1978); positive values
        mean the data need the component. ``fractions``: the others' fractions without it.
    """

    full: CompositionResult
    rows: list = field(default_factory=list)

    def table(self) -> str:
        """The drop-one table as text."""
        r0 = self.full.rings[0]
        lines = [f"drop-one test, ring {r0.name} (χ² with every component {self.full.chi2_after:.6g}, "
                 f"N = {self.full.n_points})",
                 f"{'dropped':<28}{'fraction':>9}{'chi2 without':>15}{'Δchi2':>12}{'ΔBIC':>12}"]
        for row, f in zip(self.rows, r0.fractions):
            lines.append(f"{row['component']:<28}{f:>9.4f}{row['chi2']:>15.6g}{row['delta_chi2']:>12.4g}"
                         f"{row['delta_bic']:>12.4g}")
        lines.append("Δ > 0: the data need the component (ΔBIC > 10: strongly); errors assumed independent and "
                     "Gaussian")
        return "\n".join(lines)


def drop_one(scene, comparison, ring, components=None, *, full=None, progress=None, cancel=None, **options):
    """Drop each component of a ring in turn, re-solve the others and compare.

    Parameters
    ----------
    scene, comparison, ring, components
        As for :func:`solve_composition` (one ring).
    full : CompositionResult, optional
        The solve with every component, if already made (its errors are kept).
    progress : callable, optional
        ``progress(done, total)`` after each re-solve.
    cancel : callable, optional
        Polled by the solves (a cancelled drop-one raises nothing: its rows stop early).
    **options
        ``kinds``, ``weights``, ``sigma_in``, ``max_nfev`` as for :func:`solve_composition`.

    Returns
    -------
    DropOneResult
        ΔBIC = Δχ² − ln N per component (Schwarz 1978, Ann. Stat. 6, 461); ΔAIC = Δχ² − 2
        (Akaike 1974, IEEE Trans. Autom. Control 19, 716).
    """
    if full is None:
        full = solve_composition(scene, comparison, ring, components, cancel=cancel, **options)
    r0 = full.rings[0]
    keys = r0.components
    if len(keys) < 2:
        raise ParameterError(f"drop-one: ring {r0.name!r} has one component; nothing to drop")
    out = DropOneResult(full=full)
    log_n = math.log(max(full.n_points, 1))
    for m, key in enumerate(keys):
        if cancel is not None and cancel():
            break
        others = [k for k in keys if k != key]
        # Start the re-solve from the full solution without the dropped component.
        rest = np.array([f for k, f in zip(keys, r0.fractions) if k != key])
        start_scene = full.scene
        if rest.sum() > 0:
            from ..dust.mixture import DustMix

            ring_now = full.scene.rings[r0.index]
            start_scene = full.scene.with_ring(r0.index, dust=DustMix(
                {k: f / rest.sum() for k, f in zip(others, rest) if f > 0},
                grain_size=ring_now.dust.grain_size, shape=ring_now.dust.shape))
        res = solve_composition(start_scene, comparison, r0.index, others, errors=False, cancel=cancel, **options)
        delta = res.chi2_after - full.chi2_after
        out.rows.append({"component": component_label(key), "key": key, "chi2": res.chi2_after,
                         "delta_chi2": delta, "delta_aic": delta - 2.0, "delta_bic": delta - log_n,
                         "fractions": dict(zip(others, res.rings[0].fractions.tolist()))})
        if progress is not None:
            progress(m + 1, len(keys))
    return out


@dataclass
class AlternativesResult:
    """Outcome of :func:`compare_alternatives`: one solve per named alternative.

    Attributes
    ----------
    results : dict of str to CompositionResult
    rows : list of dict
        Per alternative, in the given order: ``name``, ``components`` (labels), ``chi2``,
        ``reduced_chi2`` = χ²/(N − k), ``k`` (free parameters), ``n`` (points), ``aic`` =
        χ² + 2k (Akaike 1974), ``bic`` = χ² + k ln N (Schwarz 1978), ``delta_aic`` and
        ``delta_bic`` against the lowest of all alternatives (0 for the preferred one).
    """

    results: dict
    rows: list

    @property
    def best(self) -> str:
        """Name of the alternative with the lowest BIC."""
        return min(self.rows, key=lambda r: r["bic"])["name"]

    def table(self) -> str:
        """The rows as a text table."""
        width = max([len("alternative")] + [len(r["name"]) for r in self.rows]) + 2
        lines = [f"{'alternative':<{width}}{'chi2':>14}{'chi2_red':>10}{'k':>4}{'ΔAIC':>11}{'ΔBIC':>11}"]
        for r in self.rows:
            lines.append(f"{r['name']:<{width}}{r['chi2']:>14.6g}{r['reduced_chi2']:>10.4f}{r['k']:>4d}"
                         f"{r['delta_aic']:>11.4g}{r['delta_bic']:>11.4g}")
        n = self.rows[0]["n"] if self.rows else 0
        lines.append(f"N = {n}; ΔAIC (Akaike 1974), ΔBIC (Schwarz 1978) against the lowest; > 10: strong "
                     "evidence against; errors assumed independent and Gaussian")
        return "\n".join(lines)


def compare_alternatives(scene, comparison, ring, alternatives, *, progress=None, cancel=None, **options):
    """Solve a ring once per named set of components and compare them side by side.

    Parameters
    ----------
    scene, comparison, ring
        As for :func:`solve_composition` (one ring).
    alternatives : mapping of str to sequence
        Name → candidate components, e.g. ``{"iron": [..., "iron"], "carbon": [...,
        "amorphous_carbon"]}`` (see :func:`swap_alternatives`).
    progress : callable, optional
        ``progress(done, total)`` after each solve.
    cancel : callable, optional
        Polled by the solves.
    **options
        ``kinds``, ``weights``, ``sigma_in``, ``max_nfev``, ``errors`` as for
        :func:`solve_composition` (errors default to off here).

    Returns
    -------
    AlternativesResult
        χ², reduced χ², k, ΔAIC (Akaike 1974, IEEE Trans. Autom. Control 19, 716) and ΔBIC
        (Schwarz 1978, Ann. Stat. 6, 461) per alternative; both criteria assume
        independent Gaussian errors.
    """
    if not alternatives:
        raise ParameterError("compare alternatives: no alternative given")
    options.setdefault("errors", False)
    results = {}
    for m, (name, comps) in enumerate(alternatives.items()):
        results[name] = solve_composition(scene, comparison, ring, comps, cancel=cancel, **options)
        if progress is not None:
            progress(m + 1, len(alternatives))
    rows = []
    for name, res in results.items():
        rows.append({"name": name, "components": res.rings[0].labels, "chi2": res.chi2_after,
                     "reduced_chi2": res.reduced_chi2, "k": res.n_free, "n": res.n_points,
                     "aic": res.aic, "bic": res.bic})
    aic0 = min(r["aic"] for r in rows)
    bic0 = min(r["bic"] for r in rows)
    for r in rows:
        r["delta_aic"] = r["aic"] - aic0
        r["delta_bic"] = r["bic"] - bic0
    return AlternativesResult(results=results, rows=rows)


def swap_alternatives(components, swap):
    """Two named alternatives that differ by one component: ``"iron:amorphous_carbon"``.

    Parameters
    ----------
    components : sequence of str or tuple
        The components of the first alternative; it must hold the first species of ``swap``.
    swap : str or (str, str)
        ``"A:B"``: the second alternative has B in place of A.

    Returns
    -------
    dict
        ``{"with A": components, "with B": components with A replaced by B}``.
    """
    if isinstance(swap, str):
        if swap.count(":") != 1:
            raise ParameterError(f"compare {swap!r}: expected SPECIES:SPECIES, e.g. iron:amorphous_carbon")
        a, b = (s.strip() for s in swap.split(":"))
    else:
        a, b = swap
    if not a or not b or a == b:
        raise ParameterError(f"compare {swap!r}: expected two different species, e.g. iron:amorphous_carbon")
    comps = list(components)
    names = [c if isinstance(c, str) else c[0] for c in comps]
    if a not in names:
        if b in names:
            a, b = b, a
        else:
            raise ParameterError(f"compare {a}:{b}: neither is among the components "
                                 f"({', '.join(component_label(c) for c in comps)})")
    i = names.index(a)
    other = comps[:i] + [b if isinstance(comps[i], str) else (b, *comps[i][1:])] + comps[i + 1:]
    if b in names:
        other = [c for j, c in enumerate(other) if not (j != i and names[j] == b)]
    return {f"with {a}": comps, f"with {b}": other}
