"""A fast reader for the plain FITS files OIFITS uses: a primary header and binary tables.

astropy.io.fits builds a Column object per column and a record view per table; for many
small OIFITS files that set-up, not the data, dominates the load time. OIFITS files are
simple — fixed-width binary tables of L, I, J, K, E, D, A, B, C, M columns, no heap, no
scaling — so they are decoded here with one ``numpy.frombuffer`` per table, following the
FITS standard (Pence et al. 2010, A&A 524, A42: 2880-byte blocks, 80-character cards,
big-endian fields, ``TDIMn`` in Fortran order).

Anything outside that subset (variable-length arrays, TSCAL/TZERO, bit columns, CONTINUE
cards, compressed or ASCII tables, images with data in extensions) makes
:func:`open_simple_fits` return ``None``, and the caller falls back to astropy. The objects
returned mimic the small part of astropy's HDU interface the OIFITS reader uses:
``name``, ``header`` (a dict), ``data[column]``, ``columns.names``, ``columns[name].unit``,
``verify_checksum()`` and ``verify_datasum()`` (1 match, 0 mismatch, 2 absent).

Gzip-compressed files are decompressed in memory first (:func:`read_fits_bytes`). A file
whose headers or data end before their announced size is damaged, not merely unusual:
:func:`fits_layout` walks the headers tolerantly and raises a
:class:`~diskexplorer.errors.DataError` naming the file, the HDU and what is missing.
"""
from __future__ import annotations

import gzip
import os
import re
import zlib
from dataclasses import dataclass

import numpy as np

from ..errors import DataError

__all__ = ["open_simple_fits", "SimpleHDU", "read_fits_bytes", "is_gzip", "looks_like_fits_bytes",
           "fits_layout", "HduLayout"]

BLOCK = 2880
CARD = 80
_FORMS = {"L": "S1", "B": "u1", "I": ">i2", "J": ">i4", "K": ">i8", "E": ">f4", "D": ">f8",
          "C": ">c8", "M": ">c16"}
_TFORM = re.compile(r"^\s*(\d*)([A-Z])(.*)$")
_UNSUPPORTED_KEYS = ("CONTINUE",)


class _Unsupported(Exception):
    """The file uses a FITS feature outside the simple subset: let astropy read it."""


def _parse_value(text):
    """Value of a header card (the part after '= '): str, bool, int, float or None."""
    t = text.strip()
    if t.startswith("'"):
        out, i = [], 1
        while i < len(t):
            if t[i] == "'":
                if i + 1 < len(t) and t[i + 1] == "'":
                    out.append("'")
                    i += 2
                    continue
                break
            out.append(t[i])
            i += 1
        return "".join(out).rstrip()
    t = t.split("/", 1)[0].strip()
    if t == "T":
        return True
    if t == "F":
        return False
    if t == "":
        return None
    try:
        return int(t)
    except ValueError:
        pass
    try:
        return float(t.replace("D", "E"))
    except ValueError:
        raise _Unsupported(f"header value {t!r}") from None


def _read_header(buf, start, tolerant=False):
    """(header dict, header bytes end) of the header starting at byte ``start``.

    With ``tolerant``, values outside the simple subset are kept as their raw text and
    CONTINUE cards are ignored (enough to learn the layout of any FITS file); a header
    without an END card in the buffer raises :class:`_Truncated` either way.
    """
    header = {}
    pos = start
    while True:
        if pos + BLOCK > len(buf):
            raise _Truncated(pos)
        block = buf[pos:pos + BLOCK]
        pos += BLOCK
        for k in range(0, BLOCK, CARD):
            card = block[k:k + CARD].decode("ascii", errors="replace" if tolerant else "strict")
            key = card[:8].rstrip()
            if key == "END":
                return header, pos
            if key in _UNSUPPORTED_KEYS and not tolerant:
                raise _Unsupported(key)
            if card[8:10] == "= " and key and key not in ("COMMENT", "HISTORY"):
                try:
                    header[key] = _parse_value(card[10:])
                except _Unsupported:
                    if not tolerant:
                        raise
                    header[key] = card[10:].strip()


