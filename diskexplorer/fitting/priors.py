"""Priors of free parameters: uniform, log-uniform and (bounded) normal.

A prior is always read together with the parameter's bounds [lo, hi]: every prior is
zero outside them, so a normal prior is a normal truncated to the bounds.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import SeedError

__all__ = ["Prior", "PRIOR_KINDS", "as_prior", "default_prior"]

#: Kinds of prior a starting point can hold.
PRIOR_KINDS = ("uniform", "log-uniform", "normal")


@dataclass(frozen=True)
class Prior:
    """A prior density of one parameter within its bounds.

    Parameters
    ----------
    kind : {"uniform", "log-uniform", "normal"}
        ``uniform``: constant density in x; ``log-uniform``: constant in ln x (needs
        lo > 0); ``normal``: exp(−(x − mean)² / (2 sigma²)).
    mean, sigma : float, optional
        Centre and width of a normal prior, in the parameter's unit (sigma > 0).

    Notes
    -----
    :meth:`log_density` is unnormalised (a constant offset does not matter to a
    sampler): 0 for uniform, −ln x for log-uniform, −(x − mean)²/(2 sigma²) for normal,
    and −inf outside [lo, hi].
    """

    kind: str = "uniform"
    mean: float | None = None
    sigma: float | None = None

    def __post_init__(self):
        if self.kind not in PRIOR_KINDS:
            raise SeedError(f"prior kind {self.kind!r}: expected one of {', '.join(PRIOR_KINDS)}")
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
        """Unnormalised ln p(x) on [lo, hi]; −inf outside (see Notes)."""
        if not (lo <= x <= hi) or not math.isfinite(x):
            return -math.inf
        if self.kind == "uniform":
            return 0.0
        if self.kind == "log-uniform":
            return -math.log(x)
        z = (x - self.mean) / self.sigma
        return -0.5 * z * z

    def as_dict(self):
        """JSON form: ``{"kind": ...}`` plus ``mean`` and ``sigma`` for a normal prior."""
        out = {"kind": self.kind}
        if self.kind == "normal":
            out.update(mean=self.mean, sigma=self.sigma)
        return out


def default_prior(spec, lo):
    """Log-uniform for parameters declared on a log scale with lo > 0, else uniform."""
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
        extra = set(d) - {"mean", "sigma"}
        if extra:
            raise SeedError(f"prior {value!r}: unknown field(s) {sorted(extra)}")
        return Prior(kind, d.get("mean"), d.get("sigma"))
    if isinstance(value, (tuple, list)) and value and value[0] == "normal" and len(value) == 3:
        return Prior("normal", float(value[1]), float(value[2]))
    raise SeedError(f"prior {value!r}: expected 'uniform', 'log-uniform', ('normal', mean, sigma) "
                    "or a dict with 'kind'")
