"""Read a starting-point document back: validate it, rebuild the scene and the free parameters.

Reading happens in three steps, each failing with a :class:`~diskexplorer.errors.SeedError`
that names the path of the offending entry (parameter paths as in
:mod:`diskexplorer.fitting.paths`; other entries by their keys, e.g. ``data.oifits.0``):

1. JSON syntax (line and column) within bounds (:mod:`~diskexplorer.fitting.json_limits`:
   size, nesting depth, digits, finite numbers; also for a document given in memory) and
   the ``"schema"`` field (a newer version than this code reads is refused with a request
   to update diskexplorer);
2. the shipped JSON Schema (``start_schema.json``): unknown keys, missing fields, types;
3. meaning: units (converted with astropy.units when convertible), values inside the
   physically valid range and inside their bounds, bounds inside the valid range,
   priors fitting their bounds, r_in < r_out, known dust species (species the document
   defines are registered first: :mod:`~diskexplorer.fitting.dust_codec`).
"""
from __future__ import annotations

import copy
import os
import re
from dataclasses import dataclass, field

from ..errors import DiskExplorerError, SeedError
from ..observables.scene import Scene
from .data_description import DataDescription
from .dust_codec import absolute_table_paths
from .json_limits import check_json_tree, read_json_document
from .scene_codec import scene_from_entries
from .probability import make_log_probability
from .start_schema import SCHEMA_ID, SCHEMA_VERSION, load_schema
from .vector import (initial_walkers, log_prior, scene_from_vector,
                     vector_from_scene)

__all__ = ["StartingPoint", "read_start", "validate_document", "validate_scene_entries", "validate_against"]

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
    """``(document, base_dir, where)`` of a file or of a document given in memory.

    Both are checked for size, depth and numbers (:mod:`~diskexplorer.fitting.json_limits`)
    before anything else reads them.
    """
    if isinstance(source, dict):
        check_json_tree(source, "", _location)
        return copy.deepcopy(source), None, "document"
    path = os.fspath(source)
    doc = parse_document(read_json_document(path, "starting-point file", locate=_location), path)
    return doc, os.path.dirname(os.path.abspath(path)), path


def parse_document(doc, where):
    """Refuse a parsed file that is not a JSON object (before its fields are used)."""
    if not isinstance(doc, dict):
        raise SeedError(f"{where}: a starting point is a JSON object, found {_json_kind(doc)}")
    return doc


def _json_kind(value):
    """A JSON value's type in words ("an object", "an array", "a string", ...)."""
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, (int, float)):
        return "a number"
    return {dict: "an object", list: "an array", tuple: "an array", str: "a string",
            type(None): "null"}.get(type(value), type(value).__name__)


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
    return ".".join(parts)


def _schema_message(error, top="document"):
    """The message of one violation, led by the entry's path (``top`` for the checked object itself)."""
    where = _location(error.absolute_path) or top
    inst = error.instance
    if error.validator == "additionalProperties" and isinstance(inst, dict):
        allowed = list(error.schema.get("properties", {}))
        extra = sorted(set(inst) - set(allowed))
        body = (f"unknown key{'s' if len(extra) > 1 else ''} {', '.join(map(repr, extra))}; "
                f"allowed: {', '.join(allowed)}")
    elif error.validator == "required":
        missing = [k for k in error.validator_value if not (isinstance(inst, dict) and k in inst)]
        body = f"missing field{'s' if len(missing) > 1 else ''} {', '.join(map(repr, missing))}"
    elif error.validator == "type":
        body = f"expected {_expected_types(error.validator_value)}, got {_json_kind(inst)}{_shown(inst)}"
    elif error.validator == "anyOf" and _branch_types(error.validator_value) and \
            _json_type(inst) not in _branch_types(error.validator_value):
        body = f"expected {_expected_types(_branch_types(error.validator_value))}, got {_json_kind(inst)}{_shown(inst)}"
    elif error.validator == "enum":
        body = f"{inst!r:.60} is not one of {', '.join(map(repr, error.validator_value))}"
    else:
        body = error.message
    return f"{where}: {body}" if where else body


_TYPE_WORDS = {"object": "an object", "array": "an array", "string": "a string", "number": "a number",
               "integer": "an integer", "boolean": "a boolean", "null": "null"}


def _expected_types(types):
    types = [types] if isinstance(types, str) else list(types)
    return " or ".join(_TYPE_WORDS.get(t, t) for t in types)


def _branch_types(branches):
    """The JSON types the branches of an ``anyOf`` accept (a ``$ref`` here is always an object)."""
    out = []
    for branch in branches:
        types = branch.get("type", "object" if "$ref" in branch else None)
        if types is None:
            return []
        out += [types] if isinstance(types, str) else list(types)
    return list(dict.fromkeys(out))


