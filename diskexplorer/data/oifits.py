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

Values checked at the door
--------------------------
Every point handed on can be modelled and judged (limits in :mod:`diskexplorer.data.checks`):

* EFF_WAVE must be a wavelength in metres (finite, 1e-8 … 1e-2 m). OI_WAVELENGTH has no
  flag, so the validator reports a bad channel as an error (``bad-wavelength``) and a
  strict read refuses the file; a lenient read leaves that channel's points out of every
  data table that uses the wavelength table (without a wavelength a point has no place in
  the (u, v) plane, so not even ``keep_flagged`` keeps it).
* EFF_BAND must be finite, ≥ 0 and below twice EFF_WAVE; a channel whose EFF_BAND is not
  is read without a width (``bandwidth`` NaN: monochromatic, as for a missing EFF_BAND);
  the validator warns (``bad-bandwidth``). EFF_BAND = 0 means "no width known".
* (u, v) must be finite and no longer than Earth's diameter. A row whose coordinates are
  not is dropped, even with ``keep_flagged`` (it has no place in the (u, v) plane).
* A value and its error must be finite, the error > 0, and both of plausible magnitude
  (:func:`~diskexplorer.data.checks.usable_values`). A value that is not is left out of an
  otherwise good point (set to NaN) when the point carries another usable value (OI_VIS:
  amplitude and phase; OI_T3: amplitude and closure phase), and the point is flagged when
  it carries none. A NaN value is the standard's mark of a quantity not measured (OIFITS
  v2 allows a NaN T3AMP when only the closure phase was measured), so a NaN amplitude or
  phase in an otherwise good point is left out silently; any other unusable value, and
  every flagged point, is counted in **one** :class:`OifitsWarning` per table that names
  the file and the table. NaN values therefore reach the χ² code only as values to skip.

A channel with a negative error bar is flagged as a whole (strict reading refuses it).
"""

from __future__ import annotations

import contextlib
import glob
import io
import os
import sys
import warnings
from collections.abc import Iterable

import numpy as np
from astropy import units as u
from astropy.io import fits

from ..errors import DataError
from .checks import VALUE_RULE, plausible_uv, plausible_wavelength_m, reader_door, usable_values
from .fits_tables import BLOCK, ColumnDamage, blank_cards, fits_layout, open_simple_fits, read_fits_bytes
from .observations import (KIND_SPEC, ObservationSet, distinct_arrays, make_array_table, make_point_dataset,
                           reference_from_map)
from .oifits_validate import (ERROR_COLS, OifitsWarning, _label, check_fits_signature, damage_text, is_table,
                              oifits_version, validate_oifits)

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
        File missing or not FITS (checked from its content, not its suffix); a damaged
        file (sizes, column formats or header cards that no reader can trust, a table
        whose content does not match its header), naming the HDU; a defect in strict
        mode; a requested target found in none of the files. Nothing else leaves this
        function (see :func:`~diskexplorer.data.checks.reader_door`).

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

    def say(message):
        _warn(message)
        notes.append(message)

    for path in paths:
        with reader_door(path, "OIFITS"):
            file_parts, file_targets, file_arrays = _read_one(path, strict, pedantic, keep_flagged,
                                                              check_checksums, wanted, say)
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
            say(f"{path}: holds no data for target(s) {sorted(wanted)}")
    named = ", ".join(paths[:3]) + (f" and {len(paths) - 3} more file(s)" if len(paths) > 3 else "")
    if wanted is not None and not any(parts.values()):
        raise DataError(f"{named}: target(s) {sorted(wanted)} not found in {len(paths)} file(s)")
    datasets = {}
    with reader_door(named, "OIFITS"):
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


def _warn(message):
    """Warn with an OifitsWarning attributed to the first caller outside this package's readers."""
    frame, level = sys._getframe(1), 2   # stacklevel 2 is the frame that called _warn
    while frame is not None and frame.f_globals.get("__name__", "").startswith(("diskexplorer.data.", "contextlib")):
        frame, level = frame.f_back, level + 1
    warnings.warn(OifitsWarning(message), stacklevel=level)


