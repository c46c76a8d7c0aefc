"""Dust mixtures: the value a ring's ``dust=`` resolves to.

:class:`DustMix` is a frozen, hashable-by-value description of a mixture — mass
fractions of species, a grain size and a shape method — and it is an opacity: it has a
``label`` and ``kappa(wavelength)``. Its κ is the mass-weighted sum of precomputed
library rows (κ_mix = Σ f_s κ_s), interpolated linearly in log λ to the requested
wavelengths, so a new mixture costs tens of microseconds: cheap enough for every slider
move.

Forms accepted by ``dust=`` (through :func:`diskexplorer.physics.opacity.as_opacity`)::

    "forsterite"                                    # one species, default size and shape
    {"olivine_glass": 0.6, "forsterite": 0.4}       # mass fractions, defaults
    {"olivine_glass": 0.6, "forsterite": 0.4, "grain_size": 1.5, "shape": "dhs"}
    {"fractions": {...}, "grain_size": 1.5, "shape": "cde"}
    DustMix({"olivine_glass": 0.6, ("forsterite", 0.1, "cde"): 0.4}, grain_size=1.5)

A fraction's key is a species name (using the mixture's ``grain_size`` and ``shape``) or
a ``(species, grain_size, shape)`` triple for a component of its own size or method.

Mass fractions are fractions: each in [0, 1], summing to 1 within
:data:`FRACTION_SUM_TOLERANCE` (a sum of 0.999 from rounding is rescaled to 1; a
fraction of 5 is refused rather than read as a weight). Relative weights of any scale go
through :meth:`DustMix.from_weights`, which normalises them on purpose.
"""
from __future__ import annotations

import functools
import math
import os
from collections import OrderedDict
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..errors import DustError
from ..physics.opacity import DEFAULT_SUBLIMATION_TEMPERATURE, OpacityPart
from .catalogue import CATALOGUE
from .library import get_library
from .optics import METHODS
from .row_interpolation import end_slopes, interpolate_row
from .species import check_component, known_species, species_row

__all__ = ["DustMix", "DEFAULT_GRAIN_SIZE", "DEFAULT_SHAPE", "FRACTION_SUM_TOLERANCE", "resolve_dust",
           "mixture_kappa", "species_sublimation_temperature"]

#: Defaults used when a mixture or a bare species name gives no size or shape.
DEFAULT_GRAIN_SIZE = 0.1
DEFAULT_SHAPE = "dhs"

#: Largest |Σ f − 1| accepted for mass fractions: room for fractions rounded to three
#: decimals (1/3 written 0.333 three times), far below any intended change of a mixture.
FRACTION_SUM_TOLERANCE = 1e-3

_ROW_CACHE: OrderedDict = OrderedDict()
_ROW_CACHE_SIZE = 512


def _canonical_key(key, where):
    if isinstance(key, str):
        return key
    if isinstance(key, tuple) and len(key) == 3 and isinstance(key[0], str):
        name, size, shape = key
        shape = str(shape).lower()
        if shape not in METHODS:
            raise DustError(f"{where}: component {key!r}: shape {shape!r} not one of {METHODS}")
        if shape == "cde":
            return (name, None, "cde")
        size = float(size)
        if not (math.isfinite(size) and size > 0):
            raise DustError(f"{where}: component {key!r}: grain size must be > 0 µm")
        return (name, round(size, 9), shape)
    raise DustError(f"{where}: fraction key {key!r}: expected a species name or a "
                    "(species, grain_size µm, shape) tuple")


