"""Free parameters as a flat vector: scene ↔ vector, bounds, priors, initial walkers.

A fit sees the free parameters of a scene as a vector ``x`` (each entry in its
parameter's declared unit: au, K, deg, …; never log-transformed here). These functions
map between scenes and such vectors; they return new scenes and never modify inputs.

Mass fractions and the simplex
------------------------------
The free mass fractions of a ring (``rings.<k>.dust.<component>``) move together on a
simplex: the fractions of a ring sum to 1, so its free fractions sum to
S = 1 − Σ (its fixed fractions). In ``x`` each free fraction is an entry of its own, a
*weight* w_i ≥ 0, and the ring's fractions are the renormalised weights

    f_i = S · w_i / Σ_j w_j        (j over the ring's free fractions),

so every vector with Σ w > 0 maps to a valid mixture (:func:`scene_from_vector`).
:func:`vector_from_scene` gives w_i = f_i (Σ w = S). A ring needs at least two free
fractions (one alone could not move: :func:`free_parameters` refuses it).

Prior (:func:`log_prior`): the ring's free fractions share one Dirichlet prior with the
concentrations α_i of their entries (default 1: flat on the simplex). On the weights the
density is

    p(w) ∝ Π_i (w_i / s)^(α_i − 1)    on  w_i ≥ 0, 0 < s = Σ w ≤ 1,

under which g = w/s is Dirichlet(α) and the scale s (which no likelihood sees) is
Beta(n, 1), independent of g: write w = s g, then dw = s^(n−1) ds dg. So a sampler
given ``log_probability(x)`` draws f/S ~ Dirichlet(α), truncated to each fraction's
bounds (bounds apply to the fractions f, not to the weights). Refinement keeps the sum
its own way (:mod:`~diskexplorer.fitting.refine`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ParameterError, SeedError
from .paths import canonical_path, fraction_components, fraction_ring, get_value, set_values, spec_for
from .priors import Prior, as_prior, check_prior_kind, default_prior

__all__ = ["FreeParameter", "default_bounds", "validate_bounds", "resolve_limits", "free_parameters", "vector_from_scene",
           "scene_from_vector", "log_prior", "initial_walkers", "in_bounds", "fraction_groups",
           "check_fraction_groups", "fractions_from_weights"]


@dataclass(frozen=True)
class FreeParameter:
    """One free parameter of a fit.

    Attributes
    ----------
    path : str
        Canonical parameter path (see :mod:`diskexplorer.fitting.paths`).
    value : float
        Current value, in ``unit``.
    unit : str
        The parameter's declared unit (astropy string; "" when dimensionless).
    lo, hi : float
        Bounds, in ``unit``; lo < hi.
    prior : Prior
        Prior density on [lo, hi].
    scale : {"linear", "log"}
        How refinement steps this parameter (log: in ln x; needs lo > 0).
    """

    path: str
    value: float
    unit: str
    lo: float
    hi: float
    prior: Prior = field(default_factory=Prior)
    scale: str = "linear"

    @property
    def log_scaled(self) -> bool:
        """Whether the parameter is stepped in ln x (declared log scale and lo > 0)."""
        return self.scale == "log" and self.lo > 0

    def contains(self, x) -> bool:
        """lo ≤ x ≤ hi."""
        return bool(self.lo <= x <= self.hi)

    def describe_bounds(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        return f"[{self.lo:g}, {self.hi:g}]{unit}"


def default_bounds(spec, value):
    """Default fit bounds of a parameter: its declared ``bounds``, widened to hold ``value``.

    Parameters
    ----------
    spec : ParameterSpec
    value : float
        Current value in the declared unit.

    Returns
    -------
    (float, float)
        So that an exported document always validates, the declared bounds are widened
        to include the current value when it lies outside them (still within ``valid``).
    """
    lo, hi = spec.bounds
    return (min(lo, value), max(hi, value))


def validate_bounds(spec, lo, hi, where):
    """Raise SeedError unless lo < hi and both lie in the declared valid range."""
    unit = f" {spec.unit}" if spec.unit else ""
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise SeedError(f"{where}: bounds [{lo:g}, {hi:g}]{unit} must be finite with lower < upper")
    vlo, vhi = spec.valid
    lo_ok = lo >= vlo if spec.closed[0] else lo > vlo
    hi_ok = hi <= vhi if spec.closed[1] else hi < vhi
    if not (lo_ok and hi_ok):
        raise SeedError(f"{where}: bounds [{lo:g}, {hi:g}]{unit} leave the physically allowed range "
                        f"{spec.describe_range()}")


def resolve_limits(spec, value, bounds=None, prior=None, path="", check=True):
    """The bounds and prior of one parameter: the ones given, else the declared defaults.

    The one rule that starting-point documents, free-parameter lists and the explorer's
    starting-point page share.

    Parameters
    ----------
    spec : ParameterSpec
    value : float
        The current value, in the declared unit.
    bounds : (float, float), optional
        Given bounds in the declared unit. Default: the declared bounds widened to hold
        ``value`` (:func:`default_bounds`).
    prior : prior, optional
        Anything :func:`~diskexplorer.fitting.priors.as_prior` reads. Default: log-uniform
        for parameters declared on a log scale, else uniform, on the bounds.
    path : str
        For messages.
    check : bool
        Refuse bounds outside the valid range, a value outside the bounds and a prior that
        does not fit them (documents); False only resolves (a page showing a set-up).

    Returns
    -------
    (float, float, Prior)

    Raises
    ------
    SeedError
        With ``check``, as listed above.
    """
    if bounds is not None:
        lo, hi = (float(b) for b in bounds)
    else:
        lo, hi = default_bounds(spec, value)
    if check:
        validate_bounds(spec, lo, hi, path)
        if not lo <= value <= hi:
            unit = f" {spec.unit}" if spec.unit else ""
            raise SeedError(f"{path}: value {value:g}{unit} is outside its bounds [{lo:g}, {hi:g}]{unit}")
    if prior is not None:
        try:
            prior = as_prior(prior)
            check_prior_kind(spec, prior, f"{path}: ")
        except SeedError:
            if check:
                raise
            prior = None   # shown as the default; the document built from it says what is wrong
    if prior is None:
        prior = default_prior(spec, lo)
    if check:
        prior.check_bounds(lo, hi, f"{path}: ")
    return lo, hi, prior


def free_parameters(scene, free, bounds=None, priors=None):
    """Describe the free parameters of a fit of ``scene``.

    Parameters
    ----------
    scene : Scene
    free : sequence of str or FreeParameter
        Parameter paths (``rings[inner].t_in`` accepted); FreeParameter entries are kept
        but their value is refreshed from ``scene``.
    bounds : mapping of str to (float, float), optional
        Path → (lo, hi) in the parameter's declared unit; default :func:`default_bounds`.
    priors : mapping of str to prior, optional
        Path → :class:`Prior`, kind name, dict or ``("normal", mean, sigma)``; default
        log-uniform for log-scaled parameters, uniform otherwise.

    Returns
    -------
    list of FreeParameter

    Raises
    ------
    SeedError
        Unknown or repeated paths, bad bounds, a current value outside the bounds, a
        prior that does not fit its bounds.
    """
    bounds = {canonical_path(scene, k): v for k, v in (bounds or {}).items()}
    priors = {canonical_path(scene, k): v for k, v in (priors or {}).items()}
    out, seen = [], set()
    for item in free:
        given = item if isinstance(item, FreeParameter) else None
        path = canonical_path(scene, given.path if given else item)
        if path in seen:
            raise SeedError(f"{path}: listed twice among the free parameters")
        seen.add(path)
        _check_used(scene, path)
        spec = spec_for(path)
        value = get_value(scene, path)
        given_bounds = bounds.get(path, (given.lo, given.hi) if given is not None else None)
        given_prior = priors.get(path, given.prior if given is not None else None)
        lo, hi, prior = resolve_limits(spec, value, given_bounds, given_prior, path)
        out.append(FreeParameter(path, value, spec.unit, lo, hi, prior, spec.scale))
    unused = (set(bounds) | set(priors)) - seen
    if unused:
        raise SeedError(f"bounds or priors given for parameter(s) that are not free: "
                        f"{', '.join(sorted(unused))}")
    check_fraction_groups(out)
    return out


def fraction_groups(free):
    """Ring number → indices into ``free`` of that ring's free mass fractions (in order)."""
    groups = {}
    for i, f in enumerate(_paths(free)):
        k = fraction_ring(f)
        if k is not None:
            groups.setdefault(k, []).append(i)
    return groups


