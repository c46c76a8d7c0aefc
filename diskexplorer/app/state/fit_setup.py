"""The starting-point set-up the explorer edits: free parameters, bounds, priors, weights.

The set-up is plain data in ``ExplorerState.fit_setup`` (so sessions save it); these
functions keep it well formed and read documents built from it. No widget library here.
"""
from __future__ import annotations

import functools
import math

from ...data.targets import choose_target, target_points
from ...fitting.data_description import describe_loaded_data
from ...fitting.priors import PRIOR_KINDS

__all__ = ["clean_fit_setup", "describe_state_data", "doc_free"]


def clean_fit_setup(setup):
    """A well-formed copy of a ``fit_setup`` dict; malformed entries are dropped.

    Parameters
    ----------
    setup : dict
        ``free`` (list of str), ``bounds`` (path → [lo, hi]), ``priors`` (path → dict with
        ``kind`` and, for a normal prior, ``mean`` and ``sigma``; for the Dirichlet prior of a
        mass fraction, ``concentration``), ``weights`` (kind → float).

    Returns
    -------
    dict
        With all four keys present; entries of the wrong type, non-finite numbers,
        σ ≤ 0 and negative weights are left out.
    """
    setup = setup if isinstance(setup, dict) else {}

    def mapping(key):
        value = setup.get(key)
        return value if isinstance(value, dict) else {}

    given = setup.get("free")
    free = [p for p in (given if isinstance(given, (list, tuple)) else []) if isinstance(p, str)]
    bounds = {}
    for p, b in mapping("bounds").items():
        try:
            lo, hi = (float(x) for x in b)
        except (TypeError, ValueError, OverflowError):
            continue
        if math.isfinite(lo) and math.isfinite(hi):
            bounds[str(p)] = [lo, hi]
    priors = {}
    for p, d in mapping("priors").items():
        if isinstance(d, dict) and d.get("kind") in PRIOR_KINDS:
            entry = {"kind": d["kind"]}
            if d["kind"] == "normal":
                try:
                    entry.update(mean=float(d["mean"]), sigma=float(d["sigma"]))
                except (KeyError, TypeError, ValueError, OverflowError):
                    continue
                if not (math.isfinite(entry["mean"]) and math.isfinite(entry["sigma"]) and entry["sigma"] > 0):
                    continue
            if d["kind"] == "dirichlet":
                try:
                    alpha = float(d.get("concentration", 1.0))
                except (TypeError, ValueError, OverflowError):
                    continue
                if not (math.isfinite(alpha) and alpha > 0):
                    continue
                entry["concentration"] = alpha
            priors[str(p)] = entry
    weights = {}
    for k, v in mapping("weights").items():
        try:
            weight = float(v)
        except (TypeError, ValueError, OverflowError):
            continue
        if math.isfinite(weight) and weight >= 0:
            weights[str(k)] = weight
    return {"free": list(dict.fromkeys(free)), "bounds": bounds, "priors": priors, "weights": weights}


def doc_free(doc):
    """Paths of the free parameters of a starting-point document (document order)."""
    out = []

    def walk(node, prefix):
        if isinstance(node, dict):
            if "free" in node and "value" in node:
                if node["free"]:
                    out.append(prefix)
                return
            if node.get("kind") == "mixture" and isinstance(node.get("components"), list):
                # A component's fraction sits at rings.<k>.dust.<component>, not at its list index.
                for c in node["components"]:
                    if isinstance(c, dict) and isinstance(c.get("fraction"), dict) and c["fraction"].get("free"):
                        out.append(f"{prefix}.{_component_name(c)}")
                return
            for k, v in node.items():
                walk(v, f"{prefix}.{k}" if prefix else k)
        elif isinstance(node, list):
            for k, v in enumerate(node):
                walk(v, f"{prefix}.{k}")

    walk(doc.get("scene", {}), "")
    return out


def _component_name(c):
    """The component part of a fraction's path (see :mod:`~diskexplorer.fitting.paths`)."""
    name = str(c.get("species"))
    if "shape" not in c and "grain_size" not in c:
        return name
    size = c.get("grain_size")
    if c.get("shape") == "cde" or size is None:
        return f"{name}({c.get('shape')})"
    return f"{name}({c.get('shape')},{float(size['value'])!r}um)"


def describe_state_data(state, weights=None):
    """The data the explorer judges the model against, as a :class:`~diskexplorer.fitting.DataDescription`.

    Parameters
    ----------
    state : ExplorerState
        Its ``data_sources`` name the files; its band, instrument and baseline filters and
        each OIFITS data set's channel-bandpass switch are recorded per file
        (:func:`~diskexplorer.fitting.data_description.describe_loaded_data`).
    weights : dict, optional
        Weight per data kind.

    Returns
    -------
    (DataDescription, list of str)
        The description and notes on what it cannot record (data that were not read
        from files).
    """
    src = state.data_sources or {}
    off = [d.source for d in state.data_sets if d.kind == "oifits" and not d.bandpass]
    notes = [f"the loaded {kind} data were not read from a file and are not named"
             for kind, held in (("oifits", state.observations), ("photometry", state.photometry),
                                ("spectrum", state.spectrum)) if held is not None and not src.get(kind)]
    # The target judged: the one chosen, or the one chosen automatically now (so a fit
    # judges the same target even if the files' categories are read otherwise later).
    automatic = _automatic_target(state.observations)
    target = (state.target or automatic) if automatic is not None else None
    return describe_loaded_data(src, state.band_filter, state.instrument_filter, state.baseline_range, off,
                                weights, target=target), notes


@functools.lru_cache(maxsize=2)
def _automatic_target(observations):
    """The target chosen automatically when ``observations`` hold several, else None.

    Cached by the data's identity: the starting-point page describes the data on every
    model change while it shows, and the data change only when they are loaded.
    """
    if len(target_points(observations)) < 2:
        return None
    return choose_target(observations)[0]
