"""Quick local refinement of the free parameters from the current state (bounded least squares).

The residual vector is every data kind's normalised residuals (data − model)/error,
concatenated and multiplied by √weight, so that its squared norm is the weighted total χ²
of :class:`~diskexplorer.fitting.Comparison`. Parameters declared on a log scale (radii,
surface densities, …) are optimised in ln x, the others linearly; the covariance is
reported for the physical parameters.

Mass fractions (the ring's fractions sum to 1): a ring's free fractions are optimised as
weights y_i in [0, 1] and the ring's fractions are the renormalised weights
f_i = S · y_i / Σ_j y_j (S = 1 − the ring's fixed fractions; as in
:mod:`~diskexplorer.fitting.vector`), so every trial is a valid mixture. With free
fractions the bounded solver is scipy's ``dogbox``, which puts a variable *on* its bound
(the trust-region-reflective method keeps iterates strictly inside): a species the data
do not want reaches y = 0, so a fraction of exactly 0, by the optimality conditions at the
bound, not by rounding. When the data want the species at exactly 0 and the solver
stops a rounding error away from it (e.g. y ≈ 1e-17 in a noise-free case whose optimum
lies on the bound), weights below :data:`ZERO_WEIGHT` of their ring's sum are set to 0
if χ² does not rise by more than :data:`ZERO_CHI2_TOLERANCE` (relative): the
complementarity condition at the bound, checked on χ² itself. Bounds narrower than
[0, 1] on a fraction are kept by refusing
trials whose fractions leave them. The covariance of the fractions is propagated through
the renormalisation, C_f = G C_y Gᵀ with G = ∂f/∂y.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from ..errors import ParameterError
from .comparison import Comparison
from .vector import FreeParameter, fraction_groups, free_parameters, scene_from_vector, vector_from_scene

__all__ = ["RefineResult", "refine", "ZERO_WEIGHT", "ZERO_CHI2_TOLERANCE"]

#: A fraction weight below this share of its ring's weights is a candidate for exactly 0.
ZERO_WEIGHT = 1e-8
#: Relative rise of χ² (plus 1e-12 absolute) allowed when candidates are set to exactly 0.
ZERO_CHI2_TOLERANCE = 1e-9

# A trial the model refuses (r_in ≥ r_out after a step) gets residuals this large, so the
# trust-region step is rejected and shortened; it is never accepted as an improvement.
_REFUSED = 1e8


@dataclass
class RefineResult:
    """Outcome of :func:`refine`.

    Attributes
    ----------
    scene : Scene
        A new scene at the best parameters found (the input scene is unchanged).
    chi2_before, chi2_after : float
        Weighted total χ² at the start and at ``scene``.
    covariance : ndarray or None
        (n_free, n_free) covariance of the free parameters in their declared units,
        (JᵀJ)⁻¹ propagated from the optimisation variables (ln x for log-scaled ones).
        Not rescaled by the reduced χ². None when refinement was cancelled before a
        Jacobian was available.
    parameters : list of FreeParameter
        The free parameters with their refined values.
    success : bool
        Whether the optimiser reported convergence (False when cancelled).
    message : str
        What happened, in words.
    nfev : int
        Model evaluations used.
    """

    scene: object
    chi2_before: float
    chi2_after: float
    covariance: np.ndarray | None
    parameters: list
    success: bool
    message: str
    nfev: int = 0

    @property
    def uncertainties(self):
        """1σ uncertainties √diag(covariance) in declared units (NaN where unavailable)."""
        if self.covariance is None:
            return np.full(len(self.parameters), np.nan)
        with np.errstate(invalid="ignore"):
            return np.sqrt(np.diag(self.covariance))

    def summary(self) -> str:
        lines = [f"χ² {self.chi2_before:.6g} → {self.chi2_after:.6g} ({self.message})"]
        for p, err in zip(self.parameters, self.uncertainties):
            unit = f" {p.unit}" if p.unit else ""
            lines.append(f"  {p.path:<28} {p.value:.6g} ± {err:.2g}{unit}")
        return "\n".join(lines)


class _Cancelled(Exception):
    pass


def _as_comparison(data, weights):
    if isinstance(data, Comparison):
        if weights:
            # A new Comparison with other weights re-binds the same data (cheap evaluators).
            merged = dict(data.weights)
            merged.update(weights)
            return Comparison(data.observations, data.photometry, data.spectrum, weights=merged,
                              accuracy=data.observer.interferometric.accuracy
                              if data.observer.interferometric is not None else 1,
                              bandpass=data.bandpass)
        return data
    if isinstance(data, dict):
        extra = set(data) - {"observations", "photometry", "spectrum", "weights", "accuracy", "bandpass"}
        if extra:
            raise ParameterError(f"refine: data has unknown key(s) {sorted(extra)}; expected "
                                 "observations, photometry, spectrum (and weights, accuracy, bandpass)")
        w = dict(data.get("weights") or {})
        w.update(weights or {})
        return Comparison(data.get("observations"), data.get("photometry"), data.get("spectrum"),
                          weights=w, accuracy=data.get("accuracy", 1), bandpass=data.get("bandpass", True))
    raise ParameterError(f"refine: data must be a Comparison or a dict(observations=..., photometry=..., "
                         f"spectrum=...), got {type(data).__name__}")


def _residual_vector(result):
    parts = []
    for kind, r in result.residuals.items():
        w = result.weights.get(kind, 1.0)
        if w <= 0:
            continue
        r = np.asarray(r, float)
        parts.append(np.where(np.isfinite(r), r, 0.0) * math.sqrt(w))
    return np.concatenate(parts) if parts else np.zeros(0)


def _zero_tiny_weights(x, new_scene, chi2, groups, fps, scene, comparison, fractions, frac_lo, frac_hi):
    """Set fraction weights a rounding error above 0 to exactly 0 when χ² agrees (module docstring)."""
    snapped = np.array(x, float)
    for idx in groups:
        y = snapped[idx]
        tiny = (y > 0) & (y < ZERO_WEIGHT * y.sum())
        y[tiny] = 0.0
        snapped[idx] = y
    if np.array_equal(snapped, x):
        return x, new_scene, chi2
    f = fractions(snapped)
    if f is None or np.any(f < frac_lo) or np.any(f > frac_hi):
        return x, new_scene, chi2
    try:
        trial = scene_from_vector(scene, fps, snapped, check_bounds=False)
    except ParameterError:
        return x, new_scene, chi2
    trial_chi2 = float(comparison.compare(trial).total)
    if math.isfinite(trial_chi2) and trial_chi2 <= chi2 * (1 + ZERO_CHI2_TOLERANCE) + 1e-12:
        return snapped, trial, trial_chi2
    return x, new_scene, chi2


def refine(scene, data, free, weights=None, bounds=None, max_nfev=None, progress=None, cancel=None,
           priors=None):
    """Refine the free parameters of ``scene`` against data by bounded least squares.

    Parameters
    ----------
    scene : Scene
        Starting state; never modified.
    data : Comparison or dict
        A :class:`~diskexplorer.fitting.Comparison`, or
        ``dict(observations=..., photometry=..., spectrum=...)`` (optionally ``weights``).
    free : sequence of str or FreeParameter
        Parameter paths (``rings[inner].t_in`` accepted) or FreeParameter entries (from a
        :class:`StartingPoint`), whose bounds are used.
    weights : dict, optional
        Weight per data kind, overriding the comparison's.
    bounds : mapping of str to (float, float), optional
        Path → (lo, hi) in declared units; default the declared bounds.
    max_nfev : int, optional
        Maximum number of model evaluations (default 50 per free parameter, ≥ 100).
    progress : callable, optional
        ``progress(i, chi2)`` after each model evaluation: i counts evaluations from 1,
        chi2 is the best weighted total χ² so far.
    cancel : callable, optional
        ``cancel() -> bool``, polled before each evaluation; when it returns True the
        refinement stops and the best state found so far is returned
        (``success=False``, the message says it was cancelled).
    priors : mapping, optional
        Accepted for symmetry with :func:`export_start`; priors do not enter the
        least-squares objective.

    Returns
    -------
    RefineResult

    Raises
    ------
    SeedError
        Unknown paths or bad bounds.
    ParameterError
        Data in an unusable form, or a starting point the model refuses.

    Notes
    -----
    Minimises Σ_k w_k Σ_i r_ki² with r = (data − model)/σ, using
    :func:`scipy.optimize.least_squares` (trust-region reflective, bounded; ``dogbox``
    when mass fractions are free, see the module docstring) on z = ln x for log-scaled
    parameters, z = y (weights) for mass fractions and z = x otherwise, with
    finite-difference Jacobians. Covariance: C_z = (JᵀJ)⁻¹ (pseudo-inverse),
    C_x = D C_z Dᵀ with D = dx/dz: diag(x) for log-scaled parameters, 1 for linear ones,
    and for a ring's fractions the block S (δ_ij/Σy − y_i/(Σy)²). The r_in < r_out
    constraint is enforced by refusing trial points that break it.
    """
    comparison = _as_comparison(data, weights)
    fps = free_parameters(scene, free, bounds=bounds, priors=priors)
    if not fps:
        raise ParameterError("refine: no free parameters given")
    x0 = vector_from_scene(scene, fps)
    logs = np.array([p.log_scaled for p in fps], dtype=bool)
    lo = np.array([p.lo for p in fps])
    hi = np.array([p.hi for p in fps])
    groups = list(fraction_groups(fps).values())
    shares = [float(x0[idx].sum()) for idx in groups]   # S of each ring: its free fractions' sum
    for idx in groups:
        lo[idx], hi[idx] = 0.0, 1.0   # the weights' range; the fractions' bounds are checked below
    frac_lo = np.array([p.lo for p in fps])
    frac_hi = np.array([p.hi for p in fps])

    def fractions(x):
        """x with each ring's weights replaced by their fractions S·y/Σy (None if Σy = 0)."""
        out = np.array(x, float)
        for idx, share in zip(groups, shares):
            total = out[idx].sum()
            if not total > 0:
                return None
            out[idx] = share * out[idx] / total
        return out

    def to_z(x):
        return np.where(logs, np.log(np.where(logs, x, 1.0)), x)

    def to_x(z):
        return np.clip(np.where(logs, np.exp(np.where(logs, z, 0.0)), z), lo, hi)

    first = comparison.compare(scene)
    r0 = _residual_vector(first)
    if r0.size == 0:
        raise ParameterError("refine: the data hold no points to fit")
    chi2_before = float(first.total)
    best = {"chi2": chi2_before, "z": to_z(x0), "n": 0}

    def fun(z):
        if cancel is not None and cancel():
            raise _Cancelled()
        best["n"] += 1
        x = to_x(z)
        f = fractions(x)
        if f is None or np.any(f < frac_lo) or np.any(f > frac_hi):
            return np.full(r0.size, _REFUSED)
        try:
            trial = scene_from_vector(scene, fps, x, check_bounds=False)
        except ParameterError:
            return np.full(r0.size, _REFUSED)
        res = comparison.compare(trial)
        r = _residual_vector(res)
        chi2 = float(res.total)
        if math.isfinite(chi2) and chi2 < best["chi2"]:
            best.update(chi2=chi2, z=np.array(z, float))
        if progress is not None:
            progress(best["n"], best["chi2"])
        return r

    zlo, zhi = to_z(lo), to_z(hi)
    z0 = np.clip(to_z(x0), zlo, zhi)
    if max_nfev is None:
        max_nfev = max(100, 50 * len(fps))
    covariance, success = None, False
    try:
        # dogbox lands on a bound exactly (a fraction of 0); trf only approaches it.
        sol = least_squares(fun, z0, bounds=(zlo, zhi), method="dogbox" if groups else "trf", x_scale="jac",
                            max_nfev=int(max_nfev), xtol=1e-10, ftol=1e-10, gtol=1e-10)
        success = bool(sol.success)
        message = sol.message
        if sol.cost * 2 <= best["chi2"]:
            best.update(z=np.array(sol.x, float))
        jac = np.asarray(sol.jac, float)
        cov_z = np.linalg.pinv(jac.T @ jac)
        x_at = to_x(best["z"])
        d = np.diag(np.where(logs, x_at, 1.0))
        for idx, share in zip(groups, shares):
            y = x_at[idx]
            total = y.sum()
            if total > 0:
                d[np.ix_(idx, idx)] = share * (np.eye(len(idx)) / total - y[:, None] / total ** 2)
        covariance = d @ cov_z @ d.T
    except _Cancelled:
        message = f"cancelled after {best['n']} model evaluations; returning the best state so far"
    x_best = to_x(best["z"])
    new_scene = scene_from_vector(scene, fps, x_best, check_bounds=False)
    chi2_after = float(comparison.compare(new_scene).total)
    if groups:
        x_best, new_scene, chi2_after = _zero_tiny_weights(x_best, new_scene, chi2_after, groups, fps, scene,
                                                           comparison, fractions, frac_lo, frac_hi)
    values = fractions(x_best)
    values = x_best if values is None else values
    params = [FreeParameter(p.path, float(v), p.unit, p.lo, p.hi, p.prior, p.scale) for p, v in zip(fps, values)]
    return RefineResult(scene=new_scene, chi2_before=chi2_before, chi2_after=chi2_after, covariance=covariance,
                        parameters=params, success=success, message=message, nfev=best["n"])
