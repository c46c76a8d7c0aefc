"""The log-probability of free parameters: priors plus −χ²/2 from a Comparison."""
from __future__ import annotations

import math

from ..errors import ParameterError
from .vector import log_prior, scene_from_vector

__all__ = ["make_log_probability"]


def make_log_probability(scene, free, comparison):
    """Build ``log_probability(x)`` for an ensemble sampler or an optimiser.

    Parameters
    ----------
    scene : Scene
        The scene whose fixed parameters and settings are kept.
    free : sequence of FreeParameter
        Free parameters; ``x`` holds their values in declared units.
    comparison : Comparison
        The data; its weighted total χ² enters the likelihood.

    Returns
    -------
    callable
        ``log_probability(x) -> float``: Σ ln prior(x_i) − χ²(x)/2, and −inf outside
        the bounds or where the model refuses the parameters (r_in ≥ r_out, …).

    Notes
    -----
    ln p(x | data) = Σ_i ln π_i(x_i) − ½ Σ_kinds w_k χ²_k + const, with χ²_k the sum of
    squared normalised residuals of data kind k.
    """
    free = list(free)

    def log_probability(x):
        lp = log_prior(free, x)
        if not math.isfinite(lp):
            return -math.inf
        try:
            trial = scene_from_vector(scene, free, x)
        except ParameterError:
            return -math.inf
        chi2 = comparison.compare(trial).total
        if not math.isfinite(chi2):
            return -math.inf
        return lp - 0.5 * chi2

    return log_probability
