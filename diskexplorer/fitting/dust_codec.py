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

In a starting point or a session a component's ``"fraction"`` is a parameter entry, like
every parameter at its path ``rings.<k>.dust.<component>``
(:mod:`~diskexplorer.fitting.paths`)::

    {"species": "forsterite", "fraction": {"value": 0.4, "unit": "", "free": true,
     "bounds": [0.0, 1.0], "prior": {"kind": "dirichlet", "concentration": 1.0}}}

A plain number (documents written before fractions were parameters, and components of
species without a path) is read as a fixed fraction with the default bounds and prior.

A path in a document refers to the document's folder (or is absolute); a path in a
document held in memory refers to the current folder. The writers re-express relative
paths from the folder of the file they write (:func:`table_paths_from`), and readers
resolve them against it, so a document reads wherever it is read from.

Species registered in this process (:func:`diskexplorer.dust.register_species`) exist in
no other: a scene that uses one carries its definition in the scene's ``"species"``
object (:func:`species_to_document`), so that a fresh process, or a sampler on another
machine, reads the document with the same κ::

    "species": {"my_glass": {"kind": "optical_constants",
                             "density": {"value": 3.2, "unit": "g / cm3"}, "f_max": 0.8,
                             "constants": [{"name": ..., "wavelength": [...], "n": [...], "k": [...]}],
                             "source": ..., "description": ...},
                "my_table": {"kind": "kappa_table", "wavelength": [...], "kappa": [...], ...}}
"""
from __future__ import annotations

import math
import os

import numpy as np

from ..dust.mixture import DustMix
from ..dust.optical_constants import OpticalConstants
from ..dust.species import known_species, register_species, unregister_species, user_species
from ..errors import DustError, SeedError
from ..physics.opacity import KappaTable, PowerLawOpacity
from .quantities import quantity, to_internal

__all__ = ["DUST_KINDS", "SPECIES_KINDS", "dust_to_document", "dust_from_document", "species_to_document",
           "species_from_document", "install_species_entries", "table_paths_from", "scene_species_names"]

#: Values of ``"kind"`` in a dust entry.
DUST_KINDS = ("mixture", "power_law", "kappa_table")
#: Values of ``"kind"`` in an entry of a scene's ``"species"`` object.
SPECIES_KINDS = ("kappa_table", "optical_constants")


def dust_to_document(dust, where="dust", fraction_entries=None):
    """The document entry of a ring's dust (see module docstring).

    Parameters
    ----------
    dust : opacity or None
    where : str
        Path of the entry, for messages.
    fraction_entries : mapping, optional
        Fraction key → parameter entry written as that component's ``"fraction"``;
        components without one get their fraction as a number.

    Raises
    ------
    SeedError
        For an opacity object of a kind the document cannot describe.
    """
    if dust is None:
        return None
    if isinstance(dust, DustMix):
        comps = []
        fraction_entries = fraction_entries or {}
        for key, f in dust.fractions:
            f = fraction_entries.get(key, f)
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


def dust_from_document(entry, where="dust", base_dir=None, check_path=None, take_fraction=None):
    """The dust object of a document entry (``None`` for ``null``).

    Parameters
    ----------
    entry : dict or None
    where : str
        Path of the entry, e.g. ``"rings.0.dust"``, for messages.
    base_dir : str, optional
        Directory relative κ table paths are relative to (default: the current folder).
    check_path : callable, optional
        Given the absolute path of a κ table before it is read; returns the path to read
        or raises :class:`~diskexplorer.errors.DiskExplorerError` (see
        :func:`~diskexplorer.fitting.read_start`).
    take_fraction : callable, optional
        ``take_fraction(key, entry, where) -> float`` reads a component's fraction given as
        a parameter entry (the scene codec records its bounds, prior and free flag);
        default: its ``"value"``.

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
                fraction = c["fraction"]
                if isinstance(fraction, dict):
                    fraction = (take_fraction(key, fraction, f"{w}.fraction") if take_fraction is not None
                                else fraction["value"])
                pairs.append((key, float(fraction)))
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
                path = os.path.abspath(path)
                if check_path is not None:
                    path = os.fspath(check_path(path))
                return KappaTable.from_file(path, label=entry.get("label"))
            return KappaTable(entry["wavelength"], entry["kappa"], label=entry.get("label", "κ table"))
    except DustError as exc:
        raise SeedError(f"{where}: {exc}") from None
    raise SeedError(f"{where}.kind: unknown dust kind {kind!r}; expected one of {', '.join(DUST_KINDS)}")


