"""Conformance checks for OIFITS files (v1: Pauls et al. 2005, PASP 117, 1255;
v2: Duvert, Young & Hummel 2017, A&A 597, A8).

:func:`validate_oifits` inspects an open FITS file and returns a list of
:class:`Defect` records, each with a severity:

``"error"``
    the file does not conform to the standard (the reader refuses it in strict mode);
``"warning"``
    the file is valid OIFITS but may cause problems (the reader loads it and warns).

Rules checked (the levels follow the standard's own conformity checker):

errors
    - the file is not FITS (checked from its first bytes, not its name);
    - an ``OI_*`` HDU that is not a binary table, or a table whose content cannot be
      decoded (code ``damaged-table``: the reader then skips it when not strict);
    - a mandatory table is missing: exactly one OI_TARGET, at least one OI_WAVELENGTH,
      at least one data table (OI_VIS, OI_VIS2, OI_T3; v2 also OI_FLUX), and in v2 at
      least one OI_ARRAY;
    - OI_REVN missing, unknown or mixed between v1 and v2 tables;
    - v2 primary header keyword missing (ORIGIN, DATE, DATE-OBS, CONTENT, TELESCOP,
      INSTRUME, OBSERVER, OBJECT, INSMODE) or CONTENT is not 'OIFITS2';
    - a mandatory keyword or column of a table is missing;
    - an illegal keyword value: FRAME, AMPTYP, PHITYP, CALSTAT, FOVTYPE;
    - AMPTYP or PHITYP "differential" without a VISREFMAP column;
    - duplicate TARGET_ID, duplicate INSNAME or duplicate ARRNAME;
    - a TARGET_ID with no OI_TARGET row;
    - an INSNAME with no OI_WAVELENGTH table, or a data column width that differs from
      that table's number of channels;
    - ARRNAME missing in a v2 data table (OI_FLUX only when CALSTAT = 'U'), or naming no
      OI_ARRAY table;
    - a STA_INDEX not found in the referenced OI_ARRAY;
    - a CORRNAME naming no OI_CORR table;
    - a negative error bar (VISAMPERR, VISPHIERR, VIS2ERR, T3AMPERR, T3PHIERR, FLUXERR)
      in an unflagged channel;
    - an EFF_WAVE that is not finite or lies outside 1e-8 … 1e-2 m (code
      ``bad-wavelength``): OI_WAVELENGTH has no flag, and a point without a wavelength has
      no spatial frequency. Read leniently, the data of those channels are flagged;
    - an unnormalised triple product: T3AMP - 1 > T3AMPERR in an unflagged channel;
    - a CHECKSUM or DATASUM keyword that does not match the HDU's content.

warnings
    - EFF_WAVE not in ascending order in an OI_WAVELENGTH table;
    - duplicate TARGET names in OI_TARGET;
    - non-zero TIME in a v2 data table;
    - VISREFMAP present for absolute data;
    - an EFF_BAND that is not finite, negative, or at least twice its EFF_WAVE (a channel
      reaching λ ≤ 0) (code ``bad-bandwidth``): those channels are read without a width
      (monochromatic, as for EFF_BAND = 0, which writers use when no width is known).
"""

from __future__ import annotations

import contextlib
import gzip
import os
import zlib
from collections import Counter
from dataclasses import dataclass

import numpy as np

from ..errors import DataError
from .checks import WAVELENGTH_RANGE_M, plausible_wavelength_m
from .fits_tables import ColumnDamage, is_gzip, looks_like_fits_bytes

__all__ = [
    "Defect",
    "OifitsWarning",
    "looks_like_fits",
    "check_fits_signature",
    "validate_oifits",
    "oifits_version",
    "DATA_TABLES",
]