class _Truncated(Exception):
    """A header runs past the end of the buffer (no END card before it ends)."""

    def __init__(self, pos):
        super().__init__(f"header without END card at byte {pos}")
        self.pos = pos


class _Column:
    def __init__(self, name, unit):
        self.name = name
        self.unit = unit


class _Columns:
    def __init__(self, cols):
        self._cols = {c.name: c for c in cols}
        self.names = [c.name for c in cols]

    def __getitem__(self, name):
        return self._cols[name]

    def __contains__(self, name):
        return name in self._cols


class _TableData:
    """Column access on the decoded records, converted the way astropy presents them."""

    def __init__(self, records, shapes, kinds, nrow):
        self._records = records
        self._shapes = shapes
        self._kinds = kinds
        self._cache = {}
        self.nrow = nrow

    def __len__(self):
        return self.nrow

    def __getitem__(self, name):
        if name not in self._cache:
            raw = self._records[name]
            kind = self._kinds[name]
            if kind == "L":
                out = raw == b"T"
            elif kind == "A":
                out = np.char.rstrip(np.char.decode(raw, "ascii"))
            else:
                out = raw
            shape = self._shapes[name]
            if shape is not None:
                out = out.reshape((self.nrow,) + shape)
            self._cache[name] = out
        return self._cache[name]


class SimpleHDU:
    """One header-and-data unit of a simple FITS file (see the module docstring)."""

    def __init__(self, header, header_bytes, data_bytes, data=None, columns=None):
        self.header = header
        self.name = str(header.get("EXTNAME", "PRIMARY" if "SIMPLE" in header else "")).strip().upper()
        self._header_bytes = header_bytes
        self._data_bytes = data_bytes
        self.data = data
        self.columns = columns

    @staticmethod
    def _sum(raw):
        # FITS checksum: 32-bit ones' complement sum of big-endian words, carries folded back.
        s = int(np.frombuffer(raw, ">u4").astype(np.uint64).sum()) if len(raw) else 0
        while s >> 32:
            s = (s & 0xFFFFFFFF) + (s >> 32)
        return s

    def verify_datasum(self):
        if "DATASUM" not in self.header:
            return 2
        try:
            stored = int(str(self.header["DATASUM"]).strip() or 0)
        except ValueError:
            return 0
        return 1 if self._sum(self._data_bytes) == stored else 0

    def verify_checksum(self):
        if "CHECKSUM" not in self.header:
            return 2
        total = self._sum(self._header_bytes) + self._sum(self._data_bytes)
        while total >> 32:
            total = (total & 0xFFFFFFFF) + (total >> 32)
        return 1 if total == 0xFFFFFFFF else 0