# --------------------------------------------------------------------------- paths
def table_paths_from(scene_entry, folder):
    """``scene_entry`` with each κ table's relative path re-expressed from ``folder`` (a new dict).

    A relative path in a document held in memory refers to the current folder, where the
    table was read; a written document's paths refer to the document's folder: the stored
    path must lead from there to the same file. Absolute paths are kept as given; an
    entry that is not a scene is returned unchanged.

    Parameters
    ----------
    scene_entry : dict
        A document's ``"scene"`` object.
    folder : str or os.PathLike
        The folder of the file being written.
    """
    if not (isinstance(scene_entry, dict) and isinstance(scene_entry.get("rings"), list)):
        return scene_entry
    folder = os.path.abspath(os.fspath(folder))
    rings = []
    for ring in scene_entry["rings"]:
        dust = ring.get("dust") if isinstance(ring, dict) else None
        given = dust.get("path") if isinstance(dust, dict) and dust.get("kind") == "kappa_table" else None
        if isinstance(given, str) and not os.path.isabs(os.path.expanduser(given)):
            target = os.path.abspath(os.path.expanduser(given))
            try:
                stored = os.path.relpath(target, folder)
            except ValueError:   # on another drive (Windows): no relative path leads there
                stored = target
            ring = {**ring, "dust": {**dust, "path": stored}}
        rings.append(ring)
    return {**scene_entry, "rings": rings}


def absolute_table_paths(scene_entry, base_dir):
    """``scene_entry`` with each κ table's relative path made absolute against ``base_dir`` (a new dict).

    A document read from a file keeps its tables this way in memory, so writing it
    elsewhere (:func:`table_paths_from`) still leads to them.
    """
    if base_dir is None or not (isinstance(scene_entry, dict) and isinstance(scene_entry.get("rings"), list)):
        return scene_entry
    rings = []
    for ring in scene_entry["rings"]:
        dust = ring.get("dust") if isinstance(ring, dict) else None
        given = dust.get("path") if isinstance(dust, dict) and dust.get("kind") == "kappa_table" else None
        if isinstance(given, str) and not os.path.isabs(os.path.expanduser(given)):
            ring = {**ring, "dust": {**dust, "path": os.path.normpath(os.path.join(os.fspath(base_dir), given))}}
        rings.append(ring)
    return {**scene_entry, "rings": rings}


# --------------------------------------------------------------------------- species
def scene_species_names(scene):
    """Names of the species the mixtures of ``scene``'s rings use (ring order, each once)."""
    names = []
    for ring in scene.rings:
        if isinstance(ring.dust, DustMix):
            for (name, _, _), _ in ring.dust.components:
                if name not in names:
                    names.append(name)
    return names


def _floats(values):
    return [float(x) for x in np.asarray(values, dtype=float)]


def species_to_document(scene):
    """The ``"species"`` object of a scene: every registered species its mixtures use.

    Returns
    -------
    dict or None
        Name → entry (see the module docstring); None when the scene uses built-in
        species only.

    Raises
    ------
    SeedError
        For a species whose optical constants carry an extension beyond their data
        (:meth:`~diskexplorer.dust.OpticalConstants.extended`): a document cannot
        describe it; register the species from a κ table instead.
    """
    registered = user_species()
    out = {}
    for name in scene_species_names(scene):
        sp = registered.get(name)
        if sp is None:
            continue
        if sp.table is not None:
            entry = {"kind": "kappa_table", "wavelength": _floats(sp.table.wavelength),
                     "kappa": _floats(sp.table.values)}
        else:
            if any(oc._extensions for oc in sp.constants):
                raise SeedError(f"species.{name}: its optical constants are extended beyond their data, "
                                "which a document cannot describe; register the species from its κ table "
                                "(register_species(..., kappa=...)) to write it")
            entry = {"kind": "optical_constants", "density": quantity(sp.density, "g / cm3"),
                     "f_max": float(sp.f_max),
                     "constants": [{"name": oc.name, "source": oc.source, "wavelength": _floats(oc.wavelength),
                                    "n": _floats(oc.n), "k": _floats(oc.k), "notes": list(oc.notes)}
                                   for oc in sp.constants]}
        entry.update(source=str(sp.source or ""), description=str(sp.description or ""))
        out[name] = entry
    return out or None