DATA_TABLES = ("OI_VIS", "OI_VIS2", "OI_T3", "OI_FLUX")
_CORE = ("OI_TARGET", "OI_ARRAY", "OI_WAVELENGTH", "OI_VIS", "OI_VIS2", "OI_T3")
_V2_ONLY_REV1 = ("OI_FLUX", "OI_CORR", "OI_INSPOL")
_V2_PRIMARY = ("ORIGIN", "DATE", "DATE-OBS", "CONTENT", "TELESCOP", "INSTRUME", "OBSERVER",
               "OBJECT", "INSMODE")

_TARGET_COLS = ("TARGET_ID", "TARGET", "RAEP0", "DECEP0", "EQUINOX", "RA_ERR", "DEC_ERR", "SYSVEL",
                "VELTYP", "VELDEF", "PMRA", "PMDEC", "PMRA_ERR", "PMDEC_ERR", "PARALLAX", "PARA_ERR",
                "SPECTYP")
_ARRAY_COLS = ("TEL_NAME", "STA_NAME", "STA_INDEX", "DIAMETER", "STAXYZ")
_ROW_COLS = ("TARGET_ID", "TIME", "MJD", "INT_TIME")
_DATA_COLS = {
    "OI_VIS2": _ROW_COLS + ("VIS2DATA", "VIS2ERR", "UCOORD", "VCOORD", "STA_INDEX", "FLAG"),
    "OI_VIS": _ROW_COLS + ("VISAMP", "VISAMPERR", "VISPHI", "VISPHIERR", "UCOORD", "VCOORD",
                           "STA_INDEX", "FLAG"),
    "OI_T3": _ROW_COLS + ("T3AMP", "T3AMPERR", "T3PHI", "T3PHIERR", "U1COORD", "V1COORD",
                          "U2COORD", "V2COORD", "STA_INDEX", "FLAG"),
    "OI_FLUX": ("TARGET_ID", "MJD", "INT_TIME", "FLUXDATA", "FLUXERR", "FLAG"),
}
#: Columns that hold one value per spectral channel.
CHANNEL_COLS = {
    "OI_VIS2": ("VIS2DATA", "VIS2ERR", "FLAG"),
    "OI_VIS": ("VISAMP", "VISAMPERR", "VISPHI", "VISPHIERR", "FLAG"),
    "OI_T3": ("T3AMP", "T3AMPERR", "T3PHI", "T3PHIERR", "FLAG"),
    "OI_FLUX": ("FLUXDATA", "FLUXERR", "FLAG"),
}
ERROR_COLS = {
    "OI_VIS2": ("VIS2ERR",),
    "OI_VIS": ("VISAMPERR", "VISPHIERR"),
    "OI_T3": ("T3AMPERR", "T3PHIERR"),
    "OI_FLUX": ("FLUXERR",),
}
__all__ += ["CHANNEL_COLS", "ERROR_COLS", "is_table", "damage_text"]

_AMPTYP = ("absolute", "differential", "correlated flux")
_PHITYP = ("absolute", "differential")
_FRAME = ("GEOCENTRIC", "SKY")
_FOVTYPE = ("FWHM", "RADIUS")
_CALSTAT = ("C", "U")


class OifitsWarning(UserWarning):
    """A problem in an OIFITS file that did not stop it from being read."""


@dataclass(frozen=True)
class Defect:
    """One problem found in an OIFITS file.

    Attributes
    ----------
    severity : {"error", "warning"}
        ``error``: not conforming OIFITS; ``warning``: valid but may cause problems.
    code : str
        Short identifier of the rule (e.g. ``"negative-error"``).
    file : str
        File name.
    table : str
        Table (with HDU number) or ``"primary header"`` / ``"file"``.
    message : str
        What is wrong, with the offending value.
    hdu : int or None
        Index of the HDU concerned (0 for the primary), None for the file as a whole.
    """

    severity: str
    code: str
    file: str
    table: str
    message: str
    hdu: int | None = None

    def __str__(self) -> str:
        return f"{self.file}: {self.table}: {self.message} [{self.code}]"


