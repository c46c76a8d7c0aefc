"""Read a starting-point document back: validate it, rebuild the scene and the free parameters.

Reading happens in three steps, each failing with a :class:`~diskexplorer.errors.SeedError`
that names the path of the offending entry (parameter paths as in
:mod:`diskexplorer.fitting.paths`; other entries by their keys, e.g. ``data.oifits.0``):

1. JSON syntax (line and column) and the ``"schema"`` field (a newer version than this
   code reads is refused with a request to update diskexplorer);
2. the shipped JSON Schema (``start_schema.json``): unknown keys, missing fields, types;
3. meaning: units (converted with astropy.units when convertible), values inside the
   physically valid range and inside their bounds, bounds inside the valid range,
   priors fitting their bounds, r_in < r_out, known dust species.
"""
from __future__ import annotations

import copy
import json
import math
import os
import re
from dataclasses import dataclass, field

from ..errors import DustError, ParameterError, SeedError
from ..observables.scene import Scene
from ..physics.parameters import parameter_specs
from ..physics.ring import SUBLIMATION_TEMPERATURE_SPEC, Ring
from ..physics.star import PhotosphereTable, Star
from .data_description import DataDescription
from .dust_codec import dust_from_document
from .paths import SCENE_GROUPS, sublimation_species
from .priors import Prior, as_prior, default_prior
from .probability import make_log_probability
from .quantities import to_internal, unit_factor
from .start_schema import SCHEMA_ID, SCHEMA_VERSION, load_schema
from .vector import (FreeParameter, default_bounds, initial_walkers, log_prior, scene_from_vector,
                     validate_bounds, vector_from_scene)

__all__ = ["StartingPoint", "read_start", "validate_document"]

_SCHEMA_RE = re.compile(r"^diskexplorer\.start/(\d+)$")


@dataclass
class StartingPoint:
    """A starting point read from a document.

    Attributes
    ----------
    scene : Scene
        The model state.
    free : list of FreeParameter
        The free parameters in document order (values in declared units).
    parameters : dict of str to FreeParameter
        Every parameter by path, free or fixed, with its bounds and prior.
    data : DataDescription
        The data the document names.
    settings : dict
        Model settings (``accuracy``).
    judgement : dict or None
        χ² recorded at export.
    document : dict
        The document as read.
    base_dir : str or None
        Directory relative data paths refer to (the document's folder when read from a file).
    """

    scene: Scene
    free: list
    parameters: dict
    data: DataDescription
    settings: dict = field(default_factory=dict)
    judgement: dict | None = None
    document: dict = field(default_factory=dict)
    base_dir: str | None = None

    @property
    def paths(self):
        """Paths of the free parameters."""
        return [f.path for f in self.free]

    @property
    def accuracy(self) -> int:
        return int(self.settings.get("accuracy", 1))

    def vector(self):
        """Current values of the free parameters (declared units)."""
        return vector_from_scene(self.scene, self.free)

    def scene_at(self, x):
        """A new scene with the free parameters at ``x`` (see :func:`scene_from_vector`)."""
        return scene_from_vector(self.scene, self.free, x)

    def log_prior(self, x):
        """Σ ln prior of the free parameters at ``x`` (−inf outside the bounds)."""
        return log_prior(self.free, x)

    def comparison(self):
        """Load the data the document names into a :class:`~diskexplorer.fitting.Comparison`."""
        return self.data.comparison(self.base_dir, accuracy=self.accuracy)

    def log_probability(self, comparison=None):
        """``log_probability(x)`` of the free parameters (see :func:`make_log_probability`)."""
        return make_log_probability(self.scene, self.free, comparison or self.comparison())

    def to_document(self, scene=None, comparison_result=None):
        """A new document for ``scene`` (default: this one) with these bounds, priors, data
        and settings — e.g. to save a refined state under the same fit set-up."""
        from .start_document import export_start

        scene = self.scene if scene is None else scene
        return export_start(scene, free=self.free,
                            bounds={p: (f.lo, f.hi) for p, f in self.parameters.items()},
                            priors={p: f.prior for p, f in self.parameters.items()},
                            data=self.data, comparison_result=comparison_result, accuracy=self.accuracy,
                            title=self.document.get("title"))

    def initial_walkers(self, n, seed=None, spread=1e-3):
        """``n`` walkers in a small ball around the current state, inside the bounds."""
        return initial_walkers(self.scene, self.free, n, seed=seed, spread=spread)