def _table(header, raw, where):
    nfields = int(header.get("TFIELDS", 0))
    width = int(header["NAXIS1"])
    nrow = int(header["NAXIS2"])
    if int(header.get("PCOUNT", 0)) or int(header.get("GCOUNT", 1)) != 1:
        raise _Unsupported(f"{where}: heap or groups")
    names, formats, offsets, shapes, kinds, cols = [], [], [], {}, {}, []
    offset = 0
    for n in range(1, nfields + 1):
        if f"TSCAL{n}" in header or f"TZERO{n}" in header:
            raise _Unsupported(f"{where}: scaled column")
        m = _TFORM.match(str(header[f"TFORM{n}"]))
        if not m:
            raise _Unsupported(f"{where}: TFORM{n}")
        repeat = int(m.group(1) or 1)
        code = m.group(2)
        name = str(header.get(f"TTYPE{n}", f"COL{n}")).strip()
        if code == "A":
            fmt, size, shape = f"S{repeat}", repeat, None
            if f"TDIM{n}" in header:
                raise _Unsupported(f"{where}: string TDIM")
        elif code in _FORMS:
            base = np.dtype(_FORMS[code])
            size = base.itemsize * repeat
            fmt = (base.str, (repeat,)) if repeat != 1 else base.str
            shape = None
            if f"TDIM{n}" in header:
                dims = [int(d) for d in str(header[f"TDIM{n}"]).strip("() ").split(",") if d.strip()]
                shape = tuple(reversed(dims))   # FITS TDIM is in Fortran (fastest-first) order
                if int(np.prod(shape)) != repeat:
                    raise _Unsupported(f"{where}: TDIM{n} does not match TFORM{n}")
        else:
            raise _Unsupported(f"{where}: TFORM{n} code {code}")
        if repeat == 0:
            offset += 0
            continue
        if name in shapes or name in kinds:
            raise _Unsupported(f"{where}: duplicate column {name}")
        names.append(name)
        formats.append(fmt)
        offsets.append(offset)
        shapes[name] = shape
        kinds[name] = code
        cols.append(_Column(name, header.get(f"TUNIT{n}")))
        offset += size
    if offset != width:
        raise _Unsupported(f"{where}: NAXIS1 {width} != sum of field widths {offset}")
    dtype = np.dtype({"names": names, "formats": formats, "offsets": offsets, "itemsize": width})
    records = np.frombuffer(raw, dtype=dtype, count=nrow)
    return _TableData(records, shapes, kinds, nrow), _Columns(cols)


def is_gzip(head: bytes) -> bool:
    """True if ``head`` starts with the gzip magic bytes (RFC 1952)."""
    return head[:2] == b"\x1f\x8b"


def looks_like_fits_bytes(buf: bytes) -> bool:
    """True if ``buf`` starts like a FITS primary header (``SIMPLE  =`` … ``T`` in column 30)."""
    return len(buf) >= CARD and buf.startswith(b"SIMPLE  =") and buf[29:30] == b"T"


def read_fits_bytes(path) -> bytes:
    """The bytes of a file, decompressed in memory when it is gzip-compressed.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    bytes

    Raises
    ------
    DataError
        A gzip stream that is cut short or corrupt (the message names the file).
    """
    spath = os.fspath(path)
    with open(spath, "rb") as fh:
        buf = fh.read()
    if is_gzip(buf):
        try:
            buf = gzip.decompress(buf)
        except EOFError:
            raise DataError(f"{spath}: truncated gzip-compressed file: the compressed stream ends "
                            "before its end marker (was the download or copy cut short?)") from None
        except (OSError, zlib.error) as exc:
            raise DataError(f"{spath}: damaged gzip-compressed file ({exc})") from None
    return buf


@dataclass(frozen=True)
class HduLayout:
    """Where one HDU of a FITS file lies and what its header announces.

    Attributes
    ----------
    index : int
        0 for the primary HDU.
    header : dict
        Keyword → value (values outside the simple subset kept as text).
    name : str
        EXTNAME upper-cased, ``"PRIMARY"`` for HDU 0, ``""`` when absent.
    xtension : str
        ``"BINTABLE"``, ``"TABLE"``, ``"IMAGE"`` …, ``""`` for the primary HDU.
    data_start, data_bytes : int
        Byte offset and announced size of the data (without padding).
    """

    index: int
    header: dict
    name: str
    xtension: str
    data_start: int
    data_bytes: int

    @property
    def shape(self) -> tuple:
        """NAXISn in C order (slowest first); () when there is no data array."""
        naxis = int(self.header.get("NAXIS", 0) or 0)
        return tuple(int(self.header.get(f"NAXIS{k}", 0) or 0) for k in range(naxis, 0, -1))

    @property
    def columns(self) -> list:
        """TTYPEn of a table HDU (``COLn`` where a name is missing); [] otherwise."""
        if self.xtension not in ("BINTABLE", "TABLE"):
            return []
        n = int(self.header.get("TFIELDS", 0) or 0)
        return [str(self.header.get(f"TTYPE{k}", f"COL{k}")).strip() for k in range(1, n + 1)]

    def describe(self) -> str:
        """A short description, e.g. ``"OI_VIS2 (binary table, 12 rows)"``."""
        label = self.name or f"HDU {self.index}"
        if self.xtension in ("BINTABLE", "TABLE"):
            kind = "binary table" if self.xtension == "BINTABLE" else "ASCII table"
            rows = self.shape[0] if len(self.shape) == 2 else 0
            cols = self.columns
            shown = ", ".join(cols[:8]) + (f", … ({len(cols)} in all)" if len(cols) > 8 else "")
            return f"{label} ({kind}, {rows} rows, columns {shown or 'none'})"
        if self.data_bytes == 0:
            return f"{label} (no data)"
        dims = " × ".join(str(d) for d in reversed(self.shape))
        return f"{label} ({'image' if self.xtension in ('', 'IMAGE') else self.xtension.lower()} {dims})"


