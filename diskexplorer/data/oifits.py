"""Read OIFITS files (v1: Pauls et al. 2005, PASP 117, 1255; v2: Duvert, Young & Hummel
2017, A&A 597, A8) into an :class:`~diskexplorer.data.observations.ObservationSet`.

Data tables (OI_VIS2, OI_VIS, OI_T3, OI_FLUX; any number of each) are linked to their
OI_WAVELENGTH table by INSNAME, to their OI_ARRAY by ARRNAME and to OI_TARGET by
TARGET_ID. Each unflagged (row, channel) cell becomes one point of a flat dataset.

FLAG handling
-------------
A channel with FLAG = T is bad. By default such points are **dropped**, so the number of
points of a kind equals the number of unflagged channels in the file(s). With
``keep_flagged=True`` they are kept and marked in the ``flag`` variable instead.
NaN values in unflagged channels are kept as NaN (OIFITS v2 allows a NaN T3AMP when only
the closure phase was measured); the χ² code must skip them.
"""

from __future__ import annotations

import contextlib
import glob
import io
import os
import warnings
from collections.abc import Iterable

import numpy as np
from astropy import units as u
from astropy.io import fits

from ..errors import DataError
from .fits_tables import BLOCK, fits_layout, open_simple_fits, read_fits_bytes
from .observations import (KIND_SPEC, ObservationSet, distinct_arrays, make_array_table, make_point_dataset,
                           reference_from_map)
from .oifits_validate import (ERROR_COLS, OifitsWarning, check_fits_signature, oifits_version,
                              validate_oifits)

__all__ = ["read_oifits", "OIFITS_SUFFIXES"]

#: File name endings picked up when a directory is given.
OIFITS_SUFFIXES = (".fits", ".oifits", ".fit", ".fits.gz", ".oifits.gz")

_TABLE_KIND = {spec["table"]: kind for kind, spec in KIND_SPEC.items()}
_COLUMNS = {
    # kind: (OIFITS data columns in the order of KIND_SPEC[kind]["data"], uv columns)
    "vis2": (("VIS2DATA", "VIS2ERR"), ("UCOORD", "VCOORD")),
    "vis": (("VISAMP", "VISAMPERR", "VISPHI", "VISPHIERR"), ("UCOORD", "VCOORD")),
    "t3": (("T3AMP", "T3AMPERR", "T3PHI", "T3PHIERR"), ("U1COORD", "V1COORD", "U2COORD", "V2COORD")),
    "flux": (("FLUXDATA", "FLUXERR"), ()),
}
_TARGET_FIELDS = ("RAEP0", "DECEP0", "EQUINOX", "RA_ERR", "DEC_ERR", "SYSVEL", "VELTYP", "VELDEF",
                  "PMRA", "PMDEC", "PMRA_ERR", "PMDEC_ERR", "PARALLAX", "PARA_ERR", "SPECTYP", "CATEGORY")


def _expand_paths(path_or_paths) -> list[str]:
    if isinstance(path_or_paths, (str, os.PathLike)):
        items = [path_or_paths]
    elif isinstance(path_or_paths, Iterable):
        items = list(path_or_paths)
    else:
        raise DataError(f"read_oifits: expected a path or a list of paths, got {type(path_or_paths).__name__}")
    out = []
    for p in items:
        p = os.fspath(p)
        if os.path.isdir(p):
            found = sorted(f for f in glob.glob(os.path.join(p, "*"))
                           if f.lower().endswith(OIFITS_SUFFIXES) and os.path.isfile(f))
            if not found:
                raise DataError(f"{p}: directory holds no OIFITS file ({', '.join(OIFITS_SUFFIXES)})")
            out.extend(found)
        else:
            out.append(p)
    if not out:
        raise DataError("read_oifits: no file given")
    return out