def looks_like_fits(path) -> bool:
    """True if the file starts like a FITS file (``SIMPLE  =`` … ``T`` in column 30).

    A gzip-compressed file is looked into: ``.fits.gz`` files are FITS too.
    """
    try:
        with open(path, "rb") as fh:
            head = fh.read(80)
        if is_gzip(head):
            with gzip.open(path, "rb") as fh:
                head = fh.read(80)
    except (OSError, EOFError, zlib.error):
        return False
    return looks_like_fits_bytes(head)


def check_fits_signature(path) -> None:
    """Raise :class:`DataError` unless ``path`` exists and starts like a FITS file."""
    if not os.path.exists(path):
        raise DataError(f"{path}: file not found")
    if os.path.isdir(path):
        raise DataError(f"{path}: is a directory, not an OIFITS file")
    if not looks_like_fits(path):
        with open(path, "rb") as fh:
            compressed = is_gzip(fh.read(2))
        if compressed:
            raise DataError(f"{path}: a gzip-compressed file that does not hold FITS (or whose compressed "
                            "stream is damaged)")
        raise DataError(f"{path}: not a FITS file (it does not start with a FITS primary header "
                        "'SIMPLE  = T'), whatever its name says")


def _label(hdu, index) -> str:
    name = hdu.name or "PRIMARY"
    extra = ""
    try:
        for key in ("INSNAME", "ARRNAME"):
            if key in hdu.header and name in DATA_TABLES + ("OI_WAVELENGTH", "OI_ARRAY"):
                extra = f", {key}={str(hdu.header[key]).strip()!r}"
                break
    except Exception:  # an unreadable card: the name and index still say which table
        extra = ""
    return f"{name} (HDU {index}{extra})"


def is_table(hdu) -> bool:
    """Whether an HDU is a table (has columns): an ``OI_*`` image or damaged HDU is not."""
    return getattr(hdu, "columns", None) is not None


def damage_text(exc) -> str:
    """What a decoding failure says about a table, without quoting the file's content.

    Our own :class:`~diskexplorer.data.fits_tables.ColumnDamage` says which column; any
    other exception is named by its type only (its text may quote the file).
    """
    if isinstance(exc, ColumnDamage):
        return str(exc)
    return f"its content does not match its header ({type(exc).__name__})"


def _strip(v):
    return str(v).strip()


def oifits_version(hdul) -> int:
    """Return 2 for OIFITS v2 content (CONTENT = 'OIFITS2' or revision-2 tables), else 1."""
    with contextlib.suppress(Exception):  # unreadable cards are reported table by table
        if _strip(hdul[0].header.get("CONTENT", "")).upper() == "OIFITS2":
            return 2
    for hdu in hdul[1:]:
        with contextlib.suppress(Exception):
            if hdu.name in _CORE and hdu.header.get("OI_REVN") == 2:
                return 2
    return 1


def _channels(arr, nrow):
    """Reshape a per-channel column to (nrow, nwave); FITS repeat 1 comes back 1-D."""
    a = np.asarray(arr)
    return a.reshape(nrow, -1) if nrow else a.reshape(0, 0)


