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
``rings.<k>.dust.<component>``  mass fraction (dimensionless, [0, 1]) of one component
                           of ring k's dust mixture, e.g. ``rings.0.dust.forsterite``
=========================  ===============================================

Mass fractions
--------------
Each component of a ring's :class:`~diskexplorer.dust.DustMix` has a path
``rings.<k>.dust.<component>``, declared once by :data:`MASS_FRACTION_SPEC` (bounds
[0, 1]). The component is written as the mixture keys it:

* ``rings.0.dust.forsterite`` — the species at the mixture's own grain size and shape
  (a key that is a species name);
* ``rings.0.dust.forsterite(cde)`` — the species as CDE grains (a ``(species, None, "cde")`` key);
* ``rings.0.dust.forsterite(mie,1.5um)`` — the species with its own shape and grain
  radius in µm (a ``(species, 1.5, "mie")`` key; the size is written as Python's ``repr``
  of the float, so the path reads back to the same key bit for bit).

Only species whose names are identifiers (``[A-Za-z_][A-Za-z0-9_]*``, as every built-in species)
have fraction paths, as for sublimation temperatures: a user species registered as
``"my glass"`` keeps its fraction fixed (it is still rescaled by the rule below); register
it under an identifier name to fit its fraction. A path may name a component the mixture
does not hold (a fraction of 0: :class:`~diskexplorer.dust.DustMix` drops zero fractions):
:func:`get_value` reads 0 and :func:`set_values` puts it back; :func:`parameter_paths`
lists the components the mixture holds.