def read_oifits(path_or_paths, target=None, strict: bool = True, *, pedantic: bool = False,
                keep_flagged: bool = False, check_checksums: bool = True) -> ObservationSet:
    """Read one or many OIFITS files.

    Parameters
    ----------
    path_or_paths : str, os.PathLike, or iterable of them
        Files, or directories (every ``*.fits`` / ``*.oifits`` inside is read).
    target : str or sequence of str, optional
        Keep only these targets (OI_TARGET TARGET names, case-insensitive). Default: all.
    strict : bool
        If True (default), a file that does not conform to the standard is refused with a
        :class:`~diskexplorer.errors.DataError` naming file, table and defect. If False it
        is loaded as far as possible and each defect is reported as an
        :class:`~diskexplorer.data.oifits_validate.OifitsWarning`; channels with a
        negative error bar are then treated as flagged.
    pedantic : bool
        Also refuse files that are valid but carry a standard warning (EFF_WAVE not
        ascending, duplicate target names, non-zero v2 TIME). Default False: such files
        load with an OifitsWarning naming file, table and problem.
    keep_flagged : bool
        Keep flagged channels (marked in ``flag``) instead of dropping them.
    check_checksums : bool
        Verify CHECKSUM/DATASUM keywords where present.

    Returns
    -------
    ObservationSet
        Datasets ``vis2``, ``vis``, ``t3``, ``flux`` (None when absent) along ``point``;
        wavelengths in µm, (u, v) in m (u East, v North), phases in degrees, fluxes in Jy
        where the file's unit converts to Jy.

    Raises
    ------
    DataError
        File missing or not FITS (checked from its content, not its suffix); a defect in
        strict mode; a requested target found in none of the files.

    Examples
    --------
    >>> obs = read_oifits(["night1.fits", "night2.fits"], target="SIM-DISK-1")  # doctest: +SKIP
    >>> print(obs.summary())                                                  # doctest: +SKIP
    """
    paths = _expand_paths(path_or_paths)
    wanted = None
    if target is not None:
        wanted = {t.strip().lower() for t in ([target] if isinstance(target, str) else target)}
    parts: dict[str, list[dict]] = {k: [] for k in KIND_SPEC}
    targets, arrays, notes, seen_targets = {}, {}, [], set()
    for path in paths:
        check_fits_signature(path)
        hdul, note = _open(path, strict)
        if note is not None:
            warnings.warn(OifitsWarning(note), stacklevel=2)
            notes.append(note)
        with (hdul if hasattr(hdul, "__enter__") else contextlib.nullcontext(hdul)), _damaged(path):
            if not any(h.name.startswith("OI_") for h in hdul[1:]):
                raise DataError(f"{path}: not an OIFITS file: it holds no OI_* table "
                                "(OI_TARGET, OI_WAVELENGTH and a data table are required)")
            defects = validate_oifits(hdul, path, check_checksums=check_checksums)
            errors = [d for d in defects if d.severity == "error" or (pedantic and d.severity == "warning")]
            if errors and strict:
                raise DataError(f"{path}: not a valid OIFITS file ({len(errors)} defect(s)):\n"
                                + "\n".join(f"  - {d.table}: {d.message} [{d.code}]" for d in errors))
            for d in defects:
                suffix = " (loaded anyway because strict=False)" if d.severity == "error" else ""
                warnings.warn(OifitsWarning(str(d) + suffix), stacklevel=2)
                notes.append(str(d) + suffix)
            file_parts, file_targets, file_arrays = _read_file(hdul, path, wanted, keep_flagged)
        # Station tables of one ARRNAME but other stations (another configuration or
        # night) stay apart: this file's array gets a name of its own in the set.
        mapping = distinct_arrays(arrays, file_arrays)
        for k, cols in file_parts.items():
            for c in cols:
                if "arrname" in c and any(a != b for a, b in mapping.items()):
                    c["arrname"] = np.array([mapping.get(n, n) for n in c["arrname"]], dtype=object)
            parts[k].extend(cols)
        seen_targets.update(file_targets)
        for name, info in file_targets.items():
            targets.setdefault(name, info)
        if wanted is not None and not any(cols for cols in file_parts.values()):
            msg = f"{path}: holds no data for target(s) {sorted(wanted)}"
            warnings.warn(OifitsWarning(msg), stacklevel=2)
            notes.append(msg)
    if wanted is not None and not any(parts.values()):
        raise DataError(f"target(s) {sorted(wanted)} not found in {len(paths)} file(s)")
    datasets = {}
    for kind, cols in parts.items():
        if not cols:
            datasets[kind] = None
            continue
        merged = {key: np.concatenate([c[key] for c in cols]) for key in cols[0] if key not in _REF}
        if any("ref_wavelength" in c for c in cols):
            merged.update(_join_references(cols))
        datasets[kind] = make_point_dataset(kind, merged)
    return ObservationSet(**datasets, targets=targets, arrays=arrays, files=paths, notes=notes)