def _join_references(cols):
    """The reference columns of several OI_VIS tables as one NaN-padded pair (absolute: none)."""
    m = max(c["ref_wavelength"].shape[1] for c in cols if "ref_wavelength" in c)
    out = {}
    total = sum(len(c["flag"]) for c in cols)
    for key in _REF:
        # Filled in place: padded copies of every table and their concatenation would hold
        # the (points × channels) grid three times over on a wide file.
        grid = np.full((total, m), np.nan)
        start = 0
        for c in cols:
            n = len(c["flag"])
            if key in c:
                grid[start:start + n, :c[key].shape[1]] = c[key]
            start += n
        out[key] = grid
    return out


def _read_one(path, strict, pedantic, keep_flagged, check_checksums, wanted, say):
    """One file's flat per-kind columns, targets and arrays (see :func:`read_oifits`)."""
    check_fits_signature(path)
    hdul, file_notes = _open(path, strict)
    for note in file_notes:
        say(note)
    with (hdul if hasattr(hdul, "__enter__") else contextlib.nullcontext(hdul)):
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
            say(str(d) + suffix)
        # Tables the validator could not decode are left out (only a lenient read gets here).
        skip = {d.hdu for d in defects if d.code == "damaged-table"}
        return _read_file(hdul, path, wanted, keep_flagged, strict, skip, say)


def _open(path, strict=True):
    """The file's HDUs and notes: the fast decoder where it applies, else astropy.

    Either way the file is read (and decompressed) once and its layout checked first, so
    a file cut short is named as truncated instead of failing later on a short column,
    and no size in a header is trusted before it is checked against the file. A file
    that lacks only part of its final padding is refused in strict mode and read with a
    note otherwise. Header cards that no FITS reader can read (outside the cards that
    define the layout, which make the file unreadable) refuse the file in strict mode;
    leniently they are read as blank cards, with a note.
    """
    buf = read_fits_bytes(path)
    notes = []
    short = -len(buf) % BLOCK
    layout = None
    if short:
        layout = fits_layout(buf, path, allow_short_padding=not strict)
        last = layout[-1]
        notes.append(f"{path}: truncated FITS file: it ends {short} bytes short of a whole 2880-byte block after "
                     f"{last.name or 'HDU ' + str(last.index)} (HDU {last.index}); loaded what is there because "
                     "strict=False, but HDUs that followed may be lost")
        buf = buf + b"\0" * short   # zero padding adds nothing to a checksum
    if _FAST:
        hdus = open_simple_fits(path, buf)
        if hdus is not None:
            return hdus, notes
    if layout is None:
        layout = fits_layout(buf, path)
    bad = [(h, off, num, key, why) for h in layout for off, num, key, why in h.bad_cards]
    if bad:
        shown = "; ".join(f"{h.name or 'HDU ' + str(h.index)} (HDU {h.index}): header card {num}"
                          f"{f' ({key})' if key else ''} {why}" for h, _, num, key, why in bad[:3])
        more = f" and {len(bad) - 3} more" if len(bad) > 3 else ""
        if strict:
            raise DataError(f"{path}: damaged FITS file: {len(bad)} header card(s) no FITS reader can read: "
                            f"{shown}{more}")
        notes.append(f"{path}: damaged FITS file: {len(bad)} header card(s) no FITS reader can read ({shown}{more}); "
                     "read without them because strict=False")
        buf = blank_cards(buf, [off for _, off, _, _, _ in bad])
        if _FAST:
            hdus = open_simple_fits(path, buf)
            if hdus is not None:
                return hdus, notes
    try:
        return fits.open(io.BytesIO(buf), memmap=False, lazy_load_hdus=False), notes
    except Exception as exc:  # astropy raises OSError/ValueError/VerifyError variants
        # Only the exception's type: its text may quote the file's header.
        raise DataError(f"{path}: damaged FITS file: astropy cannot read it ({type(exc).__name__}) although "
                        "its layout is sound") from exc


# Set False to read every file through astropy (the tests compare both paths).
_FAST = True


def _strip(v) -> str:
    return str(v).strip()