@dataclass(frozen=True)
class DustMix:
    """A dust mixture: mass fractions of species, grain size and shape method.

    Parameters
    ----------
    fractions : mapping or sequence of (key, fraction) pairs
        Mass fractions, each in [0, 1], summing to 1 within
        :data:`FRACTION_SUM_TOLERANCE` (then rescaled to exactly 1). Keys are species
        names, or ``(species, grain_size, shape)`` triples overriding the defaults.
        Zero fractions are dropped; duplicate keys are added. For relative weights of
        another scale use :meth:`from_weights`.
    grain_size : float
        Grain radius in µm for keys without their own (Mie: sphere radius; DHS:
        volume-equivalent radius of the material). Ignored by ``"cde"``.
    shape : {"dhs", "mie", "cde"}
        Grain shape method for keys without their own. ``"cde"`` is the Rayleigh-limit
        CDE: κ independent of size (valid for grains well below ~1 µm in the N band).

    Attributes
    ----------
    fractions : tuple of (key, float)
        Canonical form: sorted, summing to 1, hashable. Two mixtures are equal
        (and hash equal) when these and ``grain_size`` and ``shape`` are.

    Raises
    ------
    DustError
        A fraction that is negative, not finite or above 1, fractions whose sum is not 1
        within :data:`FRACTION_SUM_TOLERANCE` (naming each species and its value), an
        unknown species, an untabulated size or an unknown shape.

    Notes
    -----
    κ_abs,mix(λ) = Σᵢ fᵢ κᵢ(λ) in cm² g⁻¹ (mass-weighted). Between library grid points
    κ is interpolated linearly in log λ; beyond 0.3–100 µm it continues as a power law
    with the slope of the last 10% of the grid (the long-wavelength emissivity law).

    Examples
    --------
    >>> mix = DustMix({"olivine_glass": 0.6, "forsterite": 0.4}, grain_size=1.5)
    >>> mix.kappa([10.0, 11.3])                                   # doctest: +SKIP
    """

    fractions: tuple
    grain_size: float = DEFAULT_GRAIN_SIZE
    shape: str = DEFAULT_SHAPE

    def __post_init__(self):
        shape = str(self.shape).lower()
        if shape not in METHODS:
            raise DustError(f"DustMix.shape = {self.shape!r}: expected one of {METHODS}")
        try:
            size = float(self.grain_size)
        except (TypeError, ValueError):
            raise DustError(f"DustMix.grain_size = {self.grain_size!r}: expected a radius in µm") from None
        if not (math.isfinite(size) and size > 0):
            raise DustError(f"DustMix.grain_size = {self.grain_size!r} µm: expected > 0")
        merged = _merge_fractions(self.fractions, "fraction")
        total = sum(merged.values())
        if not total > 0:
            raise DustError(f"DustMix fractions {_show(merged)}: need at least one positive fraction")
        above = [k for k, v in merged.items() if v > 1.0]
        if above:
            raise DustError(f"DustMix mass fractions {_show(merged)}: "
                            f"{', '.join(_name(k) for k in above)} above 1; each fraction must lie in "
                            "[0, 1] and all must sum to 1 (DustMix.from_weights normalises relative weights)")
        if abs(total - 1.0) > FRACTION_SUM_TOLERANCE:
            raise DustError(f"DustMix mass fractions {_show(merged)} sum to {total:.6g}: expected 1 "
                            f"(within {FRACTION_SUM_TOLERANCE:g}); DustMix.from_weights normalises "
                            "relative weights")
        # Fractions that already sum to 1 (to rounding) are kept as given, so a mixture
        # written out and read back compares equal to the original; a sum a little off
        # (within the tolerance) is rescaled to exactly 1.
        scale = 1.0 if abs(total - 1.0) <= 1e-12 else total
        canon = tuple(sorted(((k, v / scale) for k, v in merged.items() if v > 0), key=lambda kv: repr(kv[0])))
        object.__setattr__(self, "fractions", canon)
        object.__setattr__(self, "grain_size", round(size, 9))
        object.__setattr__(self, "shape", shape)
        # Refuse unknown species and untabulated sizes now, not at the first κ call.
        for (name, csize, cshape), _ in self.components:
            check_component(name, cshape, csize)

    @classmethod
    def from_weights(cls, weights, grain_size=DEFAULT_GRAIN_SIZE, shape=DEFAULT_SHAPE):
        """A mixture from relative mass weights of any positive scale, normalised to sum 1.

        Parameters
        ----------
        weights : mapping or sequence of (key, weight) pairs
            Keys as for :class:`DustMix`; weights finite and ≥ 0, at least one > 0.
        grain_size, shape
            As for :class:`DustMix`.

        Examples
        --------
        >>> DustMix.from_weights({"olivine_glass": 3, "forsterite": 1}).fractions  # doctest: +SKIP
        (('forsterite', 0.25), ('olivine_glass', 0.75))
        """
        merged = _merge_fractions(weights, "weight")
        total = sum(merged.values())
        if not total > 0:
            raise DustError(f"DustMix.from_weights {_show(merged)}: need at least one positive weight")
        return cls({k: v / total for k, v in merged.items()}, grain_size=grain_size, shape=shape)

    # --- views ------------------------------------------------------------------------

    @property
    def components(self):
        """Resolved ``((species, size µm or None, shape), fraction)`` pairs."""
        out = []
        for key, f in self.fractions:
            if isinstance(key, str):
                key = (key, None if self.shape == "cde" else self.grain_size, self.shape)
            out.append((key, f))
        return tuple(out)

    @property
    def label(self):
        """Short text, e.g. ``"60% olivine_glass + 40% forsterite (DHS 1.5 µm)"``."""
        parts = []
        for key, f in self.fractions:
            if isinstance(key, str):
                parts.append(f"{100 * f:.3g}% {key}")
            else:
                what = "CDE" if key[2] == "cde" else f"{key[2].upper()} {key[1]:g} µm"
                parts.append(f"{100 * f:.3g}% {key[0]} ({what})")
        if any(isinstance(k, str) for k, _ in self.fractions):
            common = "CDE" if self.shape == "cde" else f"{self.shape.upper()} {self.grain_size:g} µm"
            return " + ".join(parts) + f" ({common})"
        return " + ".join(parts)

    def as_dict(self):
        """Plain-data form (JSON-friendly) that :func:`resolve_dust` turns back into this."""
        return {"fractions": [[list(k) if isinstance(k, tuple) else k, f] for k, f in self.fractions],
                "grain_size": self.grain_size, "shape": self.shape}

    # --- κ --------------------------------------------------------------------------------

    def kappa_on_grid(self):
        """κ_abs (cm² g⁻¹) on the library grid (:func:`diskexplorer.dust.library_grid`)."""
        return self._grid_row()[0]

    def _grid_row(self):
        hit = _ROW_CACHE.get(self)
        if hit is not None:
            try:
                _ROW_CACHE.move_to_end(self)
            except KeyError:  # evicted by another thread meanwhile; the value is still good
                pass
            return hit
        comps = self.components
        if len(comps) == 1:
            (name, size, shape), _ = comps[0]
            row = species_row(name, shape, size)
        else:
            rows = np.stack([species_row(n, sh, sz) for (n, sz, sh), _ in comps])
            row = np.asarray([f for _, f in comps]) @ rows
        loglam = get_library().log_wavelength
        hit = (row, loglam, end_slopes(loglam, row))
        _ROW_CACHE[self] = hit
        if len(_ROW_CACHE) > _ROW_CACHE_SIZE:
            try:
                _ROW_CACHE.popitem(last=False)
            except KeyError:
                pass
        return hit

    @property
    def wavelength_nodes(self):
        """The library's wavelengths (µm), where κ is tabulated: quadratures over λ use them."""
        return get_library().wavelength

    @property
    def sublimation_temperature(self):
        """Default sublimation temperature (K) of a one-species mixture; ``None`` for several."""
        comps = self.components
        if len(comps) != 1:
            return None
        return species_sublimation_temperature(comps[0][0][0])

    def species_parts(self):
        """The species as :class:`~diskexplorer.physics.opacity.OpacityPart` (name, fraction, κ).

        Each part's opacity is a one-species :class:`DustMix` of that component's size
        and shape; its name is the species name, with size and shape added where the
        mixture holds the species twice.
        """
        return _species_parts(self)

    def kappa(self, wavelength):
        """Mass absorption coefficient κ_abs in cm² g⁻¹ at ``wavelength`` (µm).

        Raises
        ------
        DustError
            Non-positive wavelengths, or wavelengths a user species' data do not cover.
        """
        row, loglam, slopes = self._grid_row()
        return interpolate_row(row, loglam, slopes, wavelength, self.label)


