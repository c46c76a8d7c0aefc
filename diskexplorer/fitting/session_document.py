"""Explorer sessions as JSON documents: the scene, the data's paths, filters, view, pins, set-up.

Layout (``"schema": "diskexplorer-session/2"``)::

    {"schema": "diskexplorer-session/2",
     "scene": {...},                     # the scene codec's entries (scene_codec.py)
     "data": {"oifits": [paths], "photometry": path or null, "spectrum": path or null},
     "bandpass_off": [OIFITS paths whose channel average is switched off],
     "filters": {"bands": [...], "instruments": [...], "baseline_range_m": [lo, hi or null],
                 "target": name or ""},        # "": chosen automatically
     "view": {setting: value},           # VIEW_SETTINGS
     "pins": [{"name": str, "scene": {...}}],
     "fit_setup": {"free": [...], "bounds": {...}, "priors": {...}, "weights": {...}}}

The scene and each pin are written with the same codec as starting points, so a session
keeps every dust form (mixtures with per-component sizes and shapes, κ tables by path or
inline, power-law opacities, registered species with their data), photosphere tables and the
temperature settings of equilibrium rings. Data are stored as paths, not copies:
restoring re-reads the files. A κ table read from a file is stored by its path: an
absolute one as given, a relative one relative to the session file's folder
(:func:`write_session`), against which :func:`decode_session` resolves it. Sessions of
the first layout (``diskexplorer-session/1``, a plain scene form that kept mixtures only)
are still read. Reading is bounded (:mod:`~diskexplorer.fitting.json_limits`) and the whole
layout is checked against a JSON Schema, each scene against the starting point's, before
any field is used.
"""
from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import DiskExplorerError, SeedError
from ..observables.scene import Scene
from ..physics.ring import Ring
from ..physics.star import Star
from .dust_codec import table_paths_from
from .scene_codec import scene_entries, scene_from_entries
from .json_limits import check_json_tree, read_json_document
from .start_import import validate_against, validate_scene_entries

__all__ = ["SESSION_SCHEMA", "VIEW_SETTINGS", "SessionContents", "session_document", "write_session",
           "read_session", "decode_session"]

#: Version of the session document; bump when its layout changes.
SESSION_SCHEMA = "diskexplorer-session/2"
_READABLE = ("diskexplorer-session/1", SESSION_SCHEMA)

#: The explorer's view settings a session keeps (with the derived quantities' assumptions).
VIEW_SETTINGS = ("curve_position_angle", "image_wavelength", "profile_wavelength", "log_sed_x",
                 "log_sed_y", "log_vis2", "log_freq", "log_profiles",
                 "t_sub", "q_r", "gap_aspect_ratio", "gap_alpha")


@dataclass(frozen=True)
class SessionContents:
    """What a session document holds, decoded.

    Attributes
    ----------
    scene : Scene
    pins : tuple of (str, Scene)
        Pinned states by name.
    data : dict
        ``{"oifits": [paths], "photometry": path or None, "spectrum": path or None}``.
    bandpass_off : tuple of str
        OIFITS paths whose model is taken at the channel centres.
    bands, instruments : tuple of str
        Filters (empty keeps all).
    baseline_range : (float, float)
        Projected baselines kept, m (``(0, inf)``: all).
    target : str
        The target judged ("": chosen automatically).
    view : dict
        Values of :data:`VIEW_SETTINGS`.
    fit_setup : dict
        The starting-point set-up as stored (cleaned by the explorer).
    """

    scene: Scene
    pins: tuple = ()
    data: dict = field(default_factory=dict)
    bandpass_off: tuple = ()
    bands: tuple = ()
    instruments: tuple = ()
    baseline_range: tuple = (0.0, math.inf)
    target: str = ""
    view: dict = field(default_factory=dict)
    fit_setup: dict = field(default_factory=dict)


def _finite(x):
    return None if isinstance(x, float) and math.isinf(x) else x


