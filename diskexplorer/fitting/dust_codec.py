"""Dust of a ring ↔ its entry in a starting-point document.

Forms (``"kind"`` tells them apart; ``null`` is an optically thick ring)::

    {"kind": "mixture", "grain_size": {"value": 1.5, "unit": "um"}, "shape": "dhs",
     "components": [{"species": "olivine_glass", "fraction": 0.6},
                    {"species": "forsterite", "fraction": 0.4,
                     "grain_size": {"value": 0.1, "unit": "um"}, "shape": "cde"}]}
    {"kind": "power_law", "kappa_ref": {"value": 1000.0, "unit": "cm2 / g"},
     "wavelength_ref": {"value": 10.0, "unit": "um"}, "beta": 1.0}
    {"kind": "kappa_table", "path": "tables/kappa.txt", "label": "kappa.txt"}
    {"kind": "kappa_table", "label": "κ table", "wavelength": [...], "kappa": [...]}

A κ table read from a file is stored by path; one built in memory is stored inline
(wavelength in µm, κ in cm² g⁻¹). Mixture components carry their own ``grain_size`` and
``shape`` only when they differ from the mixture's.
"""
from __future__ import annotations

import math
import os

from ..dust.mixture import DustMix
from ..dust.species import known_species
from ..errors import DustError, SeedError
from ..physics.opacity import KappaTable, PowerLawOpacity
from .quantities import quantity, to_internal

__all__ = ["DUST_KINDS", "dust_to_document", "dust_from_document"]

#: Values of ``"kind"`` in a dust entry.
DUST_KINDS = ("mixture", "power_law", "kappa_table")


def dust_to_document(dust, where="dust"):
    """The document entry of a ring's dust (see module docstring).

    Raises
    ------
    SeedError
        For an opacity object of a kind the document cannot describe.
    """
    if dust is None:
        return None
    if isinstance(dust, DustMix):
        comps = []
        for key, f in dust.fractions:
            if isinstance(key, str):
                comps.append({"species": key, "fraction": f})
            else:
                name, size, shape = key
                c = {"species": name, "fraction": f, "shape": shape}
                if size is not None:
                    c["grain_size"] = quantity(size, "um")
                comps.append(c)
        return {"kind": "mixture", "grain_size": quantity(dust.grain_size, "um"), "shape": dust.shape,
                "components": comps}
    if isinstance(dust, PowerLawOpacity):
        return {"kind": "power_law", "kappa_ref": quantity(dust.kappa_ref, "cm2 / g"),
                "wavelength_ref": quantity(dust.wavelength_ref, "um"), "beta": float(dust.beta)}
    if isinstance(dust, KappaTable):
        if dust.source and os.path.isfile(os.fspath(dust.source)):
            return {"kind": "kappa_table", "path": os.fspath(dust.source), "label": dust.label}
        return {"kind": "kappa_table", "label": dust.label,
                "wavelength": [float(x) for x in dust.wavelength],
                "kappa": [float(x) for x in dust.values]}
    raise SeedError(f"{where}: cannot describe dust of type {type(dust).__name__} ({getattr(dust, 'label', '?')}) "
                    "in a starting point; use a DustMix, PowerLawOpacity, KappaTable or None")


def _size(entry, where):
    q = entry
    size = to_internal(q["value"], q["unit"], "um", where)
    if not (math.isfinite(size) and size > 0):
        raise SeedError(f"{where}: grain size {q['value']!r} {q['unit']} must be > 0")
    return size


def dust_from_document(entry, where="dust", base_dir=None):
    """The dust object of a document entry (``None`` for ``null``).

    Parameters
    ----------
    entry : dict or None
    where : str
        Path of the entry, e.g. ``"rings.0.dust"``, for messages.
    base_dir : str, optional
        Directory relative κ table paths are relative to.

    Raises
    ------
    SeedError
        Unknown species or shape, bad grain sizes, unreadable κ tables, bad units.
    """
    if entry is None:
        return None
    kind = entry["kind"]
    try:
        if kind == "mixture":
            size = _size(entry["grain_size"], f"{where}.grain_size")
            known = known_species()
            pairs = []
            for k, c in enumerate(entry["components"]):
                w = f"{where}.components.{k}"
                if c["species"] not in known:
                    raise SeedError(f"{w}.species: unknown species {c['species']!r}; known: {', '.join(known)}")
                if "grain_size" in c or "shape" in c:
                    shape = c.get("shape", entry["shape"])
                    csize = _size(c["grain_size"], f"{w}.grain_size") if "grain_size" in c else size
                    key = (c["species"], csize, shape)
                else:
                    key = c["species"]
                pairs.append((key, float(c["fraction"])))
            try:
                mix = DustMix(pairs, grain_size=size, shape=entry["shape"])
            except DustError as exc:
                raise SeedError(f"{where}: {exc}") from None
            return mix
        if kind == "power_law":
            return PowerLawOpacity(
                kappa_ref=to_internal(entry["kappa_ref"]["value"], entry["kappa_ref"]["unit"], "cm2 / g",
                                      f"{where}.kappa_ref"),
                wavelength_ref=to_internal(entry["wavelength_ref"]["value"], entry["wavelength_ref"]["unit"],
                                           "um", f"{where}.wavelength_ref"),
                beta=float(entry["beta"]))
        if kind == "kappa_table":
            if "path" in entry:
                path = os.path.expanduser(entry["path"])
                if base_dir is not None and not os.path.isabs(path):
                    path = os.path.join(os.fspath(base_dir), path)
                return KappaTable.from_file(path, label=entry.get("label"))
            return KappaTable(entry["wavelength"], entry["kappa"], label=entry.get("label", "κ table"))
    except DustError as exc:
        raise SeedError(f"{where}: {exc}") from None
    raise SeedError(f"{where}.kind: unknown dust kind {kind!r}; expected one of {', '.join(DUST_KINDS)}")

