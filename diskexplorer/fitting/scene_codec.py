"""One codec of a scene: a :class:`~diskexplorer.observables.scene.Scene` ↔ parameter entries.

Starting-point documents (:mod:`~diskexplorer.fitting.start_document`) and explorer
sessions (:mod:`~diskexplorer.fitting.session_document`) store a scene in the same form,
the ``"scene"`` object of a starting point::

    {"distance": {"value": 162.0, "unit": "pc", "free": false, "bounds": [..], "prior": {..}},
     "geometry": {"inclination": {...}, "position_angle": {...}},
     "extended": {"fraction": {...}},
     "star": {"t_eff": {...}, "radius": {...}, "mass": {...}, "uniform_disk": true,
              "photosphere": null or {"wavelength": [...], "flux": [...], ...}},
     "rings": [{"name": ..., "enabled": ..., "r_in": {...}, ..., "dust": {...},
                "temperature_mode": ..., "inner_edge": ..., "sublimation": {...}}]}

Every numeric parameter is an entry at its parameter path
(:mod:`~diskexplorer.fitting.paths`) with its value and unit, whether it is free, its
bounds and its prior — a mixture component's mass fraction too, as the component's
``"fraction"`` (prior: the ring's Dirichlet, one concentration per component; a ring's
free fractions are read as weights on its simplex, :mod:`~diskexplorer.fitting.vector`,
and a ring with a single free fraction is refused); dust of every form is written by
:mod:`~diskexplorer.fitting.dust_codec` (mixtures with per-component sizes and shapes,
power laws, κ tables by path or inline), photosphere tables inline, and an equilibrium
ring's temperature settings beside its parameters. Species
registered in this process that the rings' mixtures use are written into the scene's
``"species"`` object (their κ table or optical constants), so that another process reads
the scene with the same κ. Reading
converts units with astropy.units and checks every value against its valid range and
bounds, naming the entry's path in each error.
"""
from __future__ import annotations

import dataclasses
import math

from ..errors import DustError, ParameterError, SeedError
from ..observables.scene import Scene
from ..physics.parameters import parameter_specs
from ..physics.ring import SUBLIMATION_TEMPERATURE_SPEC, Ring
from ..physics.star import PhotosphereTable, Star
from .dust_codec import (dust_from_document, dust_to_document, install_species_entries, species_from_document,
                         species_to_document)
from .paths import (MASS_FRACTION_SPEC, SCENE_GROUPS, fraction_components, fraction_path, get_value,
                    parameter_paths, spec_for, sublimation_species)
from .priors import Prior, as_prior, check_prior_kind, default_prior
from .quantities import quantity, to_internal, unit_factor
from .vector import FreeParameter, check_fraction_groups, default_bounds, resolve_limits, validate_bounds

__all__ = ["scene_entries", "scene_from_entries"]


# --------------------------------------------------------------------------- writing
def _entry(scene, path, free, bounds, priors):
    spec = spec_for(path)
    value = get_value(scene, path)
    lo, hi, prior = resolve_limits(spec, value, bounds.get(path), priors.get(path), path)
    return {"value": value, "unit": spec.unit, "free": path in free, "bounds": [lo, hi],
            "prior": prior.as_dict()}


def _equilibrium_entries(scene, k, entries):
    """The temperature settings of ring ``k`` (nothing for a power-law ring: documents unchanged).

    An equilibrium ring records its mode, its inner-edge choice, each species'
    sublimation temperature as a parameter entry (``rings.<k>.sublimation.<species>``) and,
    when its inner edge follows the front, the front's radius for the reader (derived:
    not read back).
    """
    ring = scene.rings[k]
    if not ring.is_equilibrium:
        return {}
    out = {"temperature_mode": ring.temperature_mode, "inner_edge": ring.inner_edge,
           "sublimation": {name: entries[f"rings.{k}.sublimation.{name}"] for name in sublimation_species(ring)}}
    if ring.inner_edge == "sublimation" and scene.star is not None:
        out["sublimation_front"] = quantity(ring.sublimation_front(scene.star), "au")
    return out


def _photosphere_entry(table):
    if table is None:
        return None
    return {"wavelength": [float(x) for x in table.wavelength], "flux": [float(x) for x in table.flux],
            "reference_distance": quantity(table.reference_distance, "pc"), "label": table.label}