def _read_file(hdul, path, wanted, keep_flagged, strict=True, skip=(), say=None):
    """Turn one open OIFITS file into flat per-kind columns (validation already done).

    ``skip``: HDU indices the validator could not decode. A table that fails here is
    named in a DataError (strict) or skipped with a note (lenient), through ``say``.
    """
    say = say or _warn
    version = oifits_version(hdul)
    tables = [(i, h) for i, h in enumerate(hdul) if i > 0 and i not in skip and is_table(h)]

    @contextlib.contextmanager
    def reading(i, h):
        try:
            yield
        except DataError:
            raise
        except Exception as exc:  # numpy or astropy on content the checks before did not foresee
            text = f"{path}: damaged FITS file: {_label(h, i)}: the table cannot be decoded: {damage_text(exc)}"
            if strict:
                raise DataError(text) from exc
            say(text + "; skipped because strict=False")

    # Targets: TARGET_ID → name, and the OI_TARGET fields by name.
    tnames: dict[int, str] = {}
    tinfo: dict[str, dict] = {}
    for i, h in tables:
        if h.name != "OI_TARGET" or "TARGET_ID" not in h.columns.names:
            continue
        with reading(i, h):
            data = h.data
            for j in range(len(data)):
                tid = int(data["TARGET_ID"][j])
                name = _strip(data["TARGET"][j]) if "TARGET" in h.columns.names else f"TARGET_ID={tid}"
                tnames.setdefault(tid, name)
                info = {}
                for f in _TARGET_FIELDS:
                    if f in h.columns.names:
                        info[f.lower()] = _target_field(data[f][j], f)
                tinfo.setdefault(name, info)
    if wanted is not None:
        tinfo = {n: i for n, i in tinfo.items() if n.lower() in wanted}
    # Wavelength tables by INSNAME: EFF_WAVE and EFF_BAND in µm, and which channels have a
    # usable wavelength (the validator names the others; see the module docstring).
    waves: dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
    for i, h in tables:
        if h.name != "OI_WAVELENGTH" or "INSNAME" not in h.header or "EFF_WAVE" not in h.columns.names:
            continue
        with reading(i, h):
            w = np.asarray(h.data["EFF_WAVE"], dtype=float)
            b = (np.asarray(h.data["EFF_BAND"], dtype=float) if "EFF_BAND" in h.columns.names
                 else np.full(w.shape, np.nan))
            if w.ndim != 1 or b.shape != w.shape:
                continue  # reported by the validator (width-mismatch)
            ok = plausible_wavelength_m(w)
            with np.errstate(invalid="ignore"):
                # A width that is not finite, ≥ 0 and below 2λ: read without one (NaN).
                b = np.where(ok & (b >= 0) & (b < 2.0 * w), b, np.nan)
            waves.setdefault(_strip(h.header["INSNAME"]), (w * 1e6, b * 1e6, ok))
    # Station tables by ARRNAME.
    arrays = {}
    for i, h in tables:
        if h.name != "OI_ARRAY" or "STA_INDEX" not in h.columns.names:
            continue
        with reading(i, h):
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
    for i, h in tables:
        kind = _TABLE_KIND.get(h.name)
        if kind is None or (kind == "flux" and version == 1):
            continue
        with reading(i, h):
            cols = _read_table(kind, h, path, waves, tnames, wanted_ids, keep_flagged, _label(h, i), say)
            if cols is not None and len(cols["flag"]):
                parts[kind].append(cols)
    return parts, tinfo, arrays


def _target_field(v, column):
    """One OI_TARGET field: text stripped, a number as float; anything else is damage."""
    if isinstance(v, (str, bytes, np.str_)):
        return _strip(v)
    a = np.asarray(v)
    if a.size != 1 or a.dtype.kind not in "fiub":
        raise ColumnDamage(f"column {column} holds {a.size} value(s) of kind {a.dtype.kind!r} per row, not one "
                           "real number")
    return float(a.reshape(()))


# (value, error) column pairs of each kind: a point is usable when one of its pairs is.
_PAIRS = {
    "vis2": (("VIS2DATA", "VIS2ERR"),),
    "vis": (("VISAMP", "VISAMPERR"), ("VISPHI", "VISPHIERR")),
    "t3": (("T3AMP", "T3AMPERR"), ("T3PHI", "T3PHIERR")),
    "flux": (("FLUXDATA", "FLUXERR"),),
}


def _numbers(a, column):
    """A data column as float; a column of text or complex numbers is damage, not data."""
    if a.dtype.kind not in "fiub":
        raise ColumnDamage(f"column {column} holds {'text' if a.dtype.kind in 'SUO' else 'complex numbers'}, "
                           "not real numbers")
    return a.astype(float)


