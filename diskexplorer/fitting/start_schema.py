"""The JSON Schema of starting-point documents, generated from the parameter declarations.

The shipped file ``start_schema.json`` is the output of :func:`build_schema` (a test
checks that the two agree, so a parameter added to a model class cannot be forgotten
in the schema). Regenerate it with::

    python -m diskexplorer.fitting.start_schema
"""
from __future__ import annotations

import json
from functools import lru_cache
from importlib import resources

from ..observables.scene import Scene
from ..physics.parameters import parameter_specs
from ..physics.ring import INNER_EDGES, TEMPERATURE_MODES, Ring
from ..physics.star import Star
from .paths import SCENE_GROUPS
from .dust_codec import SPECIES_KINDS
from .priors import PRIOR_KINDS

__all__ = ["SCHEMA_ID", "SCHEMA_VERSION", "SCHEMA_FILE", "MAX_ACCURACY", "build_schema", "load_schema"]

#: Version of the document layout this code writes and reads.
SCHEMA_VERSION = 1
#: Value of the document's ``"schema"`` field.
SCHEMA_ID = f"diskexplorer.start/{SCHEMA_VERSION}"
#: File name of the shipped schema (package data of :mod:`diskexplorer.fitting`).
SCHEMA_FILE = "start_schema.json"
#: Largest engine accuracy factor a document may ask for (radial nodes and frequency grid grow with it).
MAX_ACCURACY = 16


def _ref(name):
    return {"$ref": f"#/$defs/{name}"}


def _params(cls):
    return {name: {**_ref("parameter"), "description": f"{s.description} ({s.unit or 'dimensionless'})"}
            for name, s in parameter_specs(cls).items()}


def _object(props, required=None, description=None):
    out = {"type": "object", "properties": props, "required": sorted(required if required is not None else props),
           "additionalProperties": False}
    if description:
        out["description"] = description
    return out


def _ring_temperature_settings():
    """Optional ring keys of equilibrium temperatures (absent: the power law, inner edge fixed)."""
    return {
        "temperature_mode": {"enum": list(TEMPERATURE_MODES),
                             "description": "power_law: T_in (r/r_in)^-q; equilibrium: each species' "
                                            "optically thin radiative equilibrium in the star's light"},
        "inner_edge": {"enum": list(INNER_EDGES),
                       "description": "fixed: r_in; sublimation: the sublimation front of the most "
                                      "refractory species (equilibrium rings)"},
        "sublimation": {"type": "object", "additionalProperties": _ref("parameter"),
                        "description": "sublimation temperature (K) per species, as parameter entries"},
        "sublimation_front": {**_ref("quantity"),
                              "description": "derived on export: the inner radius in use when inner_edge "
                                             "is sublimation (not read back)"},
    }


def _nullable(schema):
    return {"anyOf": [{"type": "null"}, schema]}


