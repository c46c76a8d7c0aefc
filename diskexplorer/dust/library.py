"""The committed κ library: lazy loading and row lookup.

The table ``kappa_library.npz`` beside this module is computed by
``python -m diskexplorer.dust.build`` from published optical constants and holds, on
one wavelength grid, κ_abs (cm² g⁻¹) for every built-in species × method × grain size,
plus the provenance of each species (JSON). It is read on first use only, so that
``import diskexplorer.dust`` stays fast.
"""
from __future__ import annotations

import json
import threading
from pathlib import Path

import numpy as np

from ..errors import DustError

__all__ = ["LIBRARY_FILE", "KappaLibrary", "get_library"]

#: The committed table (computed, never hand-edited).
LIBRARY_FILE = Path(__file__).with_name("kappa_library.npz")

_LOCK = threading.Lock()
_CACHE: dict = {}


class KappaLibrary:
    """κ_abs of the built-in species on the library wavelength grid.

    Attributes
    ----------
    wavelength : ndarray, shape (N,)
        Wavelengths in µm.
    kappa : ndarray, shape (R, N)
        κ_abs in cm² g⁻¹, one row per (species, method, size). Read-only.
    keys : list of tuple
        ``(species, method, size)`` per row; size in µm, ``None`` for ``"cde"``
        (size-independent).
    provenance : dict
        Per species: description, source, density and its source, notes; plus
        ``"_build"`` with how the table was made.
    """

    def __init__(self, wavelength, kappa, keys, provenance, path=None):
        self.wavelength = np.asarray(wavelength, dtype=float)
        self.kappa = np.asarray(kappa, dtype=float)
        self.kappa.setflags(write=False)
        self.wavelength.setflags(write=False)
        self.log_wavelength = np.log(self.wavelength)
        self.keys = list(keys)
        self.provenance = provenance
        self.path = path
        self._index = {k: i for i, k in enumerate(self.keys)}

    @classmethod
    def from_file(cls, path):
        """Read a table written by :func:`diskexplorer.dust.build.write_library`."""
        path = Path(path)
        try:
            with np.load(path, allow_pickle=False) as z:
                lam = z["wavelength"]
                kap = z["kappa"]
                species = [str(s) for s in z["species"]]
                methods = [str(s) for s in z["method"]]
                sizes = z["size"]
                prov = json.loads(str(z["provenance"]))
        except (OSError, KeyError, ValueError) as exc:
            raise DustError(f"{path}: cannot read the κ library ({exc})") from None
        keys = [(s, m, None if m == "cde" else _size_key(a)) for s, m, a in zip(species, methods, sizes)]
        if kap.shape != (len(keys), lam.size):
            raise DustError(f"{path}: κ array shape {kap.shape} does not match {len(keys)} rows × "
                            f"{lam.size} wavelengths")
        return cls(lam, kap, keys, prov, path=path)

    @property
    def species(self):
        """Names of the species in the table, in table order."""
        return list(dict.fromkeys(k[0] for k in self.keys))

    def sizes(self, species, method):
        """Tabulated grain radii (µm) of ``species`` for ``method`` (empty for CDE)."""
        return sorted(k[2] for k in self.keys if k[0] == species and k[1] == method and k[2] is not None)

    def has(self, species):
        return any(k[0] == species for k in self.keys)

    def row_index(self, species, method, size):
        """Row number of (species, method, size); CDE ignores ``size``."""
        key = (species, method, None if method == "cde" else _size_key(size))
        try:
            return self._index[key]
        except KeyError:
            pass
        if not self.has(species):
            raise DustError(f"dust species {species!r} is not in the library; known: "
                            f"{', '.join(self.species)}") from None
        methods = sorted({k[1] for k in self.keys if k[0] == species})
        if method not in methods:
            raise DustError(f"dust species {species!r}: method {method!r} not tabulated "
                            f"(available: {', '.join(methods)})") from None
        raise DustError(f"dust species {species!r}, method {method!r}: grain size {size!r} µm not "
                        f"tabulated (available: {', '.join(f'{s:g}' for s in self.sizes(species, method))} µm)"
                        ) from None

    def row(self, species, method, size=None):
        """κ_abs (cm² g⁻¹) on :attr:`wavelength` for one (species, method, size)."""
        return self.kappa[self.row_index(species, method, size)]


def _size_key(size):
    if size is None:
        return None
    # Tabulated sizes are round numbers; compare at 1e-9 µm so 1.5 and 1.5000000001 agree.
    return round(float(size), 9)


def get_library(path=None):
    """The committed κ library (loaded once, then cached).

    Parameters
    ----------
    path : path-like, optional
        Another table file (default: the one shipped in the package).

    Raises
    ------
    DustError
        If the table is missing (run ``python -m diskexplorer.dust.build``) or unreadable.
    """
    path = Path(path) if path is not None else LIBRARY_FILE
    key = str(path)
    lib = _CACHE.get(key)
    if lib is None:
        with _LOCK:
            lib = _CACHE.get(key)
            if lib is None:
                if not path.is_file():
                    raise DustError(f"κ library {path} is missing; build it with "
                                    "`python -m diskexplorer.dust.build`")
                lib = KappaLibrary.from_file(path)
                _CACHE[key] = lib
    return lib