def _read_table(kind, h, path, waves, tnames, wanted_ids, keep_flagged, label="", say=None):
    """Flatten one data table to per-point columns; None if it cannot be resolved.

    Values are checked here (module docstring, "Values checked at the door"), and what
    was flagged or left out is counted in one note for the table, through ``say``.
    """
    say = say or _warn
    label = label or h.name
    hdr, names = h.header, list(h.columns.names)
    data_cols, uv_cols = _COLUMNS[kind]
    ins = _strip(hdr.get("INSNAME", ""))
    # Drafts before OIFITS v2 named OI_FLUX's data column FLUX; only lenient reading gets
    # here without FLUXDATA (the validator reports it), and then reads the old name.
    alias = {"FLUXDATA": "FLUX"} if kind == "flux" and "FLUXDATA" not in names and "FLUX" in names else {}
    if alias:
        say(f"{os.fspath(path)}: {h.name} (INSNAME {ins!r}): read the pre-standard column FLUX as FLUXDATA")
        names = [("FLUXDATA" if n == "FLUX" else n) for n in names]
    if ins not in waves or any(c not in names for c in data_cols + uv_cols):
        return None  # reported by the validator; nothing sensible to load
    wave, band, wave_ok = waves[ins]
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
        chan[c] = a.reshape(nrow, nw) if c == "FLAG" else _numbers(a, c).reshape(nrow, nw)
    flag = chan["FLAG"].astype(bool) if "FLAG" in chan else np.zeros((nrow, nw), bool)
    # Negative error bars only survive validation in lenient mode; treat them as flagged
    # so that a χ² never sees a negative variance.
    with np.errstate(invalid="ignore"):
        for c in ERROR_COLS[h.name]:
            if c in chan:
                flag = flag | (chan[c] < 0)
    # Units first, so that the values are checked as they will be compared.
    amptyp = _strip(hdr.get("AMPTYP", "absolute")).lower()
    phityp = _strip(hdr.get("PHITYP", "absolute")).lower()
    unit_out = ""
    if kind == "vis":
        unit_str = _strip(h.columns["VISAMP"].unit or "")
        if amptyp == "correlated flux" and unit_str:
            chan["VISAMP"], chan["VISAMPERR"], unit_out = _flux_to_jy(chan["VISAMP"], chan["VISAMPERR"],
                                                                      unit_str, wave)
            if unit_out != "Jy":
                say(f"{os.fspath(path)}: {h.name} (INSNAME {ins!r}): correlated fluxes in {unit_str!r}, not a flux "
                    "density; they are read in that unit and not compared with the model")
    if kind == "flux":
        unit_str = _strip(h.columns[alias.get("FLUXDATA", "FLUXDATA")].unit or "")
        chan["FLUXDATA"], chan["FLUXERR"], unit_out = _flux_to_jy(chan["FLUXDATA"], chan["FLUXERR"], unit_str, wave)
    # Values: a pair (value, error) is usable or not; see the module docstring.
    pairs = _PAIRS[kind]
    usable_any = np.zeros((nrow, nw), bool)
    left_out = {}
    for v, e in pairs:
        ok = usable_values(chan[v], chan[e])
        usable_any |= ok
        if len(pairs) > 1:
            bad = ~ok & ~flag
            if bad.any():   # copies only where there is something to leave out
                # A NaN value is "not measured" (a NaN T3AMP beside a closure phase): silent.
                left_out[v] = bad & ~np.isnan(chan[v])
                chan[v] = np.where(bad, np.nan, chan[v])
                chan[e] = np.where(bad, np.nan, chan[e])
    no_value = ~usable_any & ~flag
    # Where a point lies: its channel's wavelength and its row's (u, v).
    uv = []
    for c in uv_cols:
        a = _numbers(np.asarray(d[c]), c).ravel()
        if a.size != nrow:
            raise ColumnDamage(f"column {c} holds {a.size} values for {nrow} rows")
        uv.append(a)
    placed = wave_ok[None, :] & (plausible_uv(*uv)[:, None] if uv else True)
    unplaced = ~placed & ~flag
    _count_out(say, path, label, ~flag, unplaced, no_value & placed,
               {c: m & placed & ~no_value for c, m in left_out.items()})
    flag = flag | no_value
    keep = (np.ones((nrow, nw), bool) if keep_flagged else ~flag) & placed
    with np.errstate(invalid="ignore"):   # a NaN TARGET_ID becomes an id no target has
        tid = np.asarray(d["TARGET_ID"]).astype(int).ravel() if "TARGET_ID" in names else np.zeros(nrow, int)
    if tid.size != nrow:
        raise ColumnDamage(f"column TARGET_ID holds {tid.size} values for {nrow} rows")
    if wanted_ids is not None:
        keep &= np.isin(tid, wanted_ids)[:, None]
    r, c = np.nonzero(keep)
    n = r.size
    out = {}
    for oi_name, our_name in zip(data_cols, KIND_SPEC[kind]["data"]):
        out[our_name] = chan[oi_name][r, c]
    out["flag"] = flag[r, c]
    for a, our_name in zip(uv, KIND_SPEC[kind]["uv"]):
        out[our_name] = a[r]
    out["wavelength"] = wave[c]
    out["bandwidth"] = band[c]
    out["mjd"] = _numbers(np.asarray(d["MJD"]), "MJD").ravel()[r] if "MJD" in names else np.full(n, np.nan)
    out["int_time"] = (_numbers(np.asarray(d["INT_TIME"]), "INT_TIME").ravel()[r] if "INT_TIME" in names
                       else np.full(n, np.nan))
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
        out["amptyp"] = np.full(n, amptyp, dtype=object)
        out["phityp"] = np.full(n, phityp, dtype=object)
        if amptyp == "correlated flux" and unit_out not in ("", "Jy"):
            # Kept in their own unit and marked, so that no comparison takes them for Jy.
            out["amptyp"] = np.full(n, f"correlated flux [{unit_out}]", dtype=object)
        if "differential" in (amptyp, phityp):
            refmap = np.asarray(d["VISREFMAP"]) if "VISREFMAP" in names else None
            if refmap is None or refmap.size != nrow * nw * nw:
                # Only lenient reading gets here (the validator reports a missing map, and strict
                # reading refuses it): every channel of the row is the reference, the usual map.
                refmap = np.ones((nrow, nw, nw), bool)
            # A channel without a usable wavelength cannot be a reference either.
            refmap = refmap.reshape(nrow, nw, nw).astype(bool) & wave_ok[None, None, :]
            out["ref_wavelength"], out["ref_bandwidth"] = reference_from_map(refmap, wave, band, r, c)
    if kind == "flux":
        out["calstat"] = np.full(n, _strip(hdr.get("CALSTAT", "C")), dtype=object)
        out["flux_unit"] = np.full(n, unit_out, dtype=object)
    return out