def species_from_document(entries, where="species"):
    """The species a document's ``"species"`` object defines, built but not registered.

    Parameters
    ----------
    entries : dict or None
        Name → entry, as :func:`species_to_document` writes it (checked against the
        schema by the caller).
    where : str
        Path of the object, for messages.

    Returns
    -------
    dict of str to dict
        Name → keyword arguments of :func:`~diskexplorer.dust.register_species`.

    Raises
    ------
    SeedError
        A bad name, table, density or optical constants, naming the entry.
    """
    out = {}
    for name, entry in (entries or {}).items():
        w = f"{where}.{name}"
        if not name.strip() or any(c in name for c in "{}:,"):
            raise SeedError(f"{w}: species name {name!r}: expected a non-empty name without {{}}:,")
        kw = {"source": entry.get("source") or None, "description": entry.get("description", "")}
        try:
            if entry["kind"] == "kappa_table":
                kw["kappa"] = KappaTable(entry["wavelength"], entry["kappa"], label=name, source=kw["source"])
            else:
                density = to_internal(entry["density"]["value"], entry["density"]["unit"], "g / cm3", f"{w}.density")
                if not (math.isfinite(density) and density > 0):
                    raise SeedError(f"{w}.density: {entry['density']['value']!r} {entry['density']['unit']}: "
                                    "expected > 0")
                kw["density"] = density
                kw["f_max"] = float(entry.get("f_max", 0.8))
                if not 0.0 <= kw["f_max"] < 1.0:
                    raise SeedError(f"{w}.f_max: {kw['f_max']!r}: expected a vacuum fraction in [0, 1)")
                kw["nk"] = [OpticalConstants(c["wavelength"], c["n"], c["k"], name=c.get("name", name),
                                             source=c.get("source", ""), notes=tuple(c.get("notes", ())))
                            for c in entry["constants"]]
        except DustError as exc:
            raise SeedError(f"{w}: {exc}") from None
        out[name] = kw
    return out


def _same_species(sp, kw):
    """Whether the registered species ``sp`` holds the data of the entry ``kw`` (bit for bit)."""
    if "kappa" in kw:
        return (sp.table is not None and np.array_equal(sp.table.wavelength, kw["kappa"].wavelength)
                and np.array_equal(sp.table.values, kw["kappa"].values))
    if sp.constants is None or len(sp.constants) != len(kw["nk"]) or sp.density != kw["density"] \
            or float(sp.f_max) != kw["f_max"]:
        return False
    return all(not a._extensions and all(np.array_equal(getattr(a, f), getattr(b, f)) for f in ("wavelength", "n", "k"))
               for a, b in zip(sp.constants, kw["nk"]))


def install_species_entries(defined, where="species"):
    """Register the species a document defines in this process (those not registered yet).

    Parameters
    ----------
    defined : dict
        From :func:`species_from_document`.
    where : str
        Path of the species object, for messages.

    Returns
    -------
    list of str
        The names newly registered (the caller unregisters them if the document is refused).

    Raises
    ------
    SeedError
        A species of that name is registered here already with other data: the document
        would be read with another κ than it was written with.
    """
    registered = user_species()
    for name, kw in defined.items():
        if name in registered and not _same_species(registered[name], kw):
            raise SeedError(f"{where}.{name}: a species of this name is registered in this process with other "
                            "data than the document holds; unregister it (unregister_species) or rename it "
                            "before reading the document")
    added = []
    try:
        for name, kw in defined.items():
            if name not in registered:
                register_species(name, overwrite=True, **kw)
                added.append(name)
    except DustError as exc:
        for name in added:
            unregister_species(name)
        raise SeedError(f"{where}: {exc}") from None
    return added
