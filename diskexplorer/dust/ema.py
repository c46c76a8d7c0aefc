"""Effective-medium rules: Maxwell Garnett and Bruggeman mixing of dielectric functions.

Used to describe porous grains (material + vacuum) and intimately mixed materials by
one effective dielectric function, which then goes through Mie, CDE or DHS. Volume
fractions, not mass fractions; ε in the ε″ ≥ 0 convention.
"""
from __future__ import annotations

import numpy as np

from ..errors import DustError
from .optical_constants import OpticalConstants

__all__ = ["maxwell_garnett", "bruggeman", "porous", "effective_constants"]


def _fractions(fractions, count):
    f = np.asarray(fractions, dtype=float)
    if f.shape != (count,) or np.any(f < 0) or not np.isfinite(f).all() or f.sum() <= 0:
        raise DustError(f"volume fractions {list(np.atleast_1d(f))!r}: expected {count} values ≥ 0 "
                        "with a positive sum")
    return f / f.sum()


def maxwell_garnett(eps_matrix, eps_inclusion, fraction):
    """Maxwell Garnett effective ε of spherical inclusions in a matrix.

    Parameters
    ----------
    eps_matrix, eps_inclusion : complex or array_like
        Dielectric functions of matrix and inclusions.
    fraction : float
        Volume fraction of inclusions, 0 ≤ f ≤ 1.

    Returns
    -------
    ndarray
        ε_eff = ε_m [ε_i + 2ε_m + 2f(ε_i − ε_m)] / [ε_i + 2ε_m − f(ε_i − ε_m)].

    Notes
    -----
    Asymmetric by construction (the matrix is continuous); exact to first order in f.
    """
    f = float(fraction)
    if not 0.0 <= f <= 1.0:
        raise DustError(f"Maxwell Garnett inclusion fraction {fraction!r}: expected 0 ≤ f ≤ 1")
    em = np.asarray(eps_matrix, dtype=complex)
    ei = np.asarray(eps_inclusion, dtype=complex)
    d = ei - em
    return em * (ei + 2 * em + 2 * f * d) / (ei + 2 * em - f * d)


def bruggeman(eps_list, fractions, tol=1e-12, max_iter=100):
    """Bruggeman effective ε of any number of components.

    Solves Σⱼ fⱼ (εⱼ − ε)/(εⱼ + 2ε) = 0 for ε with Im ε ≥ 0.

    Parameters
    ----------
    eps_list : sequence of complex or array_like
        Dielectric function of each component (arrays broadcast together).
    fractions : sequence of float
        Volume fractions (renormalised to sum 1).
    tol : float
        Relative convergence tolerance of the Newton iteration.

    Returns
    -------
    ndarray
        Effective dielectric function.

    Notes
    -----
    Two components: the closed-form root of the quadratic
    2ε² − bε − ε₁ε₂ = 0, b = (3f₁ − 1)ε₁ + (3f₂ − 1)ε₂, taking the root with the larger
    Im ε (the physical one). More components: Newton iteration started from the
    two-component-like volume average, with the result checked against the equation.
    Symmetric in the components (no host), unlike Maxwell Garnett.
    """
    eps = np.broadcast_arrays(*[np.asarray(e, dtype=complex) for e in eps_list])
    f = _fractions(fractions, len(eps))
    if len(eps) == 1:
        return eps[0].copy()
    if len(eps) == 2:
        e1, e2 = eps
        b = (3 * f[0] - 1) * e1 + (3 * f[1] - 1) * e2
        root = np.sqrt(b * b + 8 * e1 * e2)
        r1 = (b + root) / 4
        r2 = (b - root) / 4
        return np.where(r1.imag >= r2.imag, r1, r2)
    e = sum(fj * ej for fj, ej in zip(f, eps))
    for _ in range(max_iter):
        g = sum(fj * (ej - e) / (ej + 2 * e) for fj, ej in zip(f, eps))
        dg = sum(-3 * fj * ej / (ej + 2 * e) ** 2 for fj, ej in zip(f, eps))
        step = g / dg
        e = e - step
        if np.all(np.abs(step) <= tol * np.abs(e)):
            break
    else:
        raise DustError("Bruggeman mixing did not converge")
    if np.any(e.imag < -1e-10 * np.abs(e)):
        raise DustError("Bruggeman mixing converged to an unphysical root (Im ε < 0)")
    return e


