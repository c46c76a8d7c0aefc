"""Export the current model state as a starting-point document for a formal fit.

Document layout (``"schema": "diskexplorer.start/1"``; JSON Schema in
``start_schema.json``)::

    {
      "schema": "diskexplorer.start/1",
      "created": "2025-01-01T12:00:00Z",
      "software": "diskexplorer 0.1.0",
      "scene": {
        "distance": {"value": 140.0, "unit": "pc", "free": false,
                     "bounds": [10.0, 2000.0], "prior": {"kind": "log-uniform"}},
        "geometry": {"inclination": {...}, "position_angle": {...}},
        "extended": {"fraction": {...}},
        "star": {"t_eff": {...}, "radius": {...}, "mass": {...},
                 "uniform_disk": true, "photosphere": null},
        "rings": [
          {"name": "inner", "enabled": true,
           "r_in": {"value": 0.3, "unit": "au", "free": true, "bounds": [0.02, 200.0],
                    "prior": {"kind": "log-uniform"}},
           "t_in": {"value": 1500.0, "unit": "K", "free": true, "bounds": [50.0, 2500.0],
                    "prior": {"kind": "normal", "mean": 1500.0, "sigma": 100.0}},
           ...,
           "dust": {"kind": "mixture", ...}}
        ]
      },
      "settings": {"accuracy": 1},
      "data": {"oifits": [...], "photometry": {...}, "spectrum": null, "weights": {}},
      "judgement": {"chi2": {"vis2": 812.3, ...}, "npoints": {...}, "weights": {...},
                    "total": 1032.9, "n_total": 950}
    }

Each parameter entry sits at its parameter path (:mod:`diskexplorer.fitting.paths`):
``rings.0.t_in`` is ``doc["scene"]["rings"][0]["t_in"]``. Values and bounds are in the
entry's ``unit``; on export that is the declared unit of the parameter.
"""
from __future__ import annotations

import datetime as _dt
import json
import math
import os

from ..errors import SeedError
from .data_description import describe_data
from .dust_codec import table_paths_from
from .scene_codec import scene_entries
from .paths import canonical_path
from .start_schema import MAX_ACCURACY, SCHEMA_ID
from .vector import FreeParameter, check_fraction_groups

__all__ = ["export_start", "write_start", "document_entry"]


def _version():
    try:
        from importlib.metadata import version

        return version("diskexplorer")
    except Exception:  # not installed (running from a checkout)
        return "unknown"


def _judgement(result):
    if result is None:
        return None
    chi2 = {k: float(v) for k, v in result.chi2.items() if math.isfinite(v)}
    return {"chi2": chi2, "npoints": {k: int(n) for k, n in result.npoints.items()},
            "weights": {k: float(w) for k, w in result.weights.items()},
            "total": float(result.total), "n_total": int(result.n_total)}