def _count_out(say, path, label, unflagged, unplaced, no_value, left_out):
    """One note for a table: its unflagged points that were dropped, flagged or trimmed."""
    n_unplaced, n_none = int(unplaced.sum()), int(no_value.sum())
    trimmed = {c: int(m.sum()) for c, m in left_out.items() if m.any()}
    if not (n_unplaced or n_none or trimmed):
        return
    parts = []
    if n_unplaced:
        parts.append(f"{n_unplaced} left out: no usable wavelength (EFF_WAVE) or (u, v) (finite, within Earth's "
                     "diameter)")
    if n_none:
        parts.append(f"{n_none} flagged: no usable value ({VALUE_RULE})")
    text = f"{os.fspath(path)}: {label}: of {int(unflagged.sum())} unflagged point(s), " + "; ".join(parts)
    if trimmed:
        shown = ", ".join(f"{c} of {k} point(s)" for c, k in trimmed.items())
        text += ("; " if parts else "") + f"unusable value(s) left out of otherwise good points: {shown} (set to NaN)"
    say(text)


def _flux_to_jy(flux, err, unit_str, wavelength_um):
    """Convert OI_FLUX values to Jy when their unit is a spectral flux density."""
    if not unit_str:
        return flux, err, ""
    try:
        unit = u.Unit(unit_str)
        eq = u.spectral_density(wavelength_um * u.um)
        with np.errstate(all="ignore"):   # an absurd value overflows; the value checks flag it
            f = (flux * unit).to_value(u.Jy, equivalencies=eq)
            e = (err * unit).to_value(u.Jy, equivalencies=eq)
    except (ValueError, u.UnitsError, TypeError):
        # Uncalibrated fluxes (counts, ADU, …) stay in their own unit.
        return flux, err, unit_str
    return f, e, "Jy"