def check_fraction_groups(free):
    """Refuse a ring with a single free mass fraction (it could not move: the fractions sum to 1).

    Raises
    ------
    SeedError
        Naming the fraction and the ring.
    """
    paths = _paths(free)
    for k, idx in fraction_groups(free).items():
        if len(idx) == 1:
            raise SeedError(f"{paths[idx[0]]}: the only free mass fraction of ring {k}; the fractions of a ring "
                            "sum to 1, so a free fraction needs at least one other free fraction of its ring to "
                            "trade with (free another, or fix this one)")


def _free_sum(scene, free, idx):
    """S: the part of ring k's dust that its free fractions share (1 − its fixed fractions)."""
    paths = _paths(free)
    k = fraction_ring(paths[idx[0]])
    held = {p for p in (paths[i] for i in idx)}
    fixed = sum(f for path, _, f in fraction_components(scene.rings[k], k) if path not in held)
    # Components without paths (species names that are not identifiers) are fixed too.
    total = sum(f for _, f in scene.rings[k].dust.fractions)
    unnamed = total - sum(f for _, _, f in fraction_components(scene.rings[k], k))
    return max(0.0, 1.0 - fixed - unnamed)


def fractions_from_weights(weights, share):
    """The fractions S·w/Σw of one ring's free fractions from their weights.

    Parameters
    ----------
    weights : array_like
        w_i ≥ 0 with Σ w > 0.
    share : float
        S, the part of the ring's dust its free fractions share.

    Raises
    ------
    ParameterError
        Negative or non-finite weights, or all zero.
    """
    w = np.asarray(weights, dtype=float)
    total = float(np.sum(w))
    if not (np.all(np.isfinite(w)) and np.all(w >= 0) and total > 0):
        raise ParameterError(f"mass-fraction weights {w.tolist()}: expected finite values ≥ 0, not all 0")
    return share * w / total