def session_document(scene, *, data=None, bandpass_off=(), bands=(), instruments=(),
                     baseline_range=(0.0, math.inf), target="", view=None, pins=(), fit_setup=None):
    """A session document (a JSON-ready dict; see the module docstring).

    Parameters
    ----------
    scene : Scene
    data : dict, optional
        Paths of the data (``oifits`` list, ``photometry``, ``spectrum``).
    bandpass_off : sequence of str
    bands, instruments : sequence of str
    baseline_range : (float, float)
        m; an infinite upper end is written as null.
    target : str
        The target judged ("": chosen automatically).
    view : dict, optional
        View settings (only :data:`VIEW_SETTINGS` are kept).
    pins : sequence of (str, Scene)
    fit_setup : dict, optional

    Raises
    ------
    SeedError
        Dust or values the codec cannot write.
    """
    return {
        "schema": SESSION_SCHEMA,
        "scene": scene_entries(scene),
        "data": dict(data or {}),
        "bandpass_off": list(bandpass_off),
        "filters": {"bands": list(bands), "instruments": list(instruments),
                    "baseline_range_m": [_finite(float(b)) for b in baseline_range], "target": str(target or "")},
        "view": {k: v for k, v in (view or {}).items() if k in VIEW_SETTINGS},
        "pins": [{"name": name, "scene": scene_entries(s)} for name, s in pins],
        "fit_setup": dict(fit_setup or {}),
    }


def _table_paths_from(document, folder):
    """``document`` with each κ table's relative path re-expressed from ``folder`` (a new dict).

    See :func:`~diskexplorer.fitting.dust_codec.table_paths_from`; here for the scene and
    every pin's scene.
    """
    out = {**document, "scene": table_paths_from(document.get("scene"), folder)}
    if isinstance(document.get("pins"), list):
        out["pins"] = [{**p, "scene": table_paths_from(p.get("scene"), folder)} if isinstance(p, dict) else p
                       for p in document["pins"]]
    return out


def write_session(path, document, overwrite=False):
    """Write ``document`` as JSON to ``path``.

    κ tables stored by a relative path (relative to the current folder, where they were
    read) are written relative to the session file's folder, which
    :func:`decode_session` resolves them against (``base_dir``); absolute paths stay.

    Parameters
    ----------
    path : str or os.PathLike
    document : dict
        From :func:`session_document`; not modified.
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    FileExistsError
        If ``path`` exists and ``overwrite`` is False (the explorer then asks first).
    SeedError
        If the document holds non-finite numbers (JSON has none).
    """
    path = Path(path).expanduser()
    document = _table_paths_from(document, os.path.dirname(os.path.abspath(path)))
    try:
        text = json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False)
    except ValueError as exc:
        raise SeedError(f"session {path}: cannot write it: {exc}") from None
    with open(path, "w" if overwrite else "x", encoding="utf-8") as fh:
        fh.write(text + "\n")
    return path


def _session_layout():
    """JSON Schema of a session document around its scenes (scenes: :func:`validate_scene_entries`)."""
    strings = {"type": ["array", "null"], "items": {"type": "string"}}
    positive = {"type": "number", "exclusiveMinimum": 0}
    view = {k: {"type": "boolean"} if k.startswith("log_") else ({"type": "number"} if k == "curve_position_angle"
                                                                  else positive)
            for k in VIEW_SETTINGS}
    return {
        "type": "object",
        "properties": {
            "schema": {"enum": list(_READABLE)},
            "scene": {"type": "object"},
            "data": {"type": ["object", "null"],
                     "properties": {"oifits": {"anyOf": [{"type": "string"}, strings]},
                                    "photometry": {"type": ["string", "null"]},
                                    "spectrum": {"type": ["string", "null"]}},
                     "additionalProperties": False},
            "bandpass_off": strings,
            "filters": {"type": ["object", "null"],
                        "properties": {"bands": strings, "instruments": strings,
                                       "baseline_range_m": {"type": ["array", "null"],
                                                            "items": {"type": ["number", "null"], "minimum": 0},
                                                            "minItems": 2, "maxItems": 2},
                                       "target": {"type": ["string", "null"]}},
                        "additionalProperties": False},
            # Other keys of "view" are settings of another version: ignored.
            "view": {"type": ["object", "null"], "properties": view},
            "pins": {"type": ["array", "null"],
                     "items": {"type": "object",
                               "properties": {"name": {"type": "string"}, "scene": {"type": "object"}},
                               "required": ["scene"], "additionalProperties": False}},
            "fit_setup": {"type": ["object", "null"],
                          "properties": {"free": strings,
                                         "bounds": {"type": "object",
                                                    "additionalProperties": {"type": "array",
                                                                             "items": {"type": "number"},
                                                                             "minItems": 2, "maxItems": 2}},
                                         "priors": {"type": "object", "additionalProperties": {"type": "object"}},
                                         "weights": {"type": "object",
                                                     "additionalProperties": {"type": "number", "minimum": 0}}},
                          "additionalProperties": False},
        },
        "required": ["schema", "scene"],
    }


