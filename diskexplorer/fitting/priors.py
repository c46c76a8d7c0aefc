"""Priors of free parameters: uniform, log-uniform, (bounded) normal and Dirichlet.

A prior is always read together with the parameter's bounds [lo, hi]: every prior is
zero outside them, so a normal prior is a normal truncated to the bounds.

Mass fractions (``rings.<k>.dust.<component>``) take a Dirichlet prior, and only that:
each free fraction of a ring carries its concentration α_i (default 1), and the free
fractions of the ring together have the density Dirichlet(α) on their simplex (all α = 1:
flat). :func:`~diskexplorer.fitting.vector.log_prior` forms that joint density; a lone
:class:`Prior` of kind ``"dirichlet"`` only holds its α.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import SeedError

__all__ = ["Prior", "PRIOR_KINDS", "FRACTION_PRIOR", "as_prior", "default_prior", "is_fraction_spec",
           "check_prior_kind"]

#: Kinds of prior a starting point can hold.
PRIOR_KINDS = ("uniform", "log-uniform", "normal", "dirichlet")
#: The prior kind of mass fractions (the only one they take).
FRACTION_PRIOR = "dirichlet"


@dataclass(frozen=True)
class Prior:
    """A prior density of one parameter within its bounds.

    Parameters
    ----------
    kind : {"uniform", "log-uniform", "normal", "dirichlet"}
        ``uniform``: constant density in x; ``log-uniform``: constant in ln x (needs
        lo > 0); ``normal``: exp(−(x − mean)² / (2 sigma²)); ``dirichlet``: the mass
        fraction's share of its ring's Dirichlet prior (mass fractions only).
    mean, sigma : float, optional
        Centre and width of a normal prior, in the parameter's unit (sigma > 0).
    concentration : float, optional
        α > 0 of a Dirichlet prior (default 1: flat).

    Notes
    -----
    :meth:`log_density` is unnormalised (a constant offset does not matter to a
    sampler): 0 for uniform, −ln x for log-uniform, −(x − mean)²/(2 sigma²) for normal,
    and −inf outside [lo, hi].
    """

    kind: str = "uniform"
    mean: float | None = None
    sigma: float | None = None
    concentration: float | None = None

    def __post_init__(self):
        if self.kind not in PRIOR_KINDS:
            raise SeedError(f"prior kind {self.kind!r}: expected one of {', '.join(PRIOR_KINDS)}")
        if self.kind == FRACTION_PRIOR:
            alpha = 1.0 if self.concentration is None else self.concentration
            try:
                alpha = float(alpha)
            except (TypeError, ValueError):
                raise SeedError(f"dirichlet prior: concentration {self.concentration!r}; expected a number > 0") from None
            if not (math.isfinite(alpha) and alpha > 0):
                raise SeedError(f"dirichlet prior: concentration {self.concentration!r}; expected a finite "
                                "number > 0 (1: flat)")
            if self.mean is not None or self.sigma is not None:
                raise SeedError("a dirichlet prior takes a concentration, no mean or sigma")
            object.__setattr__(self, "concentration", alpha)
            return
        if self.concentration is not None:
            raise SeedError(f"a {self.kind} prior takes no concentration (only a dirichlet prior does)")
        if self.kind == "normal":
            if self.mean is None or self.sigma is None:
                raise SeedError("a normal prior needs a mean and a sigma")
            if not (math.isfinite(self.mean) and math.isfinite(self.sigma) and self.sigma > 0):
                raise SeedError(f"normal prior: mean = {self.mean!r}, sigma = {self.sigma!r}; "
                                "expected finite numbers with sigma > 0")
        elif self.mean is not None or self.sigma is not None:
            raise SeedError(f"a {self.kind} prior takes no mean or sigma")

    def check_bounds(self, lo, hi, where=""):
        """Raise SeedError if this prior cannot live on [lo, hi]."""
        if self.kind == "log-uniform" and not lo > 0:
            raise SeedError(f"{where}log-uniform prior needs a positive lower bound, got {lo:g}")

    def log_density(self, x, lo, hi):
        """Unnormalised ln p(x) on [lo, hi]; −inf outside (see Notes).

        For a Dirichlet prior ``x`` is the fraction's share of its ring's free fractions
        and the value is its factor (α − 1) ln x of the joint density.
        """
        if not (lo <= x <= hi) or not math.isfinite(x):
            return -math.inf
        if self.kind == "uniform":
            return 0.0
        if self.kind == FRACTION_PRIOR:
            if self.concentration == 1.0:
                return 0.0
            if x <= 0:
                return math.inf if self.concentration < 1 else -math.inf
            return (self.concentration - 1.0) * math.log(x)
        if self.kind == "log-uniform":
            return -math.log(x)
        z = (x - self.mean) / self.sigma
        return -0.5 * z * z

    def as_dict(self):
        """JSON form: ``{"kind": ...}`` plus ``mean`` and ``sigma`` for a normal prior."""
        out = {"kind": self.kind}
        if self.kind == "normal":
            out.update(mean=self.mean, sigma=self.sigma)
        if self.kind == FRACTION_PRIOR:
            out.update(concentration=self.concentration)
        return out


def is_fraction_spec(spec):
    """Whether ``spec`` declares a mass fraction (whose prior is always Dirichlet)."""
    return spec.name == "mass_fraction"


def check_prior_kind(spec, prior, where=""):
    """Raise SeedError unless ``prior`` suits ``spec``: Dirichlet for mass fractions and only there."""
    if is_fraction_spec(spec) and prior.kind != FRACTION_PRIOR:
        raise SeedError(f"{where}a mass fraction takes a dirichlet prior (kind 'dirichlet', concentration "
                        f"α > 0; 1 is flat), not {prior.kind!r}: the fractions of a ring share one Dirichlet prior")
    if not is_fraction_spec(spec) and prior.kind == FRACTION_PRIOR:
        raise SeedError(f"{where}a dirichlet prior is for mass fractions (rings.<k>.dust.<component>) only")


def default_prior(spec, lo):
    """Dirichlet (α = 1, flat) for mass fractions; log-uniform for parameters declared on a
    log scale with lo > 0; else uniform."""
    if is_fraction_spec(spec):
        return Prior(FRACTION_PRIOR, concentration=1.0)
    return Prior("log-uniform") if spec.scale == "log" and lo > 0 else Prior("uniform")


def as_prior(value):
    """A :class:`Prior` from a Prior, a kind name, a dict or a ``("normal", mean, sigma)`` tuple."""
    if isinstance(value, Prior):
        return value
    if isinstance(value, str):
        return Prior(value)
    if isinstance(value, dict):
        d = dict(value)
        kind = d.pop("kind", None)
        if kind is None:
            raise SeedError(f"prior {value!r}: missing field 'kind'")
        extra = set(d) - {"mean", "sigma", "concentration"}
        if extra:
            raise SeedError(f"prior {value!r}: unknown field(s) {sorted(extra)}")
        return Prior(kind, d.get("mean"), d.get("sigma"), d.get("concentration"))
    if isinstance(value, (tuple, list)) and value and value[0] == "normal" and len(value) == 3:
        return Prior("normal", float(value[1]), float(value[2]))
    if isinstance(value, (tuple, list)) and value and value[0] == FRACTION_PRIOR and len(value) == 2:
        return Prior(FRACTION_PRIOR, concentration=value[1])
    raise SeedError(f"prior {value!r}: expected 'uniform', 'log-uniform', ('normal', mean, sigma), "
                    "('dirichlet', concentration) or a dict with 'kind'")
