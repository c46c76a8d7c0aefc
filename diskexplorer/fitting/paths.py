"""Readable, stable addresses of scene parameters ("parameter paths").

Every scalar parameter declared with :func:`~diskexplorer.physics.parameters.parameter`
on :class:`~diskexplorer.observables.scene.Scene`, :class:`~diskexplorer.physics.star.Star`
and :class:`~diskexplorer.physics.ring.Ring` has one canonical path, a dot-separated
string:

=========================  ===============================================
path                       parameter
=========================  ===============================================
``distance``               Scene.distance (pc)
``geometry.inclination``   Scene.inclination (deg)
``geometry.position_angle`` Scene.position_angle (deg, east of north)
``extended.fraction``      Scene.extended_fraction (dimensionless)
``star.<name>``            Star parameter, e.g. ``star.t_eff`` (K), ``star.radius``
``rings.<k>.<name>``       parameter of ring number k (0-based), e.g. ``rings.0.t_in``
``rings.<k>.sublimation.<species>``  sublimation temperature (K) of a species of an
                           equilibrium ring, e.g. ``rings.0.sublimation.iron``
=========================  ===============================================

Sublimation temperatures have paths only in rings with ``temperature_mode="equilibrium"``
and only for species whose names are identifiers (a species held twice, named with its
size, has none); the temperature mode and the inner-edge choice are settings, not
parameters.

On input, a ring may also be addressed by its (unique) name in brackets:
``rings[inner].r_in`` means ``rings.0.r_in`` if ring 0 is called ``"inner"``;
:func:`canonical_path` turns either form into the numbered one, which is what documents,
vectors and error messages use. Paths are the same inside a starting-point document:
``rings.0.t_in`` is the entry ``document["scene"]["rings"][0]["t_in"]``.

The list of paths is derived from the parameter declarations (STYLE §3): a parameter
added to a model class gets a path without any change here.
"""
from __future__ import annotations

import re
from dataclasses import replace

from ..errors import SeedError
from ..observables.scene import Scene
from ..physics.parameters import parameter_specs
from ..physics.ring import SUBLIMATION_TEMPERATURE_SPEC, Ring
from ..physics.star import Star

__all__ = ["SCENE_GROUPS", "parameter_paths", "canonical_path", "spec_for", "get_value",
           "set_values", "sublimation_species"]

#: Scene field → path. Scene fields not listed here get their field name as path.
SCENE_GROUPS = {
    "distance": "distance",
    "inclination": "geometry.inclination",
    "position_angle": "geometry.position_angle",
    "extended_fraction": "extended.fraction",
}
_SCENE_FIELDS = None

_RING_NUMBER = re.compile(r"^rings\.(\d+)\.([A-Za-z_]\w*)$")
_RING_NAME = re.compile(r"^rings\[([^\]]+)\]\.([A-Za-z_]\w*)$")
_STAR = re.compile(r"^star\.([A-Za-z_]\w*)$")
_RING_SUB_NUMBER = re.compile(r"^rings\.(\d+)\.sublimation\.([A-Za-z_]\w*)$")
_RING_SUB_NAME = re.compile(r"^rings\[([^\]]+)\]\.sublimation\.([A-Za-z_]\w*)$")
_IDENTIFIER = re.compile(r"^[A-Za-z_]\w*$")


def sublimation_species(ring):
    """Species of ``ring`` whose sublimation temperatures are parameters (equilibrium rings only)."""
    if not ring.is_equilibrium:
        return []
    return [p.name for p in ring.species() if _IDENTIFIER.match(p.name)]


def _scene_fields():
    global _SCENE_FIELDS
    if _SCENE_FIELDS is None:
        _SCENE_FIELDS = {SCENE_GROUPS.get(name, name): name for name in parameter_specs(Scene)}
    return _SCENE_FIELDS


def parameter_paths(scene):
    """Canonical paths of every declared scalar parameter of ``scene``, in document order.

    Parameters
    ----------
    scene : Scene

    Returns
    -------
    list of str
        Scene parameters, then the star's (if any), then each ring's.
    """
    out = list(_scene_fields())
    if scene.star is not None:
        out += [f"star.{name}" for name in parameter_specs(Star)]
    for k, ring in enumerate(scene.rings):
        out += [f"rings.{k}.{name}" for name in parameter_specs(Ring)]
        out += [f"rings.{k}.sublimation.{name}" for name in sublimation_species(ring)]
    return out