def _json_type(value):
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, (int, float)):
        return "number"
    return {dict: "object", list: "array", tuple: "array", str: "string", type(None): "null"}.get(type(value), "")


def _shown(value):
    """A short value after its kind (" 'hot'"); containers are not shown, they may be large."""
    if isinstance(value, (dict, list, tuple)):
        return ""
    return f" {value!r:.40}"


def _check_schema(schema, instance, where, top="document"):
    """Raise SeedError for the most relevant violation of ``schema`` by ``instance``."""
    # Deferred: importing jsonschema costs ~2 s (its format checkers), paid only on reading.
    import jsonschema

    errors = list(jsonschema.Draft202012Validator(schema).iter_errors(instance))
    if errors:
        best = jsonschema.exceptions.best_match(errors)
        more = f" (and {len(errors) - 1} more problem(s))" if len(errors) > 1 else ""
        prefix = "" if where == "document" else f"{where}: "
        raise SeedError(prefix + _schema_message(best, top) + more)


def validate_against(schema, instance, where, top="document"):
    """Check ``instance`` against a JSON Schema; the first violation as a SeedError.

    Parameters
    ----------
    schema : dict
        A JSON Schema (draft 2020-12).
    instance : object
    where : str
        Names the document in messages ("document": no prefix).
    top : str
        Names the checked object itself when the violation is at its top.

    Raises
    ------
    SeedError
        ``"<where>: <entry path>: <what was expected>"``, with the count of further
        violations.
    """
    _check_schema(schema, instance, where, top)


def validate_document(doc, where="document"):
    """Check ``doc`` against the schema version and the shipped JSON Schema.

    Raises
    ------
    SeedError
        The first (most relevant) violation, naming its path; the count of further
        violations is appended.
    """
    _check_version(doc, where)
    _check_schema(load_schema(), doc, where)


def validate_scene_entries(entry, where="scene"):
    """Check a ``"scene"`` object alone (as sessions hold it) against the shipped JSON Schema.

    Parameters
    ----------
    entry : dict
        The scene part of a document (:func:`~diskexplorer.fitting.scene_codec.scene_entries`).
    where : str
        Names the object in messages (e.g. ``"session s.json: pins.0.scene"``).

    Raises
    ------
    SeedError
        As :func:`validate_document`: ``"<where>: rings.0.dust.kind: 'magic' is not one of
        ..."``, or ``"<where>: missing field 'rings'"`` for the object itself.
    """
    schema = load_schema()
    # The scene's sub-schema refers to the shared definitions by "#/$defs/...".
    _check_schema({"$defs": schema["$defs"], **schema["properties"]["scene"]}, entry, where, top="")


# --------------------------------------------------------------------------- meaning
def read_start(path_or_dict, check_path=None):
    """Read and check a starting-point document.

    Parameters
    ----------
    path_or_dict : str, os.PathLike or dict
        A JSON file written by :func:`write_start`, or the document itself.
    check_path : callable, optional
        ``check_path(path)`` is given every file the document names for its dust (κ
        tables, as absolute paths) before it is read, and returns the path to read or
        raises :class:`~diskexplorer.errors.DiskExplorerError` (a served explorer refuses
        files outside its folders this way).

    Returns
    -------
    StartingPoint

    Raises
    ------
    SeedError
        Syntax errors, a file larger than 32 MiB, nesting deeper than 32 levels, integers
        of more than 300 digits, a missing or newer ``"schema"``, schema violations
        (unknown keys, missing fields, wrong types), units that do not convert, values outside bounds or
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
        scene, params, free = scene_from_entries(doc["scene"], base_dir, check_path=check_path)
    except SeedError as exc:
        if where != "document":
            raise SeedError(f"{where}: {exc}") from None
        raise
    except DiskExplorerError as exc:   # e.g. a κ table a confined explorer may not read
        raise SeedError(f"{where}: {exc}") from None
    except (KeyError, TypeError, ValueError, AttributeError, IndexError, OverflowError) as exc:
        # The schema and the codec's checks should leave nothing for here: a last guard.
        raise SeedError(f"{where}: scene: cannot be read ({type(exc).__name__}: {exc})") from None
    # The document as held refers to its κ tables by absolute paths: written elsewhere,
    # it still leads to them (write_start re-expresses them from the new folder).
    doc["scene"] = absolute_table_paths(doc["scene"], base_dir)
    data = DataDescription.from_dict(doc.get("data"))
    return StartingPoint(scene=scene, free=free, parameters=params, data=data,
                         settings=dict(doc.get("settings") or {}), judgement=doc.get("judgement"),
                         document=doc, base_dir=base_dir)