_REF = ("ref_wavelength", "ref_bandwidth")


def _join_references(cols):
    """The reference columns of several OI_VIS tables as one NaN-padded pair (absolute: none)."""
    m = max(c["ref_wavelength"].shape[1] for c in cols if "ref_wavelength" in c)
    out = {}
    for key in _REF:
        parts = []
        for c in cols:
            grid = np.full((len(c["flag"]), m), np.nan)
            if key in c:
                grid[:, :c[key].shape[1]] = c[key]
            parts.append(grid)
        out[key] = np.concatenate(parts)
    return out


def _open(path, strict=True):
    """The file's HDUs and a note (or None): the fast decoder where it applies, else astropy.

    Either way the file is read (and decompressed) once and its layout checked first, so
    a file cut short is named as truncated instead of failing later on a short column.
    A file that lacks only part of its final padding is refused in strict mode and read
    with a note otherwise.
    """
    buf = read_fits_bytes(path)
    note = None
    short = -len(buf) % BLOCK
    if short:
        hdus = fits_layout(buf, path, allow_short_padding=not strict)
        last = hdus[-1]
        note = (f"{path}: truncated FITS file: it ends {short} bytes short of a whole 2880-byte block after "
                f"{last.name or 'HDU ' + str(last.index)} (HDU {last.index}); loaded what is there because "
                "strict=False, but HDUs that followed may be lost")
        buf = buf + b"\0" * short   # zero padding adds nothing to a checksum
    if _FAST:
        hdus = open_simple_fits(path, buf)
        if hdus is not None:
            return hdus, note
    if not short:
        fits_layout(buf, path)
    try:
        return fits.open(io.BytesIO(buf), memmap=False), note
    except Exception as exc:  # astropy raises OSError/ValueError/VerifyError variants
        raise DataError(f"{path}: cannot be read as FITS: {exc}") from exc


@contextlib.contextmanager
def _damaged(path):
    """Name the file when a table's content does not fit its header (a damaged file).

    The layout check catches files cut short; what remains are inconsistent headers
    (a column narrower than its table says, a garbled value) that surface as numpy or
    astropy errors deep inside the reader.
    """
    try:
        yield
    except DataError:
        raise
    except (ValueError, TypeError, IndexError, KeyError, OSError) as exc:
        raise DataError(f"{path}: damaged FITS file: a table's content does not match its header "
                        f"({type(exc).__name__}: {exc})") from exc


# Set False to read every file through astropy (the tests compare both paths).
_FAST = True


def _strip(v) -> str:
    return str(v).strip()