@functools.lru_cache(maxsize=512)
def _species_parts(mix):
    comps = mix.components
    if len(comps) == 1:
        (name, _, _), f = comps[0]
        return (OpacityPart(name, 1.0, mix, species_sublimation_temperature(name)),)
    counts = {}
    for (name, _, _), _ in comps:
        counts[name] = counts.get(name, 0) + 1
    parts = []
    for (name, size, shape), f in comps:
        label = name if counts[name] == 1 else (
            f"{name} (CDE)" if shape == "cde" else f"{name} ({shape.upper()} {size:g} µm)")
        parts.append(OpacityPart(label, f, DustMix({(name, size, shape): 1.0}, grain_size=mix.grain_size,
                                                   shape=mix.shape),
                                 species_sublimation_temperature(name)))
    return tuple(parts)


def species_sublimation_temperature(name):
    """Default sublimation temperature in K of species ``name`` (the catalogue's, else 1500 K)."""
    recipe = CATALOGUE.get(name)
    return DEFAULT_SUBLIMATION_TEMPERATURE if recipe is None else float(recipe.sublimation_temperature)


def _merge_fractions(raw, what):
    """Canonical keys → summed values, each a finite number ≥ 0 (``what`` names them in errors)."""
    items = list(raw.items()) if isinstance(raw, Mapping) else list(raw)
    merged: dict = {}
    for item in items:
        try:
            key, value = item
        except (TypeError, ValueError):
            raise DustError(f"DustMix fractions: entry {item!r} is not a (species, {what}) pair") from None
        key = _canonical_key(key, "DustMix")
        try:
            value = float(value)
        except (TypeError, ValueError):
            raise DustError(f"DustMix {what} of {_name(key)} = {value!r}: expected a number") from None
        if not (math.isfinite(value) and value >= 0):
            raise DustError(f"DustMix {what} of {_name(key)} = {value!r}: expected a finite value ≥ 0")
        merged[key] = merged.get(key, 0.0) + value
    if not merged:
        raise DustError(f"DustMix: no species given; need at least one positive {what}")
    return merged