def _legacy_scene_schema():
    """JSON Schema of the plain scene form of ``diskexplorer-session/1``."""
    number = {"type": "number"}

    def null_or(schema):
        return {"anyOf": [{"type": "null"}, schema]}

    key = {"anyOf": [{"type": "string"},
                     {"type": "array", "prefixItems": [{"type": "string"}, {"type": ["number", "null"]},
                                                       {"type": "string"}], "minItems": 3, "maxItems": 3}]}
    dust = {"type": "object", "properties": {
                "kind": {"type": "string"},
                "fractions": {"type": "array", "items": {"type": "array", "prefixItems": [key, number],
                                                         "minItems": 2, "maxItems": 2}},
                "grain_size": number, "shape": {"type": "string"}},
            "required": ["kind"],
            "if": {"properties": {"kind": {"const": "mixture"}}},
            "then": {"required": ["kind", "fractions", "grain_size", "shape"]}}
    ring = {"type": "object", "properties": {
        **{f: number for f in ("r_in", "r_out", "t_in", "q", "sigma_in", "p", "c1", "s1")},
        "name": {"type": "string"}, "enabled": {"type": "boolean"}, "temperature_mode": {"type": "string"},
        "inner_edge": {"type": "string"}, "sublimation": {"type": "object", "additionalProperties": number},
        "dust": null_or(dust)}}
    star = {"type": "object", "properties": {"t_eff": number, "radius": number, "mass": number,
                                             "uniform_disk": {"type": "boolean"}},
            "required": ["t_eff", "radius", "mass"]}
    return {"type": "object",
            "properties": {"distance": number, "inclination": number, "position_angle": number,
                           "extended_fraction": number, "star": null_or(star),
                           "rings": {"type": "array", "items": ring}},
            "required": ["distance", "inclination", "position_angle"]}


def read_session(path):
    """Read a session document and check its size, nesting and schema tag.

    Raises
    ------
    SeedError
        If the file cannot be read, is larger than 32 MiB, is not JSON, is nested
        deeper than 32 levels, holds integers of more than 300 digits or non-finite
        numbers (:mod:`~diskexplorer.fitting.json_limits`), or is not a session of a
        known schema. The message names the file.
    """
    path = Path(path).expanduser()
    doc = read_json_document(path, "session file", where=f"session {path}")
    schema = doc.get("schema") if isinstance(doc, dict) else None
    if schema not in _READABLE:
        raise SeedError(f"session {path}: schema {schema!r:.80} is not one of {', '.join(map(repr, _READABLE))}")
    return doc