def porous(eps, porosity, rule="bruggeman"):
    """Effective ε of a material with vacuum pores of volume fraction ``porosity``.

    ``rule`` is ``"bruggeman"`` or ``"maxwell_garnett"`` (material as matrix, vacuum
    inclusions).
    """
    p = float(porosity)
    if not 0.0 <= p < 1.0:
        raise DustError(f"porosity {porosity!r}: expected 0 ≤ p < 1")
    if rule == "bruggeman":
        return bruggeman([eps, 1.0 + 0j], [1 - p, p])
    if rule == "maxwell_garnett":
        return maxwell_garnett(eps, 1.0 + 0j, p)
    raise DustError(f"mixing rule {rule!r}: expected 'bruggeman' or 'maxwell_garnett'")


def effective_constants(components, fractions, rule="bruggeman", name=None):
    """Optical constants of a porous or intimately mixed material.

    Parameters
    ----------
    components : sequence of OpticalConstants or "vacuum"
        The constituents; ``"vacuum"`` (ε = 1) makes pores.
    fractions : sequence of float
        Volume fractions (renormalised to sum 1).
    rule : {"bruggeman", "maxwell_garnett"}
        Mixing rule; Maxwell Garnett takes the first component as the matrix and
        accepts exactly two components.
    name : str, optional
        Name of the result.

    Returns
    -------
    OpticalConstants
        On the union of the components' wavelengths inside their common range, with
        the mixing recorded in ``notes``; feed it to :func:`~diskexplorer.dust.kappa_abs`
        or :func:`~diskexplorer.dust.register_species` (with the mixture's density,
        Σ fᵢ ρᵢ).

    Examples
    --------
    >>> porous_olivine = effective_constants([olivine, "vacuum"], [0.7, 0.3])  # doctest: +SKIP
    """
    comps = list(components)
    f = _fractions(fractions, len(comps))
    real = [c for c in comps if isinstance(c, OpticalConstants)]
    if not real or any(not isinstance(c, OpticalConstants) and c != "vacuum" for c in comps):
        raise DustError("effective_constants: components must be OpticalConstants or 'vacuum', "
                        "with at least one material")
    lo = max(c.wavelength_range[0] for c in real)
    hi = min(c.wavelength_range[1] for c in real)
    if lo >= hi:
        raise DustError("effective_constants: the components' wavelength ranges do not overlap")
    lam = np.unique(np.concatenate([c.wavelength for c in real] + [np.array([lo, hi])]))
    lam = lam[(lam >= lo) & (lam <= hi)]
    eps = [np.ones(lam.shape, dtype=complex) if isinstance(c, str) else c.epsilon(lam) for c in comps]
    if rule == "bruggeman":
        e = bruggeman(eps, f)
    elif rule == "maxwell_garnett":
        if len(comps) != 2:
            raise DustError("Maxwell Garnett mixing takes two components (matrix, inclusion)")
        e = maxwell_garnett(eps[0], eps[1], f[1])
    else:
        raise DustError(f"mixing rule {rule!r}: expected 'bruggeman' or 'maxwell_garnett'")
    m = np.sqrt(e)  # principal root: Im m ≥ 0 when Im ε ≥ 0
    parts = ", ".join(f"{fi:.3g} {c if isinstance(c, str) else c.name}" for c, fi in zip(comps, f))
    note = f"{rule} effective medium of {parts} (volume fractions)"
    return OpticalConstants(lam, m.real, np.maximum(m.imag, 0.0), name=name or "mixture",
                            source="; ".join(c.source for c in real),
                            notes=tuple(n for c in real for n in c.notes) + (note,))