**The fractions of a ring sum to 1.** :func:`set_values` sets the fractions it is given
and rescales the ring's *other* fractions proportionally so that the ring's fractions sum
to 1 (given fractions summing above 1, or below 1 with no other component to take up the
rest, are refused with a :class:`~diskexplorer.errors.ParameterError`). This is the rule
of a scan axis over one fraction and of applying a grid point or a refined result.
Consumers that move several fractions at once keep the sum in their own way, documented
where they do it: refinement (:mod:`~diskexplorer.fitting.refine`: weights in [0, 1],
renormalised, solved so that a weight can sit exactly on 0) and the flat vector of a
sampler — starting points, their snippet, :func:`~diskexplorer.fitting.make_log_probability`
(:mod:`~diskexplorer.fitting.vector`: the ring's free fractions as weights, renormalised,
with one Dirichlet prior per ring whose concentrations the fractions' entries hold). A
ring needs two free fractions or none.

Sublimation temperatures have paths only in rings with ``temperature_mode="equilibrium"``
and only for species whose names are identifiers (a species held twice, named with its
size, has none); the temperature mode and the inner-edge choice are settings, not
parameters.

On input, a ring may also be addressed by its (unique) name in brackets:
``rings[inner].r_in`` means ``rings.0.r_in`` if ring 0 is called ``"inner"``;
:func:`canonical_path` turns either form into the numbered one, which is what documents,
vectors and error messages use. Paths are the same inside a starting-point document:
``rings.0.t_in`` is the entry ``document["scene"]["rings"][0]["t_in"]``; a mass fraction
``rings.0.dust.forsterite`` is the ``"fraction"`` entry of that component in
``document["scene"]["rings"][0]["dust"]["components"]``
(:func:`~diskexplorer.fitting.start_document.document_entry`).

The list of paths is derived from the parameter declarations (STYLE §3): a parameter
added to a model class gets a path without any change here.
"""
from __future__ import annotations

import math
import re
from dataclasses import replace

from ..dust.mixture import FRACTION_SUM_TOLERANCE, DustMix
from ..dust.species import check_component, known_species
from ..errors import DustError, ParameterError, SeedError
from ..observables.scene import Scene
from ..physics.parameters import ParameterSpec, parameter_specs
from ..physics.ring import SUBLIMATION_TEMPERATURE_SPEC, Ring
from ..physics.star import Star

__all__ = ["SCENE_GROUPS", "MASS_FRACTION_SPEC", "parameter_paths", "canonical_path", "spec_for", "get_value",
           "set_values", "sublimation_species", "fraction_components", "fraction_path", "fraction_ring",
           "is_fraction_path", "component_key"]

#: Declaration of a component's mass fraction in its ring's dust (one per component).
MASS_FRACTION_SPEC = ParameterSpec(
    name="mass_fraction", unit="", label="f",
    description="mass fraction of the component in its ring's dust (the ring's fractions sum to 1)",
    valid=(0.0, 1.0), closed=(True, True), bounds=(0.0, 1.0))

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
_COMPONENT = r"([A-Za-z_]\w*)(?:\((dhs|mie|cde)(?:,([^()]+?)um)?\))?"
_RING_DUST_NUMBER = re.compile(r"^rings\.(\d+)\.dust\." + _COMPONENT + "$")
_RING_DUST_NAME = re.compile(r"^rings\[([^\]]+)\]\.dust\." + _COMPONENT + "$")


def fraction_path(k, key):
    """The path of component ``key`` (a DustMix fraction key) of ring ``k``; None without one.

    Examples
    --------
    >>> fraction_path(0, "forsterite"), fraction_path(1, ("iron", None, "cde"))
    ('rings.0.dust.forsterite', 'rings.1.dust.iron(cde)')
    >>> fraction_path(0, ("forsterite", 1.5, "mie"))
    'rings.0.dust.forsterite(mie,1.5um)'
    """
    name = key if isinstance(key, str) else key[0]
    if not _IDENTIFIER.match(name):
        return None
    if isinstance(key, str):
        return f"rings.{k}.dust.{name}"
    _, size, shape = key
    if size is None:
        return f"rings.{k}.dust.{name}({shape})"
    return f"rings.{k}.dust.{name}({shape},{float(size)!r}um)"


def component_key(path):
    """The DustMix fraction key a canonical fraction path names (see the module docstring)."""
    m = _RING_DUST_NUMBER.match(path)
    if not m:
        raise SeedError(f"{path!r} is not a mass-fraction path (rings.<k>.dust.<component>)")
    name, shape, size = m.group(2), m.group(3), m.group(4)
    if shape is None:
        return name
    if shape == "cde":
        return (name, None, "cde")
    if size is None:
        raise SeedError(f"{path}: a {shape} component needs its grain radius, e.g. {name}({shape},1.5um)")
    try:
        value = float(size)
    except ValueError:
        raise SeedError(f"{path}: grain radius {size!r} is not a number of µm") from None
    if not (math.isfinite(value) and value > 0):
        raise SeedError(f"{path}: grain radius {size!r} µm must be > 0")
    return (name, round(value, 9), shape)


def is_fraction_path(path):
    """Whether canonical ``path`` is a mass fraction (``rings.<k>.dust.<component>``)."""
    return isinstance(path, str) and bool(_RING_DUST_NUMBER.match(path))


def fraction_ring(path):
    """The ring number of a canonical fraction path (None for other paths)."""
    m = _RING_DUST_NUMBER.match(path) if isinstance(path, str) else None
    return int(m.group(1)) if m else None


def fraction_components(ring, k):
    """``[(path, key, fraction)]`` of the components of ``ring`` (number ``k``) that have paths."""
    if not isinstance(ring.dust, DustMix):
        return []
    out = []
    for key, f in ring.dust.fractions:
        path = fraction_path(k, key)
        if path is not None:
            out.append((path, key, f))
    return out


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
        out += [path for path, _, _ in fraction_components(ring, k)]
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
    m = _RING_DUST_NAME.match(path) or _RING_DUST_NUMBER.match(path)
    if m:
        ring_path = canonical_path(scene, path.split(".dust.", 1)[0] + ".r_in")
        k = int(ring_path.split(".")[1])
        return _canonical_fraction(scene, k, f"rings.{k}.dust." + path.split(".dust.", 1)[1], path)
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
                    f"{', '.join(_scene_fields())}, star.<parameter>, rings.<k>.<parameter>, "
                    "rings.<k>.dust.<species> or rings[<name>].<parameter>")


def _canonical_fraction(scene, k, path, given):
    ring = scene.rings[k]
    if not isinstance(ring.dust, DustMix):
        raise SeedError(f"{given}: ring {k}'s dust is not a mixture of species "
                        f"({getattr(ring.dust, 'label', 'optically thick') if ring.dust is not None else 'optically thick'}), "
                        "so it has no mass fractions")
    key = component_key(path)
    name = key if isinstance(key, str) else key[0]
    if name not in known_species():
        raise SeedError(f"{given}: unknown species {name!r}; known: {', '.join(known_species())}")
    if not isinstance(key, str):
        try:
            check_component(name, key[2], key[1])
        except DustError as exc:
            raise SeedError(f"{given}: {exc}") from None
    # The canonical spelling of the size (repr of the rounded float).
    return fraction_path(k, key)


def _split(path):
    """(owner, field) of a canonical path: owner is "scene", "star" or a ring index."""
    if path in _scene_fields():
        return "scene", _scene_fields()[path]
    m = _RING_DUST_NUMBER.match(path)
    if m:
        return int(m.group(1)), ("dust", component_key(path))
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
        return MASS_FRACTION_SPEC if name[0] == "dust" else SUBLIMATION_TEMPERATURE_SPEC
    cls = Scene if owner == "scene" else Star if owner == "star" else Ring
    return parameter_specs(cls)[name]


def get_value(scene, path):
    """Value of the parameter at canonical ``path`` in its declared unit (float).

    A mass fraction of a component the mixture does not hold is 0.
    """
    owner, name = _split(path)
    obj = scene if owner == "scene" else scene.star if owner == "star" else scene.rings[owner]
    if isinstance(name, tuple) and name[0] == "dust":
        return float(dict(obj.dust.fractions).get(name[1], 0.0)) if isinstance(obj.dust, DustMix) else 0.0
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
        modulation amplitude ≤ 1); raised by the model classes. Mass fractions of one
        ring summing above 1, or below 1 with nothing left to take up the rest.

    Notes
    -----
    Mass fractions: the given fractions of a ring are set, and the ring's other fractions
    are multiplied by (1 − Σ given) / (Σ others), so that the ring's fractions sum to 1
    (a factor within 1e-12 of 1 is taken as 1, so fractions not meant to move stay bit for
    bit). A fraction set to 0 leaves the mixture.
    """
    scene_changes, star_changes, ring_changes = {}, {}, {}
    fraction_changes = {}
    for path, value in values.items():
        owner, name = _split(path)
        if isinstance(name, tuple) and name[0] == "dust":
            fraction_changes.setdefault(owner, {})[name[1]] = (path, float(value))
            continue
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
    for k, given in fraction_changes.items():
        ring_changes.setdefault(k, {})["dust"] = _set_fractions(scene.rings[k].dust, given, k)
    if ring_changes:
        rings = list(scene.rings)
        for k, changes in ring_changes.items():
            rings[k] = replace(rings[k], **changes)
        scene_changes["rings"] = tuple(rings)
    return scene.replace(**scene_changes) if scene_changes else scene


def _set_fractions(mix, given, k):
    """The mixture ``mix`` of ring ``k`` with the ``given`` fractions (key → (path, value)) set.

    The other fractions are rescaled proportionally so that all sum to 1 (see
    :func:`set_values`).
    """
    if not isinstance(mix, DustMix):
        raise ParameterError(f"rings.{k}.dust: the ring's dust is not a mixture of species; "
                             "it has no mass fractions to set")
    for path, value in given.values():
        if not (math.isfinite(value) and MASS_FRACTION_SPEC.contains(value)):
            raise ParameterError(f"{path} = {value!r} is outside the allowed range "
                                 f"{MASS_FRACTION_SPEC.describe_range()} (a mass fraction)")
    named = {key: value for key, (_, value) in given.items()}
    total = sum(named.values())
    if total > 1.0 + FRACTION_SUM_TOLERANCE:
        shown = ", ".join(f"{p} = {v:g}" for p, v in given.values())
        raise ParameterError(f"ring {k}: mass fractions {shown} sum to {total:.6g}; the fractions of a "
                             "ring sum to 1")
    others = {key: f for key, f in mix.fractions if key not in named}
    rest = sum(others.values())
    left = max(0.0, 1.0 - total)
    if rest > 0:
        factor = left / rest
        if abs(factor - 1.0) > 1e-12:
            others = {key: f * factor for key, f in others.items()}
    elif left > FRACTION_SUM_TOLERANCE:
        shown = ", ".join(f"{p} = {v:g}" for p, v in given.values())
        raise ParameterError(f"ring {k}: mass fractions {shown} sum to {total:.6g} and the ring's dust holds "
                             "no other component to take up the rest (the fractions of a ring sum to 1)")
    try:
        return DustMix({**others, **named}, grain_size=mix.grain_size, shape=mix.shape)
    except DustError as exc:
        raise ParameterError(f"ring {k}: {exc}") from None
