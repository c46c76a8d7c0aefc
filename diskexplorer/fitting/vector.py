"""Free parameters as a flat vector: scene ↔ vector, bounds, priors, initial walkers.

A fit sees the free parameters of a scene as a vector ``x`` (each entry in its
parameter's declared unit: au, K, deg, …; never log-transformed here). These functions
map between scenes and such vectors; they return new scenes and never modify inputs.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ParameterError, SeedError
from .paths import canonical_path, get_value, set_values, spec_for
from .priors import Prior, as_prior, default_prior

__all__ = ["FreeParameter", "default_bounds", "validate_bounds", "resolve_limits", "free_parameters", "vector_from_scene",
           "scene_from_vector", "log_prior", "initial_walkers", "in_bounds"]


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
    return out


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


def in_bounds(free, x):
    """Whether every entry of ``x`` lies within its FreeParameter's bounds."""
    return all(f.contains(v) for f, v in zip(free, np.asarray(x, float)))


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
    """
    x = np.asarray(x, dtype=float).ravel()
    paths = _paths(free)
    if x.size != len(paths):
        raise ParameterError(f"scene_from_vector: got {x.size} values for {len(paths)} free parameters")
    if check_bounds:
        for f, v in zip(free, x):
            if isinstance(f, FreeParameter) and not f.contains(v):
                unit = f" {f.unit}" if f.unit else ""
                raise ParameterError(f"{f.path}: value {v:g}{unit} is outside its bounds "
                                     f"{f.describe_bounds()}")
    return set_values(scene, dict(zip(paths, x.tolist())))


def log_prior(free, x):
    """Sum of the free parameters' unnormalised log prior densities at ``x`` (−inf outside bounds)."""
    total = 0.0
    for f, v in zip(free, np.asarray(x, float)):
        total += f.prior.log_density(float(v), f.lo, f.hi)
        if total == -math.inf:
            break
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
        Every row within the bounds and accepted by the model (e.g. r_in < r_out).

    Raises
    ------
    ParameterError
        If no valid position is found near the current state.
    """
    rng = np.random.default_rng(seed)
    centre = vector_from_scene(scene, free)
    lo = np.array([f.lo for f in free])
    hi = np.array([f.hi for f in free])
    logs = np.array([f.log_scaled for f in free], dtype=bool)
    out = np.empty((int(n), centre.size))
    for w in range(int(n)):
        for _ in range(max_tries):
            step = rng.normal(0.0, spread, centre.size)
            x = np.where(logs, centre * np.exp(step), centre + step * (hi - lo))
            x = np.clip(x, lo, hi)
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