def _name(key):
    return key if isinstance(key, str) else repr(key)


def _show(merged):
    return "{" + ", ".join(f"{_name(k)}: {v:g}" for k, v in merged.items()) + "}"


def mixture_kappa(fractions, wavelength, grain_size=DEFAULT_GRAIN_SIZE, shape=DEFAULT_SHAPE):
    """κ_abs (cm² g⁻¹) of a mixture at ``wavelength`` (µm); see :class:`DustMix`."""
    return DustMix(fractions, grain_size=grain_size, shape=shape).kappa(wavelength)


_RESERVED = ("grain_size", "shape")


def resolve_dust(spec):
    """Turn a species name or mixture spec into a :class:`DustMix`, or ``None`` to pass.

    Registered with :func:`diskexplorer.physics.opacity.register_opacity_resolver` when
    :mod:`diskexplorer.dust` is imported. Strings that are neither a known species nor
    an existing file are refused here with the list of species (a typo should not read
    as "file not found").
    """
    if isinstance(spec, DustMix):
        return spec
    if isinstance(spec, str):
        if spec in known_species():
            return DustMix({spec: 1.0})
        looks_like_path = os.sep in spec or "/" in spec or os.path.splitext(spec)[1] != ""
        if os.path.exists(spec) or looks_like_path:
            return None
        raise DustError(f"dust {spec!r} is not a known species (known: {', '.join(known_species())}) "
                        "nor an existing κ table file")
    if isinstance(spec, Mapping):
        d = dict(spec)
        if "fractions" in d:
            extra = set(d) - {"fractions", *_RESERVED}
            if extra:
                raise DustError(f"dust mixture: unknown field(s) {sorted(extra)}; expected "
                                "fractions, grain_size, shape")
            fr = d["fractions"]
            if isinstance(fr, list):  # JSON form from DustMix.as_dict
                fr = [(tuple(k) if isinstance(k, list) else k, f) for k, f in fr]
            return DustMix(fr, grain_size=d.get("grain_size", DEFAULT_GRAIN_SIZE),
                           shape=d.get("shape", DEFAULT_SHAPE))
        opts = {k: d.pop(k) for k in _RESERVED if k in d}
        return DustMix(d, **opts)
    return None