def decode_session(document, base_dir=None, where="session", check_path=None):
    """The contents of a session document (either layout).

    The whole document is checked (size and nesting, then its layout against a JSON
    Schema, then each scene against the starting-point schema) before any field is used.

    Parameters
    ----------
    document : dict
        As :func:`read_session` returns it.
    base_dir : str or os.PathLike, optional
        Folder that relative κ-table paths refer to (the session file's folder).
    where : str
        Names the document in messages (its path).
    check_path : callable, optional
        Given each κ table's absolute path before it is read (see
        :func:`~diskexplorer.fitting.read_start`).

    Returns
    -------
    SessionContents

    Raises
    ------
    SeedError
        A scene, pin, filter or setting that cannot be read; the message names the
        document and the path of the bad entry (``"session s.json: filters.bands:
        expected an array or null, got a number 5"``).
    """
    check_json_tree(document, where)
    if not isinstance(document, dict):
        raise SeedError(f"{where}: a session is a JSON object")
    validate_against(_session_layout(), document, where)
    base_dir = None if base_dir is None else os.fspath(base_dir)
    legacy = document.get("schema") == "diskexplorer-session/1"

    def scene_of(entry, at):
        # Names the bad entry and what was expected before anything is built.
        if legacy:
            validate_against(_legacy_scene_schema(), entry, f"{where}: {at}", top="")
        else:
            validate_scene_entries(entry, f"{where}: {at}")
        try:
            if legacy:
                return _legacy_scene(entry)
            return scene_from_entries(entry, base_dir, check_path=check_path)[0]
        except DiskExplorerError as exc:   # also a κ table a confined explorer may not read
            raise SeedError(f"{where}: {at}: {exc}") from None
        except (KeyError, TypeError, ValueError, AttributeError, IndexError, OverflowError) as exc:
            raise SeedError(f"{where}: {at}: cannot be read ({type(exc).__name__}: {exc})") from None

    scene = scene_of(document["scene"], "scene")
    pins = tuple((str(p.get("name", f"pin {k + 1}")), scene_of(p["scene"], f"pins.{k}.scene"))
                 for k, p in enumerate(document.get("pins") or []))
    data = document.get("data") or {}
    oifits = data.get("oifits") or []
    data = {"oifits": [oifits] if isinstance(oifits, str) else list(oifits),
            "photometry": data.get("photometry"), "spectrum": data.get("spectrum")}
    filters = document.get("filters") or {}
    lo, hi = filters.get("baseline_range_m") or (0.0, None)
    baseline_range = (float(lo or 0.0), math.inf if hi is None else float(hi))
    if not baseline_range[0] <= baseline_range[1]:
        raise SeedError(f"{where}: filters.baseline_range_m: [{lo}, {hi}]: expected [shortest, longest or null] "
                        "in m, shortest first")
    view = {k: v for k, v in (document.get("view") or {}).items() if k in VIEW_SETTINGS}
    return SessionContents(scene=scene, pins=pins, data=data,
                           bandpass_off=tuple(document.get("bandpass_off") or ()),
                           bands=tuple(filters.get("bands") or ()), instruments=tuple(filters.get("instruments") or ()),
                           baseline_range=baseline_range, target=str(filters.get("target") or ""), view=view,
                           fit_setup=dict(document.get("fit_setup") or {}))


# Fields of the first layout's plain scene form (sessions written before the codec).
_LEGACY_RING_FIELDS = ("r_in", "r_out", "t_in", "q", "sigma_in", "p", "c1", "s1", "name", "enabled",
                       "temperature_mode", "inner_edge", "sublimation")


def _legacy_scene(d):
    """The scene of a ``diskexplorer-session/1`` document (mixtures or opaque rings only)."""
    from ..dust import DustMix

    def dust(entry, where):
        if entry is None:
            return None
        if entry.get("kind") != "mixture":
            raise SeedError(f"{where}: {entry.get('label', entry)!r} was not saved by the first session layout "
                            "(it kept mixtures and opaque rings only); give the ring its dust again and "
                            "save the session anew")
        fractions = [(tuple(k) if isinstance(k, list) else k, f) for k, f in entry["fractions"]]
        return DustMix(fractions, grain_size=entry["grain_size"], shape=entry["shape"])

    star = d.get("star")
    rings = tuple(Ring(**{f: r[f] for f in _LEGACY_RING_FIELDS if f in r}, dust=dust(r.get("dust"), f"rings.{k}.dust"))
                  for k, r in enumerate(d.get("rings", ())))
    return Scene(distance=d["distance"], inclination=d["inclination"], position_angle=d["position_angle"],
                 extended_fraction=d.get("extended_fraction", 0.0),
                 star=None if star is None else Star(star["t_eff"], star["radius"], mass=star["mass"],
                                                     uniform_disk=star.get("uniform_disk", True)),
                 rings=rings)