# --------------------------------------------------------------------------- loading
def _load(source):
    if isinstance(source, dict):
        return copy.deepcopy(source), None, "document"
    path = os.fspath(source)
    try:
        with open(path, encoding="utf-8") as fh:
            text = fh.read()
    except FileNotFoundError:
        raise SeedError(f"{path}: no such starting-point file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise SeedError(f"{path}: cannot read the starting point ({exc})") from None
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise SeedError(f"{path}: line {exc.lineno}, column {exc.colno}: not valid JSON ({exc.msg})") from None
    if not isinstance(doc, dict):
        raise SeedError(f"{path}: a starting point is a JSON object, found {type(doc).__name__}")
    return doc, os.path.dirname(os.path.abspath(path)), path


def _check_version(doc, where):
    tag = doc.get("schema")
    if tag is None:
        raise SeedError(f"{where}: schema: missing field 'schema' (expected {SCHEMA_ID!r}); is this a "
                        "diskexplorer starting point?")
    m = _SCHEMA_RE.match(tag) if isinstance(tag, str) else None
    if not m:
        raise SeedError(f"{where}: schema: {tag!r} is not a diskexplorer starting point "
                        f"(expected {SCHEMA_ID!r})")
    version = int(m.group(1))
    if version > SCHEMA_VERSION:
        raise SeedError(f"{where}: schema: {tag!r} is newer than this diskexplorer reads ({SCHEMA_ID}); "
                        "update diskexplorer to read it")
    if version < 1:
        raise SeedError(f"{where}: schema: unknown version {tag!r}")


def _location(parts):
    parts = [str(p) for p in parts]
    if parts[:1] == ["scene"] and len(parts) > 1:
        parts = parts[1:]
    return ".".join(parts) or "document"


def _schema_message(error):
    where = _location(error.absolute_path)
    inst = error.instance
    if error.validator == "additionalProperties" and isinstance(inst, dict):
        allowed = list(error.schema.get("properties", {}))
        extra = sorted(set(inst) - set(allowed))
        return (f"{where}: unknown key{'s' if len(extra) > 1 else ''} {', '.join(map(repr, extra))}; "
                f"allowed: {', '.join(allowed)}")
    if error.validator == "required":
        missing = [k for k in error.validator_value if not (isinstance(inst, dict) and k in inst)]
        return f"{where}: missing field{'s' if len(missing) > 1 else ''} {', '.join(map(repr, missing))}"
    if error.validator == "type":
        return f"{where}: {inst!r:.60} is not of type {error.validator_value!r}"
    if error.validator == "enum":
        return f"{where}: {inst!r} is not one of {', '.join(map(repr, error.validator_value))}"
    return f"{where}: {error.message}"


def validate_document(doc, where="document"):
    """Check ``doc`` against the schema version and the shipped JSON Schema.

    Raises
    ------
    SeedError
        The first (most relevant) violation, naming its path; the count of further
        violations is appended.
    """
    # Deferred: importing jsonschema costs ~2 s (its format checkers), paid only on reading.
    import jsonschema

    _check_version(doc, where)
    validator = jsonschema.Draft202012Validator(load_schema())
    errors = list(validator.iter_errors(doc))
    if errors:
        best = jsonschema.exceptions.best_match(errors)
        more = f" (and {len(errors) - 1} more problem(s))" if len(errors) > 1 else ""
        prefix = "" if where == "document" else f"{where}: "
        raise SeedError(prefix + _schema_message(best) + more)


# --------------------------------------------------------------------------- meaning
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
    prior.check_bounds(lo, hi, f"{path}.prior: ")
    return FreeParameter(path, value, spec.unit, lo, hi, prior, spec.scale), bool(entry.get("free", False))


def _photosphere(entry, where):
    if entry is None:
        return None
    ref = to_internal(entry["reference_distance"]["value"], entry["reference_distance"]["unit"], "pc",
                      f"{where}.reference_distance")
    try:
        return PhotosphereTable(entry["wavelength"], entry["flux"], ref,
                                label=entry.get("label", "photosphere table"))
    except ParameterError as exc:
        raise SeedError(f"{where}: {exc}") from None


def _build(doc, base_dir):
    sdoc = doc["scene"]
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
                        photosphere=_photosphere(st["photosphere"], "star.photosphere"))
        except ParameterError as exc:
            raise SeedError(f"star: {exc}") from None
    rings = []
    for k, rd in enumerate(sdoc["rings"]):
        kw = {n: take(rd[n], f"rings.{k}.{n}", s) for n, s in parameter_specs(Ring).items()}
        if not kw["r_in"] < kw["r_out"]:
            raise SeedError(f"rings.{k}.r_in: {_fmt(rd['r_in']['value'])} {rd['r_in']['unit']} must be "
                            f"smaller than rings.{k}.r_out = {_fmt(rd['r_out']['value'])} {rd['r_out']['unit']}")
        dust = dust_from_document(rd["dust"], f"rings.{k}.dust", base_dir)
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
    try:
        scene = Scene(**scene_kw, star=star, rings=rings)
    except ParameterError as exc:
        raise SeedError(f"scene: {exc}") from None
    return scene, params, [params[p] for p in free_paths]


def read_start(path_or_dict):
    """Read and check a starting-point document.

    Parameters
    ----------
    path_or_dict : str, os.PathLike or dict
        A JSON file written by :func:`write_start`, or the document itself.

    Returns
    -------
    StartingPoint

    Raises
    ------
    SeedError
        Syntax errors, a missing or newer ``"schema"``, schema violations (unknown keys,
        missing fields, wrong types), units that do not convert, values outside bounds or
        the valid range, r_in ≥ r_out, unknown species; each message names the entry's
        path (e.g. ``rings.1.t_in: value 3000 K is outside its bounds [50, 2500] K``).

    Examples
    --------
    >>> start = read_start("start.json")                          # doctest: +SKIP
    >>> start.paths, start.vector()                               # doctest: +SKIP
    """
    doc, base_dir, where = _load(path_or_dict)
    validate_document(doc, where)
    try:
        scene, params, free = _build(doc, base_dir)
    except SeedError as exc:
        if where != "document":
            raise SeedError(f"{where}: {exc}") from None
        raise
    data = DataDescription.from_dict(doc.get("data"))
    return StartingPoint(scene=scene, free=free, parameters=params, data=data,
                         settings=dict(doc.get("settings") or {}), judgement=doc.get("judgement"),
                         document=doc, base_dir=base_dir)
