"""Saving and restoring an explorer session as JSON.

A session holds the scene, the paths the data came from, the filters, the view settings,
the pins and the starting-point set-up (free parameters, bounds, priors, weights). Data are stored as paths, not copies: restoring re-reads the files.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

from ...errors import DiskExplorerError
from ...observables.scene import Scene
from ...physics.ring import Ring
from ...physics.star import Star

__all__ = ["SESSION_SCHEMA", "scene_to_dict", "scene_from_dict", "session_to_dict", "write_session",
           "read_session", "VIEW_SETTINGS"]

#: Version of the session document; bump when its layout changes.
SESSION_SCHEMA = "diskexplorer-session/1"

#: State traits saved as view settings.
VIEW_SETTINGS = ("curve_position_angle", "image_wavelength", "profile_wavelength", "log_sed_x",
                 "log_sed_y", "log_vis2", "log_freq", "log_profiles",
                 # assumptions of the derived-quantities panel
                 "t_sub", "q_r", "gap_aspect_ratio", "gap_alpha")

_RING_FIELDS = ("r_in", "r_out", "t_in", "q", "sigma_in", "p", "c1", "s1", "name", "enabled")
# Written for equilibrium rings only; absent in older sessions (the power law).
_TEMPERATURE_FIELDS = ("temperature_mode", "inner_edge", "sublimation")


def _dust_to_dict(dust):
    if dust is None:
        return None
    as_dict = getattr(dust, "as_dict", None)
    if callable(as_dict):
        return {"kind": "mixture", **as_dict()}
    # Other opacities (tables, power laws) cannot be rebuilt from JSON yet: keep the label.
    return {"kind": "unsupported", "label": getattr(dust, "label", type(dust).__name__)}


def _dust_from_dict(d):
    if d is None:
        return None
    if d.get("kind") != "mixture":
        raise DiskExplorerError(f"session: dust {d.get('label', d)!r} cannot be restored from JSON "
                                "(only DustMix mixtures and opaque rings can)")
    from ...dust import DustMix
    fractions = [(tuple(k) if isinstance(k, list) else k, f) for k, f in d["fractions"]]
    return DustMix(fractions, grain_size=d["grain_size"], shape=d["shape"])


def scene_to_dict(scene):
    """Plain-data form of a :class:`Scene` (units: pc, K, R☉, M☉, au, g cm⁻², degrees)."""
    star = scene.star
    return {
        "distance": scene.distance, "inclination": scene.inclination,
        "position_angle": scene.position_angle, "extended_fraction": scene.extended_fraction,
        "star": None if star is None else {"t_eff": star.t_eff, "radius": float(star.radius),
                                           "mass": star.mass, "uniform_disk": star.uniform_disk},
        "rings": [{**{f: getattr(r, f) for f in _RING_FIELDS}, "dust": _dust_to_dict(r.dust),
                   **_temperature_settings(r)}
                  for r in scene.rings],
    }


def _temperature_settings(ring):
    """An equilibrium ring's mode, inner edge and sublimation overrides (nothing for a power law)."""
    if not ring.is_equilibrium:
        return {}
    return {"temperature_mode": ring.temperature_mode, "inner_edge": ring.inner_edge,
            "sublimation": dict(ring.sublimation)}


def scene_from_dict(d):
    """Rebuild a :class:`Scene` from :func:`scene_to_dict` output."""
    star = d.get("star")
    rings = tuple(Ring(**{f: r[f] for f in _RING_FIELDS + _TEMPERATURE_FIELDS if f in r},
                       dust=_dust_from_dict(r.get("dust")))
                  for r in d.get("rings", ()))
    return Scene(distance=d["distance"], inclination=d["inclination"], position_angle=d["position_angle"],
                 extended_fraction=d.get("extended_fraction", 0.0),
                 star=None if star is None else Star(star["t_eff"], star["radius"], mass=star["mass"],
                                                     uniform_disk=star.get("uniform_disk", True)),
                 rings=rings)


def _finite(x):
    return None if isinstance(x, float) and math.isinf(x) else x


def session_to_dict(state):
    """The session document of an :class:`~diskexplorer.app.state.ExplorerState`."""
    return {
        "schema": SESSION_SCHEMA,
        "scene": scene_to_dict(state.scene),
        "data": dict(state.data_sources),
        # OIFITS files whose channel-bandpass switch is off (the default is on).
        "bandpass_off": [d.source for d in state.data_sets if d.kind == "oifits" and d.source and not d.bandpass],
        "filters": {"bands": list(state.band_filter), "instruments": list(state.instrument_filter),
                    "baseline_range_m": [_finite(b) for b in state.baseline_range]},
        "view": {k: getattr(state, k) for k in VIEW_SETTINGS},
        "pins": [{"name": p["name"], "scene": scene_to_dict(p["scene"])} for p in state.pins],
        # free/fixed, bounds, priors and weights of the starting-point panel
        "fit_setup": dict(state.fit_setup),
    }


def write_session(path, document, overwrite=False):
    """Write ``document`` as JSON to ``path``.

    Raises
    ------
    FileExistsError
        If ``path`` exists and ``overwrite`` is False (the app then asks first).
    """
    path = Path(path).expanduser()
    if path.exists() and not overwrite:
        raise FileExistsError(str(path))
    path.write_text(json.dumps(document, indent=2, ensure_ascii=False))
    return path


def read_session(path):
    """Read a session document and check its schema.

    Raises
    ------
    DiskExplorerError
        If the file is not JSON or not a session of a known schema.
    """
    path = Path(path).expanduser()
    try:
        doc = json.loads(path.read_text())
    except (OSError, ValueError) as exc:
        raise DiskExplorerError(f"session {path}: cannot read JSON ({exc})") from None
    if not isinstance(doc, dict) or doc.get("schema") != SESSION_SCHEMA:
        raise DiskExplorerError(f"session {path}: schema {doc.get('schema') if isinstance(doc, dict) else None!r}"
                                f" is not {SESSION_SCHEMA!r}")
    return doc