# Parameters an equilibrium ring keeps but does not use: freeing them would give a fit a
# direction in which χ² is flat. (Its temperature mode and inner-edge choice are settings,
# never free; its species' sublimation temperatures are parameters.)
_UNUSED_BY_EQUILIBRIUM = ("t_in", "q")


def _check_used(scene, path):
    parts = path.split(".")
    if len(parts) != 3 or parts[0] != "rings":
        return
    ring = scene.rings[int(parts[1])]
    if ring.is_equilibrium and parts[2] in _UNUSED_BY_EQUILIBRIUM:
        raise SeedError(f"{path}: ring {ring.name!r} takes its temperatures from radiative equilibrium, "
                        f"so {parts[2]} is unused and cannot be free (free its species' sublimation "
                        "temperatures, rings.<k>.sublimation.<species>, instead)")
    if ring.inner_edge == "sublimation" and parts[2] == "r_in":
        raise SeedError(f"{path}: ring {ring.name!r} has its inner edge at the sublimation front, "
                        "so r_in is unused and cannot be free")


def _paths(free):
    return [f.path if isinstance(f, FreeParameter) else f for f in free]


def vector_from_scene(scene, free):
    """The values of the free parameters of ``scene`` as a float array (declared units).

    Parameters
    ----------
    scene : Scene
    free : sequence of FreeParameter or canonical path strings

    Returns
    -------
    ndarray, shape (n_free,)
    """
    return np.array([get_value(scene, p) for p in _paths(free)], dtype=float)


def _normalised(free, x):
    """``x`` with each ring's fraction weights replaced by their fractions (S from the
    FreeParameter values: they sum to S); None where weights cannot be normalised."""
    values = np.asarray(x, float).copy()
    for idx in fraction_groups(free).values():
        share = sum(free[i].value for i in idx)
        try:
            values[idx] = fractions_from_weights(values[idx], share)
        except ParameterError:
            return None
    return values


def in_bounds(free, x):
    """Whether every entry of ``x`` lies within its FreeParameter's bounds (fractions once normalised)."""
    values = _normalised(free, x)
    return values is not None and all(f.contains(v) for f, v in zip(free, values))