def validate_oifits(hdul, path, *, check_checksums: bool = True) -> list[Defect]:
    """Check an open FITS file against the OIFITS standard.

    Parameters
    ----------
    hdul : astropy.io.fits.HDUList
    path : str or os.PathLike
        File name used in the messages.
    check_checksums : bool
        Verify CHECKSUM/DATASUM keywords where present.

    Returns
    -------
    list of Defect
        Empty for a clean file. See the module docstring for the rules and their levels.
    """
    fname = os.fspath(path)
    out: list[Defect] = []
    at: list = [None]   # the HDU whose checks are running, named by a defect it raises

    def err(code, table, msg):
        out.append(Defect("error", code, fname, table, msg, at[0]))

    def warn(code, table, msg):
        out.append(Defect("warning", code, fname, table, msg, at[0]))

    damaged: set[int] = set()

    @contextlib.contextmanager
    def table_checks(i, h):
        """Run one table's checks; a table that cannot be decoded becomes one error defect."""
        at[0] = i
        try:
            yield
        except DataError:
            raise
        except Exception as exc:  # astropy or numpy failing on the table's content
            damaged.add(i)
            err("damaged-table", _label(h, i), f"the table cannot be decoded: {damage_text(exc)}")
        finally:
            at[0] = None

    version = oifits_version(hdul)
    tables = []
    for i, h in enumerate(hdul):
        if i == 0 or not h.name.startswith("OI_"):
            continue
        if not is_table(h):
            at[0] = i
            err("damaged-table", _label(h, i), "an OI_* HDU that is not a binary table; it is ignored")
            at[0] = None
            damaged.add(i)
            continue
        tables.append((i, h))
    by_name: dict[str, list] = {}
    for i, h in tables:
        by_name.setdefault(h.name, []).append((i, h))

    # --- revisions -------------------------------------------------------------------
    core_revs = set()
    for i, h in tables:
        with table_checks(i, h):
            rev = h.header.get("OI_REVN")
            if rev is None:
                err("missing-keyword", _label(h, i), "mandatory keyword OI_REVN is missing")
                continue
            if h.name in _CORE:
                if rev not in (1, 2):
                    err("bad-revision", _label(h, i), f"unknown OI_REVN = {rev!r} (expected 1 or 2)")
                core_revs.add(rev)
            elif h.name in _V2_ONLY_REV1 and rev != 1:
                err("bad-revision", _label(h, i), f"unknown OI_REVN = {rev!r} for {h.name} (expected 1)")
    if len(core_revs & {1, 2}) > 1:
        err("mixed-revisions", "file", "mixed table revisions: both OIFITS v1 (OI_REVN = 1) and "
            "v2 (OI_REVN = 2) tables")

    # --- mandatory tables and primary header -----------------------------------------
    n_target = len(by_name.get("OI_TARGET", []))
    if n_target != 1:
        err("missing-table" if n_target == 0 else "extra-table", "file",
            f"exactly one OI_TARGET table is required, found {n_target}")
    if not by_name.get("OI_WAVELENGTH"):
        err("missing-table", "file", "no OI_WAVELENGTH table (at least one is required)")
    data_kinds = DATA_TABLES if version == 2 else DATA_TABLES[:3]
    if not any(by_name.get(k) for k in data_kinds):
        err("missing-table", "file", f"no data table (one of {', '.join(data_kinds)} is required)")
    if version == 2 and not by_name.get("OI_ARRAY"):
        err("missing-table", "file", "no OI_ARRAY table (mandatory in OIFITS v2)")
    if version == 2:
        ph = hdul[0].header
        missing = [k for k in _V2_PRIMARY if k not in ph]
        if missing:
            err("missing-keyword", "primary header",
                f"mandatory OIFITS v2 keyword(s) missing: {', '.join(missing)}")
        if "CONTENT" in ph and _strip(ph["CONTENT"]) != "OIFITS2":
            err("bad-keyword", "primary header", f"CONTENT = {ph['CONTENT']!r}, expected 'OIFITS2'")

    # --- OI_TARGET ---------------------------------------------------------------------
    target_ids: set[int] = set()
    for i, h in by_name.get("OI_TARGET", []):
        with table_checks(i, h):
            lab = _label(h, i)
            cols = h.columns.names
            miss = [c for c in _TARGET_COLS if c not in cols]
            if miss:
                err("missing-column", lab, f"mandatory column(s) missing: {', '.join(miss)}")
            if "TARGET_ID" in cols:
                ids = np.asarray(h.data["TARGET_ID"]).astype(int)
                uniq, counts = np.unique(ids, return_counts=True)
                if (counts > 1).any():
                    err("duplicate-target-id", lab, f"duplicate TARGET_ID value(s) {uniq[counts > 1].tolist()}")
                target_ids.update(ids.tolist())
            if "TARGET" in cols:
                # Counter, not list.count: a long damaged table would take quadratic time.
                dups = sorted(t for t, n in Counter(_strip(t) for t in h.data["TARGET"]).items() if n > 1)
                if dups:
                    warn("duplicate-target", lab, f"duplicated target name(s) {dups} in TARGET")
            if "CATEGORY" in cols:
                pass  # optional, free of rules beyond its length

    # --- OI_ARRAY ----------------------------------------------------------------------
    arrays: dict[str, set] = {}
    for i, h in by_name.get("OI_ARRAY", []):
        with table_checks(i, h):
            lab = _label(h, i)
            hdr = h.header
            for key in ("ARRNAME", "FRAME"):
                if key not in hdr:
                    err("missing-keyword", lab, f"mandatory keyword {key} is missing")
            frame = _strip(hdr.get("FRAME", "GEOCENTRIC")).upper()
            if frame not in _FRAME:
                err("bad-keyword", lab, f"illegal FRAME = {hdr.get('FRAME')!r} (expected GEOCENTRIC or SKY)")
            need = _ARRAY_COLS + (("FOV", "FOVTYPE") if version == 2 else ())
            miss = [c for c in need if c not in h.columns.names]
            if miss:
                err("missing-column", lab, f"mandatory column(s) missing: {', '.join(miss)}")
            if "FOVTYPE" in h.columns.names:
                bad = sorted({_strip(v) for v in h.data["FOVTYPE"]} - set(_FOVTYPE))
                if bad:
                    err("bad-keyword", lab, f"illegal FOVTYPE value(s) {bad} (expected FWHM or RADIUS)")
            name = _strip(hdr.get("ARRNAME", ""))
            if name in arrays:
                err("duplicate-arrname", lab, f"ARRNAME {name!r} is used by more than one OI_ARRAY table")
            arrays[name] = (set(np.asarray(h.data["STA_INDEX"]).astype(int).tolist())
                            if "STA_INDEX" in h.columns.names else set())

    # --- OI_WAVELENGTH -----------------------------------------------------------------
    nwave: dict[str, int] = {}
    for i, h in by_name.get("OI_WAVELENGTH", []):
        with table_checks(i, h):
            lab = _label(h, i)
            if "INSNAME" not in h.header:
                err("missing-keyword", lab, "mandatory keyword INSNAME is missing")
                continue
            ins = _strip(h.header["INSNAME"])
            miss = [c for c in ("EFF_WAVE", "EFF_BAND") if c not in h.columns.names]
            if miss:
                err("missing-column", lab, f"mandatory column(s) missing: {', '.join(miss)}")
                continue
            if ins in nwave:
                err("duplicate-insname", lab, f"INSNAME {ins!r} is used by more than one OI_WAVELENGTH table")
            wave = np.asarray(h.data["EFF_WAVE"], dtype=float)
            band = np.asarray(h.data["EFF_BAND"], dtype=float)
            if wave.ndim != 1 or band.shape != wave.shape:
                err("width-mismatch", lab, "EFF_WAVE and EFF_BAND must hold one value per row (channel); "
                    f"their formats give {wave.size} and {band.size} values for {len(wave)} rows")
                continue
            nwave[ins] = wave.size
            bad_wave = ~plausible_wavelength_m(wave)
            if bad_wave.any():
                k = int(np.flatnonzero(bad_wave)[0])
                lo, hi = WAVELENGTH_RANGE_M
                err("bad-wavelength", lab, f"EFF_WAVE of {int(bad_wave.sum())} of {wave.size} channel(s) is not a "
                    f"wavelength in metres (finite, {lo:g} … {hi:g} m); first: channel {k + 1}, "
                    f"EFF_WAVE = {wave[k]:.4g}")
            with np.errstate(invalid="ignore"):
                bad_band = ~(band >= 0) | (band >= 2.0 * wave) | ~np.isfinite(band)
            bad_band &= ~bad_wave
            if bad_band.any():
                k = int(np.flatnonzero(bad_band)[0])
                warn("bad-bandwidth", lab, f"EFF_BAND of {int(bad_band.sum())} of {wave.size} channel(s) is not a "
                     f"width (finite, >= 0 and below twice EFF_WAVE); first: channel {k + 1}, EFF_BAND = "
                     f"{band[k]:.4g} m; those channels are read without a width (monochromatic)")
            good = wave[~bad_wave]   # the order of the channels that have a wavelength
            if good.size > 1 and not np.all(np.diff(good) > 0):
                order = "in reversed (descending) order" if np.all(np.diff(good) < 0) else "not in ascending order"
                warn("wavelength-order", lab, f"EFF_WAVE values are {order} "
                     f"({good[0] * 1e6:.4g} … {good[-1] * 1e6:.4g} µm)")

    corrnames = set()
    for i, h in by_name.get("OI_CORR", []):
        with table_checks(i, h):
            corrnames.add(_strip(h.header.get("CORRNAME", "")))

    # --- data tables -------------------------------------------------------------------
    for i, h in tables:
        with table_checks(i, h):
            if h.name not in DATA_TABLES:
                continue
            kind = h.name
            if version == 1 and kind == "OI_FLUX":
                continue  # not part of v1; ignored by the v1 reader
            lab = _label(h, i)
            hdr = h.header
            cols = h.columns.names
            nrow = int(hdr.get("NAXIS2", 0))
            need = _DATA_COLS[kind]
            if version == 2 and kind != "OI_FLUX":
                need = tuple(c for c in need)  # TIME stays mandatory (zero) in v2
            miss = [c for c in need if c not in cols]
            if miss:
                err("missing-column", lab, f"mandatory column(s) missing: {', '.join(miss)}")
            for key in ("DATE-OBS", "INSNAME"):
                if key not in hdr:
                    err("missing-keyword", lab, f"mandatory keyword {key} is missing")
            if kind == "OI_FLUX":
                calstat = _strip(hdr.get("CALSTAT", ""))
                if "CALSTAT" not in hdr:
                    err("missing-keyword", lab, "mandatory keyword CALSTAT is missing")
                elif calstat not in _CALSTAT:
                    err("bad-keyword", lab, f"illegal CALSTAT = {hdr['CALSTAT']!r} (expected 'C' or 'U')")
                if "FOVTYPE" in hdr and _strip(hdr["FOVTYPE"]) not in _FOVTYPE:
                    err("bad-keyword", lab, f"illegal FOVTYPE = {hdr['FOVTYPE']!r} (expected FWHM or RADIUS)")
                arr_needed = version == 2 and calstat == "U"
            else:
                arr_needed = version == 2
            arrname = _strip(hdr["ARRNAME"]) if "ARRNAME" in hdr else None
            if arrname is None and arr_needed:
                err("missing-keyword", lab, "mandatory keyword ARRNAME is missing")
            if arrname is not None and arrname not in arrays:
                err("missing-array", lab, f"ARRNAME {arrname!r} refers to no OI_ARRAY table "
                    f"(present: {sorted(arrays) or 'none'})")
            if "CORRNAME" in hdr and _strip(hdr["CORRNAME"]) not in corrnames:
                err("missing-corr", lab, f"CORRNAME {_strip(hdr['CORRNAME'])!r} refers to no OI_CORR table")
            if kind == "OI_VIS":
                amptyp = _strip(hdr.get("AMPTYP", "absolute")).lower()
                phityp = _strip(hdr.get("PHITYP", "absolute")).lower()
                if amptyp not in _AMPTYP:
                    err("bad-keyword", lab, f"illegal AMPTYP = {hdr.get('AMPTYP')!r} (expected one of {_AMPTYP})")
                if phityp not in _PHITYP:
                    err("bad-keyword", lab, f"illegal PHITYP = {hdr.get('PHITYP')!r} (expected one of {_PHITYP})")
                differential = "differential" in (amptyp, phityp)
                if differential and "VISREFMAP" not in cols:
                    err("missing-column", lab, "AMPTYP/PHITYP is 'differential' but VISREFMAP is missing")
                if not differential and "VISREFMAP" in cols:
                    warn("visrefmap-absolute", lab, "VISREFMAP is present for absolute data")

            # cross references
            ins = _strip(hdr.get("INSNAME", ""))
            nw = nwave.get(ins)
            if "INSNAME" in hdr and nw is None:
                err("missing-wavelength", lab, f"INSNAME {ins!r} refers to no OI_WAVELENGTH table")
            if "TARGET_ID" in cols and n_target:
                ids = np.unique(np.asarray(h.data["TARGET_ID"]).astype(int))
                unknown = sorted(set(ids.tolist()) - target_ids)
                if unknown:
                    err("missing-target", lab, f"TARGET_ID value(s) {unknown} have no OI_TARGET row "
                        f"(OI_TARGET holds {sorted(target_ids)})")
            if "STA_INDEX" in cols and arrname is not None and arrname in arrays:
                sta = np.unique(np.asarray(h.data["STA_INDEX"]).astype(int))
                unknown = sorted(set(sta.tolist()) - arrays[arrname])
                if unknown:
                    err("missing-station", lab, f"STA_INDEX value(s) {unknown} not found in OI_ARRAY "
                        f"{arrname!r}")
            if version == 2 and "TIME" in cols and nrow and np.any(np.asarray(h.data["TIME"]) != 0):
                warn("nonzero-time", lab, "TIME is not zero (OIFITS v2 keeps it only for backward "
                     "compatibility; MJD is used)")
            if nw is None or not nrow:
                continue
            bad_width = False
            for c in CHANNEL_COLS[kind]:
                if c in cols:
                    a = np.asarray(h.data[c])
                    if a.size != nrow * nw:
                        err("width-mismatch", lab, f"column {c} has {a.size // max(nrow, 1)} channels per row "
                            f"but OI_WAVELENGTH {ins!r} has {nw}")
                        bad_width = True
            if bad_width or "FLAG" not in cols:
                continue
            flag = _channels(h.data["FLAG"], nrow).astype(bool)
            for c in ERROR_COLS[kind]:
                if c not in cols:
                    continue
                e = _channels(h.data[c], nrow)
                neg = (e < 0) & ~flag
                if neg.any():
                    r, ch = np.argwhere(neg)[0]
                    err("negative-error", lab, f"negative error bar {c} = {e[r, ch]:g} in {int(neg.sum())} "
                        f"unflagged channel(s) (first: row {r + 1}, channel {ch + 1})")
            if kind == "OI_T3" and "T3AMP" in cols and "T3AMPERR" in cols:
                amp = _channels(h.data["T3AMP"], nrow)
                aerr = _channels(h.data["T3AMPERR"], nrow)
                with np.errstate(invalid="ignore"):
                    big = ((amp - 1.0) > aerr) & ~flag
                if big.any():
                    r, ch = np.argwhere(big)[0]
                    err("t3amp-out-of-range", lab, f"triple-product amplitude out of range: T3AMP - 1 > "
                        f"T3AMPERR in {int(big.sum())} unflagged channel(s) (first: row {r + 1}, channel "
                        f"{ch + 1}: T3AMP = {amp[r, ch]:g}, T3AMPERR = {aerr[r, ch]:g})")

    # --- checksums ---------------------------------------------------------------------
    if check_checksums:
        for i, h in enumerate(hdul):
            with table_checks(i, h):
                bad = []
                if "CHECKSUM" in h.header and h.verify_checksum() == 0:
                    bad.append("CHECKSUM")
                if "DATASUM" in h.header and h.verify_datasum() == 0:
                    bad.append("DATASUM")
                if bad:
                    verb = "do not" if len(bad) > 1 else "does not"
                    err("bad-checksum", _label(h, i), f"{' and '.join(bad)} {verb} match the HDU "
                        "content (the file was altered or damaged after it was written)")
    return out
