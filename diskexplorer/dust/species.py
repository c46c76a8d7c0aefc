"""Species: the built-in library plus species users register in code.

A *species* is a named material with a density and either optical constants (κ is then
computed for any method and grain size on demand, on the library wavelength grid) or a
fixed κ table (independent of method and size). Built-in species come from the
committed table (:mod:`diskexplorer.dust.library`); user species live in this
process's registry.
"""
from __future__ import annotations

import math
import os
import threading
from dataclasses import dataclass, field

import numpy as np

from ..errors import DustError
from ..physics.opacity import KappaTable
from .library import get_library
from .optical_constants import OpticalConstants, read_nk_file
from .optics import METHODS
from .row_interpolation import end_slopes, interpolate_row

__all__ = ["UserSpecies", "register_species", "unregister_species", "user_species", "install_species",
           "list_species",
           "species_row", "species_kappa", "known_species", "check_component", "library_grid", "library_kappa"]

_USER: dict = {}
_LOCK = threading.Lock()


@dataclass(eq=False)
class UserSpecies:
    """A species registered with :func:`register_species` (see there)."""

    name: str
    density: float | None
    source: str
    description: str
    constants: tuple | None = None
    table: KappaTable | None = None
    f_max: float = 0.8
    _rows: dict = field(default_factory=dict, repr=False)

    def row(self, method, size):
        """κ_abs (cm² g⁻¹) on the library grid; NaN where the data do not reach."""
        if self.table is not None:
            key = ("table",)
        else:
            key = (method, None if method == "cde" else round(float(size), 9))
        row = self._rows.get(key)
        if row is None:
            grid = get_library().wavelength
            if self.table is not None:
                row = self.table.kappa(grid)
            else:
                from .optics import kappa_abs  # deferred: pulls in the Mie code
                lo = max(oc.wavelength_range[0] for oc in self.constants)
                hi = min(oc.wavelength_range[1] for oc in self.constants)
                inside = (grid >= lo) & (grid <= hi)
                row = np.full(grid.shape, np.nan)
                row[inside] = kappa_abs(self.constants, self.density, grid[inside], method=method,
                                        grain_size=size, f_max=self.f_max)
            row.setflags(write=False)
            self._rows[key] = row
        return row


def register_species(name, *, nk=None, kappa=None, density=None, source=None, description="",
                     f_max=0.8, overwrite=False):
    """Add a species to this session's dust registry.

    Parameters
    ----------
    name : str
        Key used in mixtures (``DustMix({name: ...})``) and as a ring's ``dust=``.
    nk : path, OpticalConstants or sequence of them, optional
        Optical constants: a three-column file (wavelength µm, n, k), an
        :class:`OpticalConstants`, or one per crystal axis (averaged 1/3 each).
    kappa : path, KappaTable or array (N, 2), optional
        A fixed κ_abs table (wavelength µm, κ cm² g⁻¹) instead of ``nk``; it is used for
        every method and grain size.
    density : float
        Bulk density in g cm⁻³ (required with ``nk``).
    source : str, optional
        Citation, kept in :func:`list_species`.
    description : str, optional
        Free text.
    f_max : float
        DHS largest vacuum fraction for this species.
    overwrite : bool
        Replace an existing user species (or shadow a library one) of that name.
        Objects that cache κ by mixture value (the visibility engine) do not see the
        change: prefer a new name.

    Returns
    -------
    UserSpecies

    Raises
    ------
    DustError
        Bad name, both or neither of ``nk``/``kappa``, missing or bad density, or an
        unreadable file (the message names file and line).

    Examples
    --------
    >>> register_species("my_olivine", nk="olivine.nk", density=3.3,
    ...                  source="my lab 2024")                     # doctest: +SKIP
    >>> DustMix({"my_olivine": 0.5, "forsterite": 0.5}, grain_size=0.1)  # doctest: +SKIP
    """
    if not isinstance(name, str) or not name.strip() or any(c in name for c in "{}:,"):
        raise DustError(f"species name {name!r}: expected a non-empty string without {{}}:,")
    if (nk is None) == (kappa is None):
        raise DustError(f"species {name!r}: give exactly one of nk= (optical constants) or kappa= (κ table)")
    if not overwrite and (name in _USER or _in_library(name)):
        raise DustError(f"species {name!r} already exists; pass overwrite=True to replace it")
    constants = table = None
    if nk is not None:
        if density is None or not (np.isfinite(float(density)) and float(density) > 0):
            raise DustError(f"species {name!r}: density {density!r} g/cm3 must be given and > 0")
        items = [nk] if isinstance(nk, (str, os.PathLike, OpticalConstants)) else list(nk)
        constants = tuple(it if isinstance(it, OpticalConstants) else read_nk_file(it, name=name)
                          for it in items)
        src = source or "; ".join(oc.source for oc in constants)
    else:
        if isinstance(kappa, KappaTable):
            table = kappa
        elif isinstance(kappa, (str, os.PathLike)):
            table = KappaTable.from_file(kappa, label=name)
        else:
            arr = np.asarray(kappa, dtype=float)
            if arr.ndim != 2 or arr.shape[1] != 2:
                raise DustError(f"species {name!r}: kappa array must have shape (N, 2), got {arr.shape}")
            table = KappaTable(arr[:, 0], arr[:, 1], label=name, source=source)
        src = source or (table.source or "κ table")
    sp = UserSpecies(name=name, density=None if density is None else float(density), source=src,
                     description=description, constants=constants, table=table, f_max=float(f_max))
    with _LOCK:
        _USER[name] = sp
    return sp