def scene_from_vector(scene, free, x, check_bounds=True):
    """A new scene with the free parameters set to ``x``; ``scene`` is unchanged.

    Parameters
    ----------
    scene : Scene
    free : sequence of FreeParameter or canonical path strings
    x : array_like, shape (n_free,)
        Values in the declared units.
    check_bounds : bool
        Refuse values outside the FreeParameter bounds (paths carry none).

    Returns
    -------
    Scene

    Raises
    ------
    ParameterError
        A value outside its bounds, or a scene the model refuses (r_in ≥ r_out,
        modulation amplitude > 1, a value outside the physically valid range).

    Notes
    -----
    Entries of mass fractions are weights: a ring's free fractions become
    S·w/Σw (module docstring); the bounds of a fraction apply to the fraction.
    """
    x = np.asarray(x, dtype=float).ravel()
    paths = _paths(free)
    if x.size != len(paths):
        raise ParameterError(f"scene_from_vector: got {x.size} values for {len(paths)} free parameters")
    values = x.copy()
    for idx in fraction_groups(free).values():
        values[idx] = fractions_from_weights(x[idx], _free_sum(scene, free, idx))
    if check_bounds:
        for f, v in zip(free, values):
            if isinstance(f, FreeParameter) and not f.contains(v):
                unit = f" {f.unit}" if f.unit else ""
                raise ParameterError(f"{f.path}: value {v:g}{unit} is outside its bounds "
                                     f"{f.describe_bounds()}")
    return set_values(scene, dict(zip(paths, values.tolist())))


def log_prior(free, x):
    """Sum of the free parameters' unnormalised log prior densities at ``x`` (−inf outside bounds).

    Mass fractions: each ring's free fractions add the log density of their Dirichlet
    prior on the weights, Σ_i (α_i − 1) ln(w_i / s) on w ≥ 0, 0 < s = Σ w ≤ 1, and −inf
    where a fraction S·w_i/s leaves its bounds (module docstring).
    """
    x = np.asarray(x, float)
    groups = fraction_groups(free)
    in_group = {i for idx in groups.values() for i in idx}
    total = 0.0
    for i, (f, v) in enumerate(zip(free, x)):
        if i in in_group:
            continue
        total += f.prior.log_density(float(v), f.lo, f.hi)
        if total == -math.inf:
            return total
    for idx in groups.values():
        w = x[idx]
        s = float(np.sum(w))
        if not (np.all(np.isfinite(w)) and np.all(w >= 0) and 0 < s <= 1):
            return -math.inf
        share = sum(free[i].value for i in idx)
        for i, wi in zip(idx, w):
            f = free[i]
            if not f.contains(share * wi / s):
                return -math.inf
            total += f.prior.log_density(wi / s, 0.0, 1.0)
            if total == -math.inf:
                return total
    return total


def initial_walkers(scene, free, n, seed=None, spread=1e-3, max_tries=1000):
    """An initial ensemble in a small ball around the current values, inside the bounds.

    Parameters
    ----------
    scene : Scene
        The current state (its free values are the centre of the ball).
    free : sequence of FreeParameter
    n : int
        Number of walkers.
    seed : int or numpy.random.Generator, optional
    spread : float
        Relative width: log-scaled parameters get ln x + N(0, spread), linear ones
        x + N(0, spread·(hi − lo)).
    max_tries : int
        Redraws per walker before giving up on a valid position.

    Returns
    -------
    ndarray, shape (n, n_free)
        Every row within the bounds, of finite prior density and accepted by the model
        (e.g. r_in < r_out). Mass-fraction weights step linearly on [0, 1].

    Raises
    ------
    ParameterError
        If no valid position is found near the current state.
    """
    rng = np.random.default_rng(seed)
    centre = vector_from_scene(scene, free)
    lo = np.array([f.lo for f in free])
    hi = np.array([f.hi for f in free])
    for idx in fraction_groups(free).values():
        # Weights, not fractions: their own range (module docstring).
        lo[idx], hi[idx] = 0.0, 1.0
    logs = np.array([f.log_scaled for f in free], dtype=bool)
    out = np.empty((int(n), centre.size))
    for w in range(int(n)):
        for _ in range(max_tries):
            step = rng.normal(0.0, spread, centre.size)
            x = np.where(logs, centre * np.exp(step), centre + step * (hi - lo))
            x = np.clip(x, lo, hi)
            if not math.isfinite(log_prior(free, x)):
                continue
            try:
                scene_from_vector(scene, free, x)
            except ParameterError:
                continue
            out[w] = x
            break
        else:
            raise ParameterError(f"initial_walkers: no valid position found near the current state "
                                 f"after {max_tries} tries (check bounds and r_in < r_out)")
    return out