def _int_card(header, key, where, default=None):
    v = header.get(key, default)
    if isinstance(v, bool) or not isinstance(v, int):
        raise ValueError(f"{where}: {key} = {v!r} is not an integer")
    return v


def fits_layout(buf: bytes, path, *, allow_short_padding: bool = False) -> list:
    """Walk the headers of a FITS file held in memory and check that nothing is cut off.

    Parameters
    ----------
    buf : bytes
        The whole (decompressed) file, see :func:`read_fits_bytes`.
    path : str or os.PathLike
        File name used in the messages.
    allow_short_padding : bool
        Accept a file whose last HDU has all its data but not all of its padding to a
        2880-byte block. Default False: such a file was cut short too (a FITS file is a
        whole number of blocks), and HDUs that followed may be lost with no trace.

    Returns
    -------
    list of HduLayout

    Raises
    ------
    DataError
        The file is not FITS, a header has no END card before the file ends, a header's
        size keywords are not integers, an HDU's data are shorter than its header
        announces, the last HDU's padding is incomplete (unless allowed), or fewer
        extensions follow than the primary header's NEXTEND says: "truncated or damaged",
        with the HDU and the byte counts.

    Notes
    -----
    A file cut exactly at the end of an HDU's padding looks like a complete, shorter
    file; only NEXTEND (when the writer set it) or the tables that are then missing can
    tell.
    """
    spath = os.fspath(path)
    if not looks_like_fits_bytes(buf):
        raise DataError(f"{spath}: not a FITS file (it does not start with a FITS primary header "
                        "'SIMPLE  = T')")
    hdus, pos = [], 0
    while pos < len(buf):
        if not buf[pos:pos + 8].strip(b" \x00"):
            break   # zero or blank padding after the last HDU
        where = f"HDU {len(hdus)}"
        try:
            header, data_start = _read_header(buf, pos, tolerant=True)
        except _Truncated:
            prev = f" after {hdus[-1].name or 'HDU ' + str(hdus[-1].index)}" if hdus else ""
            raise DataError(f"{spath}: truncated or damaged FITS file: the header of {where}{prev} has no END "
                            f"card before the file ends at byte {len(buf)} (was the file cut short?)") from None
        try:
            bitpix = _int_card(header, "BITPIX", where, 8)
            naxis = _int_card(header, "NAXIS", where, 0)
            dims = [_int_card(header, f"NAXIS{k}", where) for k in range(1, naxis + 1)]
            nbytes = abs(bitpix) // 8 * int(np.prod(dims, dtype=np.int64)) if naxis else 0
            if naxis:
                nbytes = (nbytes + _int_card(header, "PCOUNT", where, 0)) * _int_card(header, "GCOUNT", where, 1)
        except ValueError as exc:
            raise DataError(f"{spath}: damaged FITS file: {exc}") from None
        name = str(header.get("EXTNAME", "PRIMARY" if not hdus else "")).strip().upper()
        xt = "" if not hdus else str(header.get("XTENSION", "")).strip().upper()
        if hdus and not xt:
            raise DataError(f"{spath}: damaged FITS file: bytes at offset {pos} after "
                            f"{hdus[-1].name or 'HDU ' + str(hdus[-1].index)} are neither padding nor an "
                            "extension header (XTENSION missing)")
        have = len(buf) - data_start
        if have < nbytes:
            raise DataError(f"{spath}: truncated or damaged FITS file: {where} ({name or xt}) holds {max(have, 0)} "
                            f"of the {nbytes} data bytes its header announces (was the file cut short?)")
        hdus.append(HduLayout(len(hdus), header, name, xt, data_start, nbytes))
        pos = data_start + -(-nbytes // BLOCK) * BLOCK
    last = hdus[-1]
    if pos > len(buf) and not allow_short_padding:
        raise DataError(f"{spath}: truncated FITS file: it ends {pos - len(buf)} bytes before the end of the last "
                        f"2880-byte block of {last.name or 'HDU ' + str(last.index)} (HDU {last.index}); the data "
                        "of that HDU are complete, but HDUs that followed it may be lost (was the file cut short?)")
    nextend = hdus[0].header.get("NEXTEND")
    if isinstance(nextend, int) and not isinstance(nextend, bool) and nextend > len(hdus) - 1:
        raise DataError(f"{spath}: truncated FITS file: the primary header announces {nextend} extensions "
                        f"(NEXTEND) but the file ends after {len(hdus) - 1}")
    return hdus


def open_simple_fits(path, buf=None):
    """The HDUs of a simple FITS file, or ``None`` when astropy should read it instead.

    Parameters
    ----------
    path : str or os.PathLike
        The file (gzip-compressed or not); named in messages.
    buf : bytes, optional
        Its (decompressed) content when already read.

    Returns
    -------
    list of SimpleHDU or None

    Raises
    ------
    DataError
        The file is cut short or its gzip stream is damaged (see :func:`fits_layout`).
    """
    if buf is None:
        buf = read_fits_bytes(path)
    hdus = []
    pos = 0
    try:
        while pos < len(buf):
            if not buf[pos:pos + 8].strip(b" \x00"):
                break   # zero padding after the last HDU
            header, data_start = _read_header(buf, pos)
            bitpix = int(header.get("BITPIX", 8))
            naxis = int(header.get("NAXIS", 0))
            nbytes = abs(bitpix) // 8 * int(np.prod([int(header[f"NAXIS{k}"]) for k in range(1, naxis + 1)])) \
                if naxis else 0
            nbytes += int(header.get("PCOUNT", 0)) if naxis else 0
            padded = -(-nbytes // BLOCK) * BLOCK
            raw = buf[data_start:data_start + nbytes]
            if len(raw) < nbytes:
                raise _Truncated(data_start)
            data_block = buf[data_start:data_start + padded]
            where = f"HDU {len(hdus)}"
            if pos == 0:
                if header.get("SIMPLE") is not True or nbytes:
                    raise _Unsupported("primary HDU with data")
                hdu = SimpleHDU(header, buf[pos:data_start], data_block)
            else:
                if str(header.get("XTENSION", "")).strip() != "BINTABLE":
                    raise _Unsupported(f"{where}: extension {header.get('XTENSION')!r}")
                data, columns = _table(header, raw, where)
                hdu = SimpleHDU(header, buf[pos:data_start], data_block, data, columns)
            hdus.append(hdu)
            pos = data_start + padded
    except _Truncated:
        fits_layout(buf, path)   # raises the DataError that says where the file is cut
        return None
    except (_Unsupported, KeyError, ValueError, UnicodeDecodeError, TypeError):
        return None
    nextend = hdus[0].header.get("NEXTEND") if hdus else None
    if isinstance(nextend, int) and nextend > len(hdus) - 1:
        fits_layout(buf, path)   # raises: fewer extensions than announced
    return hdus or None