def unregister_species(name):
    """Remove a user species (no error if absent)."""
    with _LOCK:
        _USER.pop(name, None)


def user_species():
    """A copy of this process's registry (name -> :class:`UserSpecies`).

    Other processes do not share the registry: a task that evaluates scenes elsewhere (a
    dask worker of a grid scan) takes this along and calls :func:`install_species`.
    """
    with _LOCK:
        return dict(_USER)


def install_species(species):
    """Register species taken from another process's :func:`user_species` here.

    A species of the same name already registered in this process is replaced.
    """
    for name, sp in species.items():
        if not isinstance(sp, UserSpecies) or sp.name != name:
            raise DustError(f"install_species: entry {name!r} is not a UserSpecies of that name")
    with _LOCK:
        _USER.update(species)


def _in_library(name):
    try:
        return get_library().has(name)
    except DustError:
        return False


def known_species():
    """Names of all species: user ones first, then the library's."""
    names = list(_USER)
    try:
        names += [s for s in get_library().species if s not in _USER]
    except DustError:
        pass
    return names


def species_row(name, method, size):
    """κ_abs (cm² g⁻¹) of (species, method, size) on the library grid (read-only)."""
    sp = _USER.get(name)
    if sp is not None:
        return sp.row(method, size)
    return get_library().row(name, method, size)


def check_component(name, method, size):
    """Raise DustError if (species, method, size) cannot be evaluated."""
    sp = _USER.get(name)
    if sp is not None:
        if sp.table is None and method != "cde" and not (size is not None and size > 0):
            raise DustError(f"species {name!r}: grain size {size!r} µm must be > 0")
        return
    get_library().row_index(name, method, size)


def species_kappa(name, grain_size=0.1, shape="dhs", wavelength=None):
    """κ_abs (cm² g⁻¹) of one species at ``wavelength`` (µm; default: the library grid).

    A built-in species is read from the committed table (tabulated sizes only; see
    :func:`diskexplorer.dust.compute_kappa` for any other size). The row is read as a
    one-species :class:`~diskexplorer.dust.DustMix` reads it
    (:func:`~diskexplorer.dust.row_interpolation.interpolate_row`).

    Raises
    ------
    DustError
        Unknown species or shape, a grain size that is not > 0 µm or not tabulated, or
        wavelengths that are not > 0 µm (or that a user species' data do not cover).
    """
    shape_key = str(shape).lower()
    if shape_key not in METHODS:
        raise DustError(f"species_kappa({name!r}): shape {shape!r} not one of {METHODS}")
    size = None
    if shape_key != "cde":
        try:
            size = float(grain_size)
        except (TypeError, ValueError):
            raise DustError(f"species_kappa({name!r}): grain_size {grain_size!r} is not a radius in µm") from None
        if not (math.isfinite(size) and size > 0):
            raise DustError(f"species_kappa({name!r}): grain_size {grain_size!r} µm: expected > 0")
        size = round(size, 9)  # as DustMix keys its sizes
    check_component(name, shape_key, size)
    row = species_row(name, shape_key, size)
    loglam = get_library().log_wavelength
    label = f"{name} ({'CDE' if size is None else f'{shape_key.upper()} {size:g} µm'})"
    return interpolate_row(row, loglam, end_slopes(loglam, row),
                           library_grid() if wavelength is None else wavelength, label)


def library_grid():
    """The library wavelength grid in µm (read-only array)."""
    return get_library().wavelength


def library_kappa():
    """The whole built-in table for the app: ``(wavelength, kappa, keys)``.

    ``wavelength`` (N,) in µm, ``kappa`` (R, N) in cm² g⁻¹ (read-only), ``keys`` the
    (species, method, size µm or None for CDE) of each row.
    """
    lib = get_library()
    return lib.wavelength, lib.kappa, list(lib.keys)


def list_species():
    """Every species with its provenance, for listings (CLI, app).

    Returns
    -------
    list of dict
        Keys: ``name``, ``origin`` (``"library"`` or ``"user"``), ``description``,
        ``source``, ``density`` (g cm⁻³ or None), ``density_source``, ``methods``,
        ``sizes`` (µm, for Mie/DHS; CDE is size-independent), ``notes``.
    """
    out = []
    for name, sp in _USER.items():
        out.append({
            "name": name, "origin": "user", "description": sp.description, "source": sp.source,
            "density": sp.density, "density_source": "given at registration" if sp.density else None,
            "methods": ["table"] if sp.table is not None else ["cde", "mie", "dhs"],
            "sizes": "any" if sp.table is None else "n/a (fixed κ table)",
            "notes": [] if sp.constants is None else sorted({n for oc in sp.constants for n in oc.notes}),
        })
    try:
        lib = get_library()
    except DustError:
        return out
    for name in lib.species:
        if name in _USER:
            continue
        p = lib.provenance.get(name, {})
        out.append({
            "name": name, "origin": "library", "description": p.get("description", ""),
            "source": p.get("source", ""), "density": p.get("density"),
            "density_source": p.get("density_source", ""),
            "methods": sorted({k[1] for k in lib.keys if k[0] == name}),
            "sizes": lib.sizes(name, "dhs") or lib.sizes(name, "mie"),
            "notes": p.get("notes", []),
        })
    return out