def export_start(scene, free=(), bounds=None, priors=None, data=None, comparison_result=None,
                 accuracy=1, title=None):
    """The starting-point document of ``scene`` (a JSON-ready dict).

    Parameters
    ----------
    scene : Scene
        The current state; not modified.
    free : sequence of str or FreeParameter
        Paths of the parameters left free for the fit (``rings[inner].t_in`` accepted);
        every other parameter is written as fixed. FreeParameter entries (e.g. from
        :func:`refine` or a :class:`StartingPoint`) bring their bounds and prior.
    bounds : mapping of str to (float, float), optional
        Path → (lo, hi) in the parameter's declared unit, for free or fixed parameters.
        Default: the declared bounds (``ParameterSpec.bounds``), widened to hold the
        current value. Bounds must lie in the physically valid range.
    priors : mapping of str to prior, optional
        Path → ``"uniform"``, ``"log-uniform"``, ``("normal", mean, sigma)``, a dict
        ``{"kind": ..., "mean": ..., "sigma": ...}`` or a :class:`Prior` (declared units).
        Default: log-uniform for parameters declared on a log scale, else uniform.
    data : dict, DataDescription or Comparison, optional
        The data the scene was judged against (see
        :mod:`diskexplorer.fitting.data_description`).
    comparison_result : ComparisonResult, optional
        Its χ² per data kind and total are recorded under ``"judgement"``.
    accuracy : int
        Engine accuracy factor to use when the document is evaluated (1 to
        :data:`~diskexplorer.fitting.start_schema.MAX_ACCURACY`).
    title : str, optional
        Free text for the reader.

    Returns
    -------
    dict
        Validates against the shipped schema (``start_schema.json``).

    Raises
    ------
    SeedError
        Unknown paths, bounds outside the valid range or not holding the current
        value, priors that do not fit their bounds (a mass fraction takes a Dirichlet
        prior, nothing else does), a ring with a single free mass fraction, dust the
        document cannot describe.

    Notes
    -----
    Mass fractions are entries at ``rings.<k>.dust.<component>`` (the component's
    ``"fraction"``); free ones share their ring's Dirichlet prior, each entry holding its
    concentration (``priors={path: ("dirichlet", α)}``; default α = 1, flat).

    Examples
    --------
    >>> doc = export_start(scene, free=["rings.0.r_in", "geometry.inclination"],
    ...                    bounds={"geometry.inclination": (20, 60)})       # doctest: +SKIP
    >>> write_start("start.json", doc)                                     # doctest: +SKIP
    """
    given_bounds, given_priors = {}, {}
    for item in free:
        if isinstance(item, FreeParameter):  # keep the bounds and prior it carries
            given_bounds[item.path] = (item.lo, item.hi)
            given_priors[item.path] = item.prior
    free = {canonical_path(scene, p.path if isinstance(p, FreeParameter) else p) for p in free}
    check_fraction_groups(sorted(free))   # a lone free fraction of a ring could not move
    given_bounds.update({canonical_path(scene, k): v for k, v in (bounds or {}).items()})
    given_priors.update({canonical_path(scene, k): v for k, v in (priors or {}).items()})
    bounds, priors = given_bounds, given_priors
    if not (isinstance(accuracy, int) and 1 <= accuracy <= MAX_ACCURACY):
        raise SeedError(f"settings.accuracy: {accuracy!r}; expected an integer from 1 to {MAX_ACCURACY}")
    doc_scene = scene_entries(scene, free, bounds, priors)
    doc = {"schema": SCHEMA_ID,
           "created": _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat().replace("+00:00", "Z"),
           "software": f"diskexplorer {_version()}"}
    if title:
        doc["title"] = str(title)
    doc.update(scene=doc_scene, settings={"accuracy": accuracy}, data=describe_data(data).as_dict(),
               judgement=_judgement(comparison_result))
    return doc


def document_entry(doc, path):
    """The parameter entry of a document at a canonical parameter ``path`` (a dict).

    A mass fraction ``rings.<k>.dust.<component>`` is the ``"fraction"`` of that component
    in the ring's ``"dust"`` entry.
    """
    from .paths import component_key, fraction_ring, is_fraction_path

    if is_fraction_path(path):
        key = component_key(path)
        dust = doc["scene"]["rings"][fraction_ring(path)]["dust"]
        name, size, shape = (key, None, None) if isinstance(key, str) else key
        for c in dust["components"]:
            own = "shape" in c or "grain_size" in c
            if c["species"] != name or own != (not isinstance(key, str)):
                continue
            if own and (c.get("shape", dust["shape"]) != shape or
                        (size is not None and round(float(c["grain_size"]["value"]), 9) != size)):
                continue
            return c["fraction"]
        raise KeyError(path)
    node = doc["scene"]
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


def write_start(path, doc, overwrite=False):
    """Write a starting-point document as JSON (UTF-8, indented).

    Parameters
    ----------
    path : str or os.PathLike
    doc : dict
        From :func:`export_start` (or a :class:`StartingPoint`'s ``document``); not
        modified. κ tables given by a relative path (relative to the current folder, where
        they were read) are written relative to the document's folder, against which
        :func:`~diskexplorer.fitting.read_start` resolves them; absolute paths stay.
    overwrite : bool
        Replace an existing file. Default False: an existing file is never touched.

    Returns
    -------
    str
        The path written.

    Raises
    ------
    FileExistsError
        If ``path`` exists and ``overwrite`` is False.
    SeedError
        If the document holds non-finite numbers (JSON has no NaN or infinity).
    """
    path = os.fspath(path)
    # Relative κ-table paths refer to the current folder in memory and to the
    # document's folder in the file.
    if "scene" in doc:
        doc = {**doc, "scene": table_paths_from(doc["scene"], os.path.dirname(os.path.abspath(path)))}
    try:
        text = json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)
    except ValueError as exc:
        raise SeedError(f"{path}: cannot write the starting point: {exc}") from None
    mode = "w" if overwrite else "x"
    try:
        with open(path, mode, encoding="utf-8") as fh:
            fh.write(text + "\n")
    except FileExistsError:
        raise FileExistsError(f"{path}: a file of that name exists already; choose another name or "
                              "pass overwrite=True to replace it") from None
    return path