def scene_entries(scene, free=(), bounds=None, priors=None):
    """The entries of ``scene`` (see the module docstring); a JSON-ready dict.

    Parameters
    ----------
    scene : Scene
    free : collection of str
        Canonical paths of the free parameters; the others are written as fixed.
    bounds : mapping of str to (float, float), optional
        Canonical path → (lo, hi) in the declared unit. Default: the declared bounds,
        widened to hold the current value.
    priors : mapping of str to prior, optional
        Canonical path → prior (anything :func:`~diskexplorer.fitting.priors.as_prior`
        reads). Default: log-uniform on a log scale, else uniform.

    Raises
    ------
    SeedError
        Bounds that do not hold the value or leave the valid range, priors that do not
        fit, dust the document cannot describe.
    """
    free, bounds, priors = set(free), dict(bounds or {}), dict(priors or {})
    entries = {p: _entry(scene, p, free, bounds, priors) for p in parameter_paths(scene)}
    doc_scene = {}
    for path, entry in entries.items():
        head, _, rest = path.partition(".")
        if head in ("star", "rings"):
            continue
        if rest:
            doc_scene.setdefault(head, {})[rest] = entry
        else:
            doc_scene[head] = entry
    star = scene.star
    if star is None:
        doc_scene["star"] = None
    else:
        doc_scene["star"] = {**{n: entries[f"star.{n}"] for n in parameter_specs(Star)},
                             "uniform_disk": bool(star.uniform_disk),
                             "photosphere": _photosphere_entry(star.photosphere)}
    rings = []
    for k, ring in enumerate(scene.rings):
        rings.append({"name": ring.name, "enabled": bool(ring.enabled),
                      **{n: entries[f"rings.{k}.{n}"] for n in parameter_specs(Ring)},
                      "dust": dust_to_document(ring.dust, f"rings.{k}.dust",
                                               {key: entries[path] for path, key, _ in fraction_components(ring, k)}),
                      **_equilibrium_entries(scene, k, entries)})
    doc_scene["rings"] = rings
    # Registered species live in this process only: the document carries them.
    species = species_to_document(scene)
    if species:
        doc_scene["species"] = species
    return doc_scene


# --------------------------------------------------------------------------- reading
def _fmt(x):
    return f"{x:g}"


def _parameter(entry, path, spec):
    """FreeParameter (with the free flag) of one entry, values converted to declared units."""
    unit = entry["unit"]
    shown = f" {unit}" if unit else ""
    value = to_internal(entry["value"], unit, spec.unit, path)
    if not (math.isfinite(value) and spec.contains(value)):
        raise SeedError(f"{path}: value {_fmt(entry['value'])}{shown} is outside the physically allowed "
                        f"range {spec.describe_range()} ({spec.description})")
    if "bounds" in entry:
        lo, hi = to_internal(entry["bounds"], unit, spec.unit, path)
        blo, bhi = entry["bounds"]
    else:
        lo, hi = default_bounds(spec, value)
        blo, bhi = lo, hi
        shown = f" {spec.unit}" if spec.unit else ""
        if unit != spec.unit:
            blo, bhi = to_internal([lo, hi], spec.unit, unit, path)
            shown = f" {unit}" if unit else ""
    validate_bounds(spec, lo, hi, path)
    if not lo <= value <= hi:
        raise SeedError(f"{path}: value {_fmt(entry['value'])}{shown} is outside its bounds "
                        f"[{_fmt(blo)}, {_fmt(bhi)}]{shown}")
    if "prior" in entry:
        p = dict(entry["prior"])
        if p.get("kind") == "normal":
            mean = to_internal(p["mean"], unit, spec.unit, f"{path}.prior.mean")
            sigma = unit_factor(p["mean"], p["sigma"], unit, spec.unit, f"{path}.prior.sigma")
            prior = Prior("normal", mean, sigma)
        else:
            prior = as_prior(p)
    else:
        prior = default_prior(spec, lo)
    check_prior_kind(spec, prior, f"{path}.prior: ")
    prior.check_bounds(lo, hi, f"{path}.prior: ")
    return FreeParameter(path, value, spec.unit, lo, hi, prior, spec.scale), bool(entry.get("free", False))


def _photosphere_table(entry, where):
    if entry is None:
        return None
    ref = to_internal(entry["reference_distance"]["value"], entry["reference_distance"]["unit"], "pc",
                      f"{where}.reference_distance")
    try:
        return PhotosphereTable(entry["wavelength"], entry["flux"], ref,
                                label=entry.get("label", "photosphere table"))
    except ParameterError as exc:
        raise SeedError(f"{where}: {exc}") from None