def canonical_path(scene, path):
    """The numbered form of ``path`` for ``scene``.

    Parameters
    ----------
    scene : Scene
    path : str
        A canonical path or a ring addressed by name (``rings[inner].t_in``).

    Returns
    -------
    str

    Raises
    ------
    SeedError
        Unknown path, ring index out of range, unknown or ambiguous ring name, or a
        parameter the addressed object does not declare.
    """
    if not isinstance(path, str):
        raise SeedError(f"parameter path {path!r}: expected a string such as 'rings.0.t_in'")
    path = path.strip()
    if path in _scene_fields():
        return path
    m = _STAR.match(path)
    if m:
        if scene.star is None:
            raise SeedError(f"{path}: the scene has no star")
        if m.group(1) not in parameter_specs(Star):
            raise SeedError(f"{path}: unknown star parameter {m.group(1)!r}; known: "
                            f"{', '.join(parameter_specs(Star))}")
        return path
    m = _RING_SUB_NAME.match(path) or _RING_SUB_NUMBER.match(path)
    if m:
        ring_path = canonical_path(scene, path.rsplit(".sublimation.", 1)[0] + ".r_in")
        k = int(ring_path.split(".")[1])
        species = sublimation_species(scene.rings[k])
        if m.group(2) not in species:
            why = ("its temperature mode is the power law" if not scene.rings[k].is_equilibrium
                   else f"its species with sublimation parameters: {', '.join(species) or 'none'}")
            raise SeedError(f"{path}: ring {k} has no sublimation temperature {m.group(2)!r} ({why})")
        return f"rings.{k}.sublimation.{m.group(2)}"
    m = _RING_NAME.match(path)
    if m:
        name, param = m.group(1), m.group(2)
        hits = [k for k, ring in enumerate(scene.rings) if ring.name == name]
        if not hits:
            raise SeedError(f"{path}: no ring named {name!r}; rings: "
                            f"{', '.join(repr(r.name) for r in scene.rings) or 'none'}")
        if len(hits) > 1:
            raise SeedError(f"{path}: ring name {name!r} is ambiguous (rings {hits}); use rings.<k>.{param}")
        path = f"rings.{hits[0]}.{param}"
    m = _RING_NUMBER.match(path)
    if m:
        k, param = int(m.group(1)), m.group(2)
        if k >= len(scene.rings):
            raise SeedError(f"{path}: the scene has {len(scene.rings)} ring(s) (rings.0 … "
                            f"rings.{len(scene.rings) - 1})")
        if param not in parameter_specs(Ring):
            raise SeedError(f"{path}: unknown ring parameter {param!r}; known: "
                            f"{', '.join(parameter_specs(Ring))}")
        return f"rings.{k}.{param}"
    raise SeedError(f"{path!r} is not a parameter path; expected one of "
                    f"{', '.join(_scene_fields())}, star.<parameter>, rings.<k>.<parameter> or "
                    "rings[<name>].<parameter>")


def _split(path):
    """(owner, field) of a canonical path: owner is "scene", "star" or a ring index."""
    if path in _scene_fields():
        return "scene", _scene_fields()[path]
    parts = path.split(".")
    if parts[0] == "star":
        return "star", parts[1]
    if len(parts) == 4:  # rings.<k>.sublimation.<species>
        return int(parts[1]), ("sublimation", parts[3])
    return int(parts[1]), parts[2]


def spec_for(path):
    """The :class:`~diskexplorer.physics.parameters.ParameterSpec` behind a canonical path."""
    owner, name = _split(path)
    if isinstance(name, tuple):
        return SUBLIMATION_TEMPERATURE_SPEC
    cls = Scene if owner == "scene" else Star if owner == "star" else Ring
    return parameter_specs(cls)[name]


def get_value(scene, path):
    """Value of the parameter at canonical ``path`` in its declared unit (float)."""
    owner, name = _split(path)
    obj = scene if owner == "scene" else scene.star if owner == "star" else scene.rings[owner]
    if isinstance(name, tuple):
        return float(obj.sublimation_temperatures()[name[1]])
    return float(getattr(obj, name))


def set_values(scene, values):
    """A new scene with parameters set; ``scene`` is not modified.

    Parameters
    ----------
    scene : Scene
    values : mapping of str to float
        Canonical path → value in the parameter's declared unit.

    Returns
    -------
    Scene

    Raises
    ------
    ParameterError
        If a value is outside its valid range or breaks a constraint (r_in < r_out,
        modulation amplitude ≤ 1); raised by the model classes.
    """
    scene_changes, star_changes, ring_changes = {}, {}, {}
    for path, value in values.items():
        owner, name = _split(path)
        if owner == "scene":
            scene_changes[name] = float(value)
        elif owner == "star":
            star_changes[name] = float(value)
        elif isinstance(name, tuple):
            ring = ring_changes.setdefault(owner, {})
            ring.setdefault("sublimation", dict(scene.rings[owner].sublimation))[name[1]] = float(value)
        else:
            ring_changes.setdefault(owner, {})[name] = float(value)
    if star_changes:
        s = scene.star
        kw = {name: getattr(s, name) for name in parameter_specs(Star)}
        kw.update(star_changes, uniform_disk=s.uniform_disk, photosphere=s.photosphere)
        scene_changes["star"] = Star(**kw)
    if ring_changes:
        rings = list(scene.rings)
        for k, changes in ring_changes.items():
            rings[k] = replace(rings[k], **changes)
        scene_changes["rings"] = tuple(rings)
    return scene.replace(**scene_changes) if scene_changes else scene