def _read_file(hdul, path, wanted, keep_flagged):
    """Turn one open OIFITS file into flat per-kind columns (validation already done)."""
    version = oifits_version(hdul)
    # Targets: TARGET_ID → name, and the OI_TARGET fields by name.
    tnames: dict[int, str] = {}
    tinfo: dict[str, dict] = {}
    for h in hdul[1:]:
        if h.name != "OI_TARGET" or "TARGET_ID" not in h.columns.names:
            continue
        data = h.data
        for j in range(len(data)):
            tid = int(data["TARGET_ID"][j])
            name = _strip(data["TARGET"][j]) if "TARGET" in h.columns.names else f"TARGET_ID={tid}"
            tnames.setdefault(tid, name)
            info = {}
            for f in _TARGET_FIELDS:
                if f in h.columns.names:
                    v = data[f][j]
                    info[f.lower()] = _strip(v) if isinstance(v, (str, bytes, np.str_)) else float(v)
            tinfo.setdefault(name, info)
    if wanted is not None:
        tinfo = {n: i for n, i in tinfo.items() if n.lower() in wanted}
    # Wavelength tables by INSNAME, µm.
    waves: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for h in hdul[1:]:
        if h.name == "OI_WAVELENGTH" and "INSNAME" in h.header and "EFF_WAVE" in h.columns.names:
            w = np.asarray(h.data["EFF_WAVE"], dtype=float) * 1e6
            b = (np.asarray(h.data["EFF_BAND"], dtype=float) * 1e6 if "EFF_BAND" in h.columns.names
                 else np.full(w.shape, np.nan))
            waves.setdefault(_strip(h.header["INSNAME"]), (w, b))
    # Station tables by ARRNAME.
    arrays = {}
    for h in hdul[1:]:
        if h.name != "OI_ARRAY" or "STA_INDEX" not in h.columns.names:
            continue
        d, cols = h.data, h.columns.names
        n = len(d)
        arrays.setdefault(_strip(h.header.get("ARRNAME", "")), make_array_table(
            [_strip(s) for s in d["STA_NAME"]] if "STA_NAME" in cols else [f"S{k}" for k in range(n)],
            np.asarray(d["STAXYZ"], dtype=float).reshape(n, 3) if "STAXYZ" in cols else np.zeros((n, 3)),
            tel_names=[_strip(s) for s in d["TEL_NAME"]] if "TEL_NAME" in cols else None,
            sta_index=np.asarray(d["STA_INDEX"]),
            diameter=np.asarray(d["DIAMETER"], dtype=float) if "DIAMETER" in cols else np.nan,
            fov=np.asarray(d["FOV"], dtype=float) if "FOV" in cols else None,
            fovtype=_strip(d["FOVTYPE"][0]) if "FOVTYPE" in cols and n else "RADIUS",
            frame=_strip(h.header.get("FRAME", "GEOCENTRIC")),
            arrayxyz=tuple(float(h.header.get(k, 0.0)) for k in ("ARRAYX", "ARRAYY", "ARRAYZ"))))
    wanted_ids = None
    if wanted is not None:
        wanted_ids = np.array([tid for tid, name in tnames.items() if name.lower() in wanted], dtype=int)
    parts: dict[str, list] = {k: [] for k in KIND_SPEC}
    for h in hdul[1:]:
        kind = _TABLE_KIND.get(h.name)
        if kind is None or (kind == "flux" and version == 1):
            continue
        cols = _read_table(kind, h, path, waves, tnames, wanted_ids, keep_flagged)
        if cols is not None and len(cols["flag"]):
            parts[kind].append(cols)
    return parts, tinfo, arrays