def build_schema():
    """The JSON Schema (draft 2020-12) of a ``diskexplorer.start/1`` document, as a dict."""
    number = {"type": "number"}
    range_ = {"type": "array", "items": number, "minItems": 2, "maxItems": 2}
    strings = {"type": "array", "items": {"type": "string"}}
    defs = {
        "quantity": _object({"value": number, "unit": {"type": "string"}},
                            description="A number with an astropy unit string"),
        "prior": {
            "type": "object",
            "properties": {"kind": {"enum": list(PRIOR_KINDS)}, "mean": number,
                           "sigma": {"type": "number", "exclusiveMinimum": 0},
                           "concentration": {"type": "number", "exclusiveMinimum": 0}},
            "required": ["kind"], "additionalProperties": False,
            "allOf": [
                {"if": {"properties": {"kind": {"const": "normal"}}},
                 "then": {"required": ["kind", "mean", "sigma"]},
                 "else": {"not": {"anyOf": [{"required": ["mean"]}, {"required": ["sigma"]}]}}},
                {"if": {"properties": {"kind": {"const": "dirichlet"}}},
                 "then": {"required": ["kind", "concentration"]},
                 "else": {"not": {"required": ["concentration"]}}},
            ],
            "description": "Prior density within the bounds; mean and sigma in the entry's unit; "
                           "dirichlet (mass fractions only): the component's concentration alpha in its "
                           "ring's Dirichlet prior (1: flat)",
        },
        "parameter": _object(
            {"value": number, "unit": {"type": "string"}, "free": {"type": "boolean"},
             "bounds": range_, "prior": _ref("prior")},
            required=["value", "unit"],
            description="A model parameter: value and bounds in 'unit'; 'free' (default false) "
                        "marks it for fitting; bounds and prior default to the declared ones"),
        "component": _object(
            {"species": {"type": "string"},
             "fraction": {"anyOf": [{"type": "number", "minimum": 0}, _ref("parameter")],
                          "description": "mass fraction: a parameter entry (path rings.<k>.dust.<component>), "
                                         "or a number (fixed)"},
             "grain_size": _ref("quantity"), "shape": {"enum": ["dhs", "mie", "cde"]}},
            required=["species", "fraction"]),
        "dust": {
            "type": ["object", "null"],
            "properties": {"kind": {"enum": ["mixture", "power_law", "kappa_table"]}},
            "required": ["kind"],
            "allOf": [
                {"if": {"type": "object", "properties": {"kind": {"const": "mixture"}}},
                 "then": _object({"kind": {"const": "mixture"}, "grain_size": _ref("quantity"),
                                  "shape": {"enum": ["dhs", "mie", "cde"]},
                                  "components": {"type": "array", "items": _ref("component"),
                                                 "minItems": 1}})},
                {"if": {"type": "object", "properties": {"kind": {"const": "power_law"}}},
                 "then": _object({"kind": {"const": "power_law"}, "kappa_ref": _ref("quantity"),
                                  "wavelength_ref": _ref("quantity"), "beta": number})},
                {"if": {"type": "object", "properties": {"kind": {"const": "kappa_table"}}, "required": ["path"]},
                 "then": _object({"kind": {"const": "kappa_table"}, "path": {"type": "string"},
                                  "label": {"type": "string"}}, required=["kind", "path"])},
                {"if": {"type": "object", "properties": {"kind": {"const": "kappa_table"}},
                        "not": {"required": ["path"]}},
                 "then": _object({"kind": {"const": "kappa_table"}, "label": {"type": "string"},
                                  "wavelength": {"type": "array", "items": number, "minItems": 2},
                                  "kappa": {"type": "array", "items": number, "minItems": 2}},
                                 required=["kind", "wavelength", "kappa"])},
            ],
            "description": "null: optically thick; else a mixture, a power law or a κ table "
                           "(wavelength µm, κ cm2/g)",
        },
        "optical_constants": _object(
            {"name": {"type": "string"}, "source": {"type": "string"},
             "wavelength": {"type": "array", "items": number, "minItems": 2},
             "n": {"type": "array", "items": number, "minItems": 2},
             "k": {"type": "array", "items": number, "minItems": 2},
             "notes": strings},
            required=["wavelength", "n", "k"],
            description="Complex refractive index n + ik (k >= 0) against wavelength in um"),
        "species": {
            "type": "object",
            "properties": {"kind": {"enum": list(SPECIES_KINDS)}},
            "required": ["kind"],
            "allOf": [
                {"if": {"properties": {"kind": {"const": "kappa_table"}}},
                 "then": _object({"kind": {"const": "kappa_table"},
                                  "wavelength": {"type": "array", "items": number, "minItems": 2},
                                  "kappa": {"type": "array", "items": number, "minItems": 2},
                                  "source": {"type": "string"}, "description": {"type": "string"}},
                                 required=["kind", "wavelength", "kappa"])},
                {"if": {"properties": {"kind": {"const": "optical_constants"}}},
                 "then": _object({"kind": {"const": "optical_constants"}, "density": _ref("quantity"),
                                  "f_max": number,
                                  "constants": {"type": "array", "items": _ref("optical_constants"),
                                                "minItems": 1},
                                  "source": {"type": "string"}, "description": {"type": "string"}},
                                 required=["kind", "density", "constants"])},
            ],
            "description": "A species registered by the user (not built in): a fixed κ table (wavelength um, "
                           "κ cm2/g) or optical constants (one set per crystal axis, averaged) with the "
                           "bulk density; mixtures name it like a built-in species",
        },
        "photosphere": _object(
            {"wavelength": {"type": "array", "items": number, "minItems": 2},
             "flux": {"type": "array", "items": number, "minItems": 2},
             "reference_distance": _ref("quantity"), "label": {"type": "string"}},
            description="Tabulated photosphere: wavelength in um, flux in Jy at reference_distance"),
        "star": _object({**_params(Star), "uniform_disk": {"type": "boolean"},
                         "photosphere": _nullable(_ref("photosphere"))}),
        "ring": _object({"name": {"type": "string"}, "enabled": {"type": "boolean"}, **_params(Ring),
                         "dust": _ref("dust"), **_ring_temperature_settings()},
                        required=["name", "enabled", *_params(Ring), "dust"]),
        "oifits": _object({"path": {"type": "string", "minLength": 1}, "target": {"type": ["string", "null"]},
                           "bands": _nullable(strings), "wavelength_range": _nullable(range_),
                           "instruments": _nullable(strings),
                           "baseline_range": _nullable({"type": "array", "items": {"type": ["number", "null"]},
                                                        "minItems": 2, "maxItems": 2,
                                                        "description": "projected baseline [shortest, longest] "
                                                                       "in m; longest null: no upper limit"}),
                           "error_floor": _object({"vis2_relative": number, "vis2_absolute": number,
                                                   "phase": number, "amplitude_relative": number,
                                                   "combine": {"enum": ["max", "quadrature"]}},
                                                  required=[]),
                           "bandpass": {"type": "boolean",
                                        "description": "model averaged over each channel's EFF_BAND "
                                                       "(top-hat); absent: true"}},
                          required=["path"]),
        "data": _object({
            "oifits": {"type": "array", "items": _ref("oifits")},
            "photometry": _nullable(_object({"path": {"type": "string", "minLength": 1},
                                             "a_v": {"type": ["number", "null"]}, "r_v": number},
                                            required=["path"])),
            "spectrum": _nullable(_object({"path": {"type": "string", "minLength": 1},
                                           "wavelength_range": _nullable(range_),
                                           "a_v": {"type": ["number", "null"]}, "r_v": number},
                                          required=["path"])),
            "weights": {"type": "object", "additionalProperties": {"type": "number", "minimum": 0}},
        }, required=[]),
        "judgement": _object({
            "chi2": {"type": "object", "additionalProperties": number},
            "npoints": {"type": "object", "additionalProperties": {"type": "integer", "minimum": 0}},
            "weights": {"type": "object", "additionalProperties": number},
            "total": number, "n_total": {"type": "integer", "minimum": 0},
        }, required=["chi2", "total"], description="χ² of the scene against the data at export"),
    }
    scene_props = {}
    groups = {}
    for name, spec in parameter_specs(Scene).items():
        path = SCENE_GROUPS.get(name, name).split(".")
        if len(path) == 1:
            scene_props[path[0]] = {**_ref("parameter"), "description": spec.description}
        else:
            groups.setdefault(path[0], {})[path[1]] = {**_ref("parameter"), "description": spec.description}
    for group, props in groups.items():
        scene_props[group] = _object(props)
    scene_props["star"] = _nullable(_ref("star"))
    scene_props["rings"] = {"type": "array", "items": _ref("ring")}
    required = sorted(scene_props)
    scene_props["species"] = {"type": "object", "additionalProperties": _ref("species"),
                              "description": "species registered by the user that the rings' mixtures use, "
                                             "by name (absent: built-in species only)"}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "https://diskexplorer.invalid/schemas/start-1.json",
        "title": "diskexplorer starting point",
        "description": "A model state to start a fit from: every parameter with value, unit, "
                       "free/fixed, bounds and prior; model settings; the data it was judged "
                       "against and the χ² at export.",
        "type": "object",
        "properties": {
            "schema": {"const": SCHEMA_ID},
            "created": {"type": "string"},
            "software": {"type": "string"},
            "title": {"type": "string"},
            "scene": _object(scene_props, required=required),
            "settings": _object({"accuracy": {"type": "integer", "minimum": 1, "maximum": MAX_ACCURACY}},
                                required=[]),
            "data": _ref("data"),
            "judgement": _nullable(_ref("judgement")),
        },
        "required": ["schema", "scene"],
        "additionalProperties": False,
        "$defs": defs,
    }


@lru_cache(maxsize=1)
def load_schema():
    """The shipped schema (``start_schema.json``) as a dict."""
    text = resources.files(__package__).joinpath(SCHEMA_FILE).read_text(encoding="utf-8")
    return json.loads(text)


def _write():  # pragma: no cover - maintenance entry point
    path = resources.files(__package__).joinpath(SCHEMA_FILE)
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(build_schema(), fh, indent=2, ensure_ascii=False)
        fh.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":  # pragma: no cover
    _write()