def scene_from_entries(sdoc, base_dir=None, check_path=None):
    """The scene of a document's ``"scene"`` entries, with every parameter's bounds and prior.

    Parameters
    ----------
    sdoc : dict
        As :func:`scene_entries` writes it (checked against the schema by the caller).
    base_dir : str, optional
        Folder that relative κ-table paths refer to.
    check_path : callable, optional
        Given each κ table's absolute path before it is read (see
        :func:`~diskexplorer.fitting.dust_codec.dust_from_document`).

    Returns
    -------
    (Scene, dict of str to FreeParameter, list of FreeParameter)
        The scene; every parameter by path with its bounds and prior; the free ones in
        document order.

    Raises
    ------
    SeedError
        Units that do not convert, values outside their valid range or bounds, priors
        that do not fit, r_in ≥ r_out, unknown species, a species the document defines
        that is registered here with other data; each names the entry's path.

    Notes
    -----
    Species defined in the scene's ``"species"`` object are registered in this process
    (:func:`~diskexplorer.dust.register_species`) unless registered already with the same
    data; if the scene is then refused, those registered by this call are removed again.
    """
    added = install_species_entries(species_from_document(sdoc.get("species"), "species"), "species")
    try:
        return _scene_from_entries(sdoc, base_dir, check_path)
    except BaseException:
        from ..dust import unregister_species

        for name in added:
            unregister_species(name)
        raise


def _scene_from_entries(sdoc, base_dir, check_path):
    params, free_paths = {}, []

    def take(entry, path, spec):
        fp, is_free = _parameter(entry, path, spec)
        params[path] = fp
        if is_free:
            free_paths.append(path)
        return fp.value

    scene_kw = {}
    for name, spec in parameter_specs(Scene).items():
        path = SCENE_GROUPS.get(name, name)
        head, _, rest = path.partition(".")
        entry = sdoc[head][rest] if rest else sdoc[head]
        scene_kw[name] = take(entry, path, spec)
    star = None
    if sdoc["star"] is not None:
        st = sdoc["star"]
        kw = {n: take(st[n], f"star.{n}", s) for n, s in parameter_specs(Star).items()}
        try:
            star = Star(**kw, uniform_disk=st["uniform_disk"],
                        photosphere=_photosphere_table(st["photosphere"], "star.photosphere"))
        except ParameterError as exc:
            raise SeedError(f"star: {exc}") from None
    rings = []
    for k, rd in enumerate(sdoc["rings"]):
        kw = {n: take(rd[n], f"rings.{k}.{n}", s) for n, s in parameter_specs(Ring).items()}
        if not kw["r_in"] < kw["r_out"]:
            raise SeedError(f"rings.{k}.r_in: {_fmt(rd['r_in']['value'])} {rd['r_in']['unit']} must be "
                            f"smaller than rings.{k}.r_out = {_fmt(rd['r_out']['value'])} {rd['r_out']['unit']}")
        def take_fraction(key, entry, where, k=k):
            path = fraction_path(k, key)
            if path is None:   # a species without a path: its fraction stays as written
                fp, is_free = _parameter(entry, where, MASS_FRACTION_SPEC)
                if is_free:
                    raise SeedError(f"{where}: species {key if isinstance(key, str) else key[0]!r} has no "
                                    "parameter path (its name is not an identifier), so its fraction cannot be free")
                return fp.value
            return take(entry, path, MASS_FRACTION_SPEC)

        dust = dust_from_document(rd["dust"], f"rings.{k}.dust", base_dir, check_path, take_fraction)
        # Temperature settings of an equilibrium ring; absent: the power law.
        kw["temperature_mode"] = rd.get("temperature_mode", "power_law")
        kw["inner_edge"] = rd.get("inner_edge", "fixed")
        kw["sublimation"] = {name: take(entry, f"rings.{k}.sublimation.{name}", SUBLIMATION_TEMPERATURE_SPEC)
                             for name, entry in rd.get("sublimation", {}).items()}
        try:
            rings.append(Ring(**kw, dust=dust, name=rd["name"], enabled=rd["enabled"]))
        except (ParameterError, DustError) as exc:
            raise SeedError(f"rings.{k}: {exc}") from None
        known = sublimation_species(rings[-1])
        for name in kw["sublimation"]:
            if name not in known:
                raise SeedError(f"rings.{k}.sublimation.{name}: the ring's dust has no such species "
                                f"(species with sublimation temperatures: {', '.join(known) or 'none'}; "
                                "an entry needs temperature_mode 'equilibrium')")
        # Every species' temperature is written (a fit may free any of them); one equal to
        # the species' declared value is not an override, so the scene reads back equal.
        declared = {s.name: s.sublimation_temperature for s in rings[-1].species()}
        overrides = {n: v for n, v in kw["sublimation"].items() if v != declared.get(n)}
        if len(overrides) != len(kw["sublimation"]):
            rings[-1] = dataclasses.replace(rings[-1], sublimation=overrides)
    try:
        scene = Scene(**scene_kw, star=star, rings=rings)
    except ParameterError as exc:
        raise SeedError(f"scene: {exc}") from None
    free = [params[p] for p in free_paths]
    check_fraction_groups(free)
    return scene, params, free