def _read_table(kind, h, path, waves, tnames, wanted_ids, keep_flagged):
    """Flatten one data table to per-point columns; None if it cannot be resolved."""
    hdr, names = h.header, list(h.columns.names)
    data_cols, uv_cols = _COLUMNS[kind]
    ins = _strip(hdr.get("INSNAME", ""))
    # Drafts before OIFITS v2 named OI_FLUX's data column FLUX; only lenient reading gets
    # here without FLUXDATA (the validator reports it), and then reads the old name.
    alias = {"FLUXDATA": "FLUX"} if kind == "flux" and "FLUXDATA" not in names and "FLUX" in names else {}
    if alias:
        warnings.warn(OifitsWarning(f"{os.fspath(path)}: {h.name} (INSNAME {ins!r}): read the pre-standard "
                                    "column FLUX as FLUXDATA"), stacklevel=2)
        names = [("FLUXDATA" if n == "FLUX" else n) for n in names]
    if ins not in waves or any(c not in names for c in data_cols + uv_cols):
        return None  # reported by the validator; nothing sensible to load
    wave, band = waves[ins]
    nrow, nw = int(hdr.get("NAXIS2", 0)), wave.size
    if nrow == 0:
        return None
    d = h.data
    chan = {}
    for c in data_cols + ("FLAG",):
        if c not in names:
            continue
        a = np.asarray(d[alias.get(c, c)])
        if a.size != nrow * nw:
            return None
        chan[c] = a.reshape(nrow, nw)
    flag = chan["FLAG"].astype(bool) if "FLAG" in chan else np.zeros((nrow, nw), bool)
    # Negative error bars only survive validation in lenient mode; treat them as flagged
    # so that a χ² never sees a negative variance.
    for c in ERROR_COLS[h.name]:
        if c in chan:
            with np.errstate(invalid="ignore"):
                flag = flag | (chan[c] < 0)
    keep = np.ones((nrow, nw), bool) if keep_flagged else ~flag
    tid = np.asarray(d["TARGET_ID"]).astype(int) if "TARGET_ID" in names else np.zeros(nrow, int)
    if wanted_ids is not None:
        keep &= np.isin(tid, wanted_ids)[:, None]
    r, c = np.nonzero(keep)
    n = r.size
    out = {}
    for oi_name, our_name in zip(data_cols, KIND_SPEC[kind]["data"]):
        out[our_name] = chan[oi_name][r, c].astype(float)
    out["flag"] = flag[r, c]
    for oi_name, our_name in zip(uv_cols, KIND_SPEC[kind]["uv"]):
        out[our_name] = np.asarray(d[oi_name], dtype=float)[r]
    out["wavelength"] = wave[c]
    out["bandwidth"] = band[c]
    out["mjd"] = np.asarray(d["MJD"], dtype=float)[r] if "MJD" in names else np.full(n, np.nan)
    out["int_time"] = np.asarray(d["INT_TIME"], dtype=float)[r] if "INT_TIME" in names else np.full(n, np.nan)
    uid, inv = np.unique(tid, return_inverse=True)
    row_target = np.array([tnames.get(int(i), f"TARGET_ID={int(i)}") for i in uid], dtype=object)[inv]
    out["target"] = row_target[r]
    out["file"] = np.full(n, os.fspath(path), dtype=object)
    out["insname"] = np.full(n, ins, dtype=object)
    out["arrname"] = np.full(n, _strip(hdr.get("ARRNAME", "")), dtype=object)
    nsta = KIND_SPEC[kind]["nsta"]
    for k in range(nsta):
        out[f"sta_index{k + 1}"] = np.full(n, -1, dtype=np.int32)
    if "STA_INDEX" in names:
        sta = np.asarray(d["STA_INDEX"]).astype(np.int32).reshape(nrow, -1)
        for k in range(min(nsta, sta.shape[1])):
            out[f"sta_index{k + 1}"] = sta[r, k]
    if kind == "vis":
        out["amptyp"] = np.full(n, _strip(hdr.get("AMPTYP", "absolute")).lower(), dtype=object)
        out["phityp"] = np.full(n, _strip(hdr.get("PHITYP", "absolute")).lower(), dtype=object)
        unit_str = _strip(h.columns["VISAMP"].unit or "")
        if out["amptyp"][:1].tolist() == ["correlated flux"] and unit_str:
            out["visamp"], out["visamp_err"], unit_out = _flux_to_jy(out["visamp"], out["visamp_err"],
                                                                     unit_str, out["wavelength"])
            if unit_out != "Jy":
                # Kept in their own unit and marked, so that no comparison takes them for Jy.
                out["amptyp"] = np.full(n, f"correlated flux [{unit_out}]", dtype=object)
                warnings.warn(OifitsWarning(f"{os.fspath(path)}: {h.name} (INSNAME {ins!r}): correlated "
                                            f"fluxes in {unit_str!r}, not a flux density; they are read in "
                                            "that unit and not compared with the model"), stacklevel=2)
        if "differential" in (out["amptyp"][:1].tolist() + out["phityp"][:1].tolist()):
            refmap = np.asarray(d["VISREFMAP"]) if "VISREFMAP" in names else None
            if refmap is None or refmap.size != nrow * nw * nw:
                # Only lenient reading gets here (the validator reports a missing map, and strict
                # reading refuses it): every channel of the row is the reference, the usual map.
                refmap = np.ones((nrow, nw, nw), bool)
            out["ref_wavelength"], out["ref_bandwidth"] = reference_from_map(
                refmap.reshape(nrow, nw, nw).astype(bool), wave, band, r, c)
    if kind == "flux":
        out["calstat"] = np.full(n, _strip(hdr.get("CALSTAT", "C")), dtype=object)
        unit_str = _strip(h.columns[alias.get("FLUXDATA", "FLUXDATA")].unit or "")
        out["flux"], out["flux_err"], unit_out = _flux_to_jy(out["flux"], out["flux_err"],
                                                             unit_str, out["wavelength"])
        out["flux_unit"] = np.full(n, unit_out, dtype=object)
    return out


def _flux_to_jy(flux, err, unit_str, wavelength_um):
    """Convert OI_FLUX values to Jy when their unit is a spectral flux density."""
    if not unit_str:
        return flux, err, ""
    try:
        unit = u.Unit(unit_str)
        eq = u.spectral_density(wavelength_um * u.um)
        f = (flux * unit).to_value(u.Jy, equivalencies=eq)
        e = (err * unit).to_value(u.Jy, equivalencies=eq)
    except (ValueError, u.UnitsError, TypeError):
        # Uncalibrated fluxes (counts, ADU, …) stay in their own unit.
        return flux, err, unit_str
    return f, e, "Jy"
