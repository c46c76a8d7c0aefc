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

Gzip-compressed files are decompressed in memory first (:func:`read_fits_bytes`, at most
:data:`MAX_DECOMPRESSED_BYTES`). A file whose headers or data end before their announced
size is damaged, not merely unusual: :func:`fits_layout` walks the headers tolerantly and
raises a :class:`~diskexplorer.errors.DataError` naming the file, the HDU and what is
missing. It also checks every size a header announces (NAXISn, PCOUNT, GCOUNT, TFIELDS,
the TFORMn widths against NAXIS1, heap descriptors) against the file before anything is
allocated or looped over, and lists the header cards no FITS reader can read.
"""
from __future__ import annotations

import gzip
import io
import math
import os
import re
import zlib
from dataclasses import dataclass

import numpy as np

from ..errors import DataError

__all__ = ["open_simple_fits", "SimpleHDU", "read_fits_bytes", "is_gzip", "looks_like_fits_bytes",
           "fits_layout", "HduLayout", "ColumnDamage", "blank_cards"]

BLOCK = 2880
CARD = 80
#: Largest size a gzip-compressed file may expand to (bytes); OIFITS files are far smaller.
MAX_DECOMPRESSED_BYTES = 2 ** 31
_FORMS = {"L": "S1", "B": "u1", "I": ">i2", "J": ">i4", "K": ">i8", "E": ">f4", "D": ">f8",
          "C": ">c8", "M": ">c16"}
_TFORM = re.compile(r"^\s*(\d*)([A-Z])(.*)$")
_UNSUPPORTED_KEYS = ("CONTINUE",)


class _Unsupported(Exception):
    """The file uses a FITS feature outside the simple subset: let astropy read it."""


class ColumnDamage(ValueError):
    """A column's content cannot be decoded; the message names the column, never its content."""


# FITS value syntax (Pence et al. 2010, A&A 524, A42, §4.2): integers, reals with an
# E or D exponent, T/F, quoted strings ('' inside stands for one quote).
_INT = re.compile(r"[+-]?\d+")
_REAL = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[EeDd][+-]?\d+)?")


def _parse_value(text):
    """Value of a header card (the part after '= '): str, bool, int, float or None.

    Anything that is not FITS value syntax (a string without its closing quote or with
    text after it, ``inf``, ``1_000``, a bare word, a complex value) raises
    ``_Unsupported``: astropy reads complex values, and refuses the rest.
    """
    t = text.strip()
    if t.startswith("'"):
        out, i = [], 1
        while i < len(t):
            if t[i] == "'":
                if i + 1 < len(t) and t[i + 1] == "'":
                    out.append("'")
                    i += 2
                    continue
                rest = t[i + 1:].strip()
                if rest and not rest.startswith("/"):
                    raise _Unsupported("text after a string value")
                return "".join(out).rstrip()
            out.append(t[i])
            i += 1
        raise _Unsupported("a string value without its closing quote")
    t = t.split("/", 1)[0].strip()
    if t == "T":
        return True
    if t == "F":
        return False
    if t == "":
        return None
    if _INT.fullmatch(t):
        return int(t)
    if _REAL.fullmatch(t):
        return float(t.replace("D", "E").replace("d", "e"))
    raise _Unsupported("not a FITS value")


_NOT_PRINTABLE = re.compile(rb"[^\x20-\x7e]")
_KEYWORD = re.compile(r"[A-Z0-9_-]{1,8}")


def _read_header(buf, start, tolerant=False, bad=None):
    """(header dict, header bytes end) of the header starting at byte ``start``.

    With ``tolerant``, values outside the simple subset are kept as their raw text and
    CONTINUE cards are ignored (enough to learn the layout of any FITS file); a header
    without an END card in the buffer raises :class:`_Truncated` either way. Cards that
    no FITS reader can read (bytes that are not printable ASCII, which a FITS header must
    be, Pence et al. 2010 §4.1; a value astropy cannot parse) are appended to ``bad`` as
    ``(byte offset, card number from 1, keyword or "", reason)`` when a list is given.
    """
    header = {}
    pos = start
    while True:
        if pos + BLOCK > len(buf):
            raise _Truncated(pos)
        block = buf[pos:pos + BLOCK]
        # One search per block; cards are looked at one by one only in a block that needs
        # it (bytes after the END card, such as NUL padding, are no card).
        dirty = _NOT_PRINTABLE.search(block) is not None
        for k in range(0, BLOCK, CARD):
            raw = block[k:k + CARD]
            card = raw.decode("ascii", errors="replace")
            key = card[:8].rstrip()
            if key == "END":
                return header, pos + BLOCK
            if dirty and not tolerant and _NOT_PRINTABLE.search(raw):
                raise _Unsupported("header bytes that are not printable ASCII")
            if key in _UNSUPPORTED_KEYS and not tolerant:
                raise _Unsupported(key)
            named = key if _KEYWORD.fullmatch(key) else ""
            unprintable = dirty and tolerant and bad is not None and _NOT_PRINTABLE.search(raw) is not None
            if unprintable:
                bad.append((pos + k, (pos - start + k) // CARD + 1, named,
                            "holds bytes that are not printable ASCII text"))
            if card[8:10] == "= " and key and key not in ("COMMENT", "HISTORY"):
                try:
                    header[key] = _parse_value(card[10:])
                except _Unsupported:
                    if not tolerant:
                        raise
                    header[key] = card[10:].strip()
                    if bad is not None and not unprintable and not _astropy_reads(card):
                        bad.append((pos + k, (pos - start + k) // CARD + 1, named,
                                    "has a value that is not valid FITS (a string needs its closing quote, a "
                                    "number FITS digits)"))
        pos += BLOCK


def _astropy_reads(card):
    """Whether astropy parses a card's value (complex values and other forms we do not decode)."""
    import warnings

    from astropy.io import fits

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            fits.Card.fromstring(card).value
    except Exception:  # astropy's VerifyError and its relatives: the card is unreadable
        return False
    return True


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
                try:
                    out = np.char.rstrip(np.char.decode(raw, "ascii"))
                except UnicodeDecodeError:
                    # FITS character columns hold ASCII text (Pence et al. 2010, §7.3.3.1).
                    raise ColumnDamage(f"column {name} holds bytes that are not ASCII text") from None
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
    if int(header.get("NAXIS", 0)) != 2 or int(header.get("BITPIX", 8)) != 8 or (nrow and not width):
        raise _Unsupported(f"{where}: not a plain table")   # fits_layout says what is wrong
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
        A gzip stream that is cut short or corrupt, or that expands to more than
        :data:`MAX_DECOMPRESSED_BYTES` (the message names the file).
    """
    spath = os.fspath(path)
    with open(spath, "rb") as fh:
        buf = fh.read()
    if is_gzip(buf):
        try:
            # Read at most one byte past the limit: a small damaged (or hostile) stream may
            # announce gigabytes of output.
            with gzip.GzipFile(fileobj=io.BytesIO(buf)) as stream:
                buf = stream.read(MAX_DECOMPRESSED_BYTES + 1)
            if len(buf) > MAX_DECOMPRESSED_BYTES:
                raise DataError(f"{spath}: a gzip-compressed file that expands to more than "
                                f"{MAX_DECOMPRESSED_BYTES // 2 ** 30} GiB; not read")
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
    bad_cards : tuple of (int, int, str, str)
        Header cards no FITS reader can read: (byte offset of the card in the file, card
        number in its header from 1, its keyword or "" when the keyword itself is
        damaged, what is wrong). Layout keywords are never among them: a damaged one
        makes :func:`fits_layout` refuse the file.
    """

    index: int
    header: dict
    name: str
    xtension: str
    data_start: int
    data_bytes: int
    bad_cards: tuple = ()

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
        raise ValueError(f"{where}: {key} = {_shown(v)} is not an integer")
    return v


def _shown(value):
    """A header value for a message: short, printable (a FITS header is ASCII text)."""
    text = repr(value)
    text = "".join(ch if " " <= ch <= "~" else "?" for ch in text)
    return text if len(text) <= 24 else text[:21] + "..."


#: Keywords that define where an HDU's data lie and how they are decoded (Pence et al.
#: 2010, §4.4.1 and §7.2–7.3): a damaged one makes the file unreadable, never ignorable.
_LAYOUT_KEYS = re.compile(r"(SIMPLE|XTENSION|BITPIX|NAXIS\d*|PCOUNT|GCOUNT|GROUPS|TFIELDS|THEAP|END|"
                          r"(TFORM|TDIM|TBCOL|TSCAL|TZERO)\d+)")
_BITPIX = (8, 16, 32, 64, -32, -64)
# Binary-table column formats (Pence et al. 2010, Table 18): rTa; P and Q are
# variable-length descriptors rPt(max) / rQt(max) of a fixed type t.
_BIN_FORM = re.compile(r"\s*(\d*)([LXBIJKAEDCMPQ])(.*?)\s*")
_BIN_WIDTH = {"L": 1, "B": 1, "I": 2, "J": 4, "K": 8, "A": 1, "E": 4, "D": 8, "C": 8, "M": 16, "P": 8, "Q": 16}
_HEAP_ELEMENT = {"L": 1, "B": 1, "I": 2, "J": 4, "K": 8, "A": 1, "E": 4, "D": 8, "C": 8, "M": 16}
_HEAP_FORM = re.compile(r"([LXBIJKAEDCM])(\(\d*\))?")
# ASCII-table column formats (Pence et al. 2010, Table 15): Aw, Iw, Fw.d, Ew.d, Dw.d.
_ASCII_FORM = re.compile(r"\s*([AIFED])(\d+)(\.\d+)?\s*")


def _layout_error(spath, where, what):
    return DataError(f"{spath}: damaged FITS file: {where}: {what}")


def _data_size(header, first, where):
    """Bytes of data an HDU's header announces, after checking every size keyword.

    Raises ValueError naming the keyword and value. Python integers (not numpy's) keep a
    product of huge NAXISn exact instead of wrapping round to a small or negative size.
    """
    bitpix = _int_card(header, "BITPIX", where, 8)
    if bitpix not in _BITPIX:
        raise ValueError(f"{where}: BITPIX = {_shown(bitpix)} is not one of {', '.join(map(str, _BITPIX))}")
    naxis = _int_card(header, "NAXIS", where, 0)
    if not 0 <= naxis <= 999:
        raise ValueError(f"{where}: NAXIS = {naxis} is outside 0 … 999")
    dims = [_int_card(header, f"NAXIS{k}", where) for k in range(1, naxis + 1)]
    for k, d in enumerate(dims, 1):
        if d < 0:
            raise ValueError(f"{where}: NAXIS{k} = {d} is negative")
    if not naxis:
        return 0
    pcount = _int_card(header, "PCOUNT", where, 0)
    gcount = _int_card(header, "GCOUNT", where, 1)
    if pcount < 0:
        raise ValueError(f"{where}: PCOUNT = {pcount} is negative")
    if first:
        # Random groups (§6): NAXIS1 = 0 and GROUPS = T; NAXIS1 does not count.
        if header.get("GROUPS") is True and dims[0] == 0:
            dims = dims[1:]
        elif "PCOUNT" not in header and "GCOUNT" not in header:
            return abs(bitpix) // 8 * math.prod(dims)
        if gcount < 0:
            raise ValueError(f"{where}: GCOUNT = {gcount} is negative")
    elif gcount < 1:
        raise ValueError(f"{where}: GCOUNT = {gcount}; an extension holds at least one group (GCOUNT = 1)")
    return abs(bitpix) // 8 * gcount * (pcount + math.prod(dims))


def _check_extension(header, xt, where, nbytes, file_bytes):
    """Check what a table's header says about its columns against its size (ValueError)."""
    if xt in ("IMAGE", "TABLE", "BINTABLE"):
        if _int_card(header, "GCOUNT", where, 1) != 1:
            raise ValueError(f"{where}: GCOUNT = {header.get('GCOUNT')} in a {xt} extension (must be 1)")
        if xt != "BINTABLE" and _int_card(header, "PCOUNT", where, 0) != 0:
            raise ValueError(f"{where}: PCOUNT = {header.get('PCOUNT')} in a {xt} extension (must be 0)")
    if xt not in ("TABLE", "BINTABLE"):
        return
    kind = "binary" if xt == "BINTABLE" else "ASCII"
    if _int_card(header, "BITPIX", where, 8) != 8 or _int_card(header, "NAXIS", where, 0) != 2:
        raise ValueError(f"{where}: a{'n' if kind == 'ASCII' else ''} {kind} table needs BITPIX = 8 and NAXIS = 2 "
                         f"(found {_shown(header.get('BITPIX'))} and {_shown(header.get('NAXIS'))})")
    width, nrow = header["NAXIS1"], header["NAXIS2"]
    if nrow > file_bytes:
        # Rows of zero bytes take no room: bound their number, or loops over rows never end.
        raise ValueError(f"{where}: NAXIS2 = {nrow} rows, more than the file's {file_bytes} bytes could hold")
    nfields = _int_card(header, "TFIELDS", where, 0)
    if not 0 <= nfields <= 999:
        raise ValueError(f"{where}: TFIELDS = {nfields} is outside 0 … 999")
    if xt == "TABLE":
        for n in range(1, nfields + 1):
            form = header.get(f"TFORM{n}")
            m = _ASCII_FORM.fullmatch(form) if isinstance(form, str) else None
            if m is None:
                raise ValueError(f"{where}: TFORM{n} = {_shown(form)} is not an ASCII-table column format")
            col = _int_card(header, f"TBCOL{n}", where)
            if col < 1 or col - 1 + int(m.group(2)) > width:
                raise ValueError(f"{where}: column {n} (TBCOL{n} = {col}, TFORM{n} = {_shown(form)}) does not fit "
                                 f"in a row of NAXIS1 = {width} characters")
        return
    offset, heap_columns = 0, []
    for n in range(1, nfields + 1):
        form = header.get(f"TFORM{n}")
        m = _BIN_FORM.fullmatch(form) if isinstance(form, str) else None
        ok = m is not None
        if ok:
            repeat, code, rest = int(m.group(1) or 1), m.group(2), m.group(3)
            if code in "PQ":
                heap = _HEAP_FORM.fullmatch(rest)
                ok = heap is not None
            else:
                ok = rest == "" or (code == "A" and rest.isdigit())
        if not ok:
            raise ValueError(f"{where}: TFORM{n} = {_shown(form)} is not a binary-table column format "
                             "(rTa with a type letter of L X B I J K A E D C M P Q)")
        size = -(-repeat // 8) if code == "X" else repeat * _BIN_WIDTH[code]
        if code in "PQ" and repeat:
            heap_columns.append((n, offset, code, heap.group(1)))
        if f"TDIM{n}" in header:
            dims = str(header[f"TDIM{n}"]).strip().strip("()").split(",")
            if not all(d.strip().isdigit() for d in dims) or math.prod(int(d) for d in dims) > max(repeat, 1):
                raise ValueError(f"{where}: TDIM{n} = {_shown(header[f'TDIM{n}'])} does not fit the {repeat} "
                                 f"element(s) of TFORM{n} = {_shown(form)}")
        offset += size
    if offset != width:
        raise ValueError(f"{where}: the columns' formats (TFORMn) add up to {offset} bytes per row, but "
                         f"NAXIS1 = {width}")
    table = width * nrow
    heap_start = _int_card(header, "THEAP", where, table)
    pcount = header.get("PCOUNT", 0)
    if not table <= heap_start <= table + pcount:
        raise ValueError(f"{where}: THEAP = {heap_start} lies outside the {pcount}-byte heap after the table")
    return heap_columns, heap_start, table + pcount


def _check_heap(buf, start, header, where, columns, heap_start, end):
    """Every variable-length array descriptor points inside the heap (ValueError otherwise)."""
    width, nrow = header["NAXIS1"], header["NAXIS2"]
    rows = np.frombuffer(buf, dtype=np.uint8, count=width * nrow, offset=start).reshape(nrow, width)
    for n, offset, code, element in columns:
        size = 8 if code == "P" else 16
        pairs = np.ascontiguousarray(rows[:, offset:offset + size]).view(">i4" if code == "P" else ">i8")
        count, where_in_heap = pairs[:, 0].astype(np.int64), pairs[:, 1].astype(np.int64)
        nbytes = -(-count // 8) if element == "X" else count * _HEAP_ELEMENT[element]
        bad = (count < 0) | (where_in_heap < 0) | (heap_start + where_in_heap + nbytes > end)
        if bad.any():
            row = int(np.flatnonzero(bad)[0]) + 1
            raise ValueError(f"{where}: the variable-length array of column {n} (TFORM{n}) in row {row} lies outside "
                             f"the heap ({int(bad.sum())} row(s) in all)")


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
        with the HDU and the byte counts. Also "damaged" with the HDU and the keyword:
        impossible sizes (negative NAXISn, PCOUNT or GCOUNT, BITPIX not a FITS value,
        GCOUNT ≠ 1 in a table), a table whose column formats (TFORMn, TBCOLn, TDIMn)
        are not FITS formats or do not add up to its row width NAXIS1, more rows than
        the file has bytes, variable-length arrays pointing outside the heap, or a
        layout keyword whose card no FITS reader can read.

    Notes
    -----
    Every size is checked against the file's size before anything is allocated from it,
    so a damaged header cannot make a reader allocate or loop without bound. A file cut
    exactly at the end of an HDU's padding looks like a complete, shorter file; only
    NEXTEND (when the writer set it) or the tables that are then missing can tell.
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
        bad = []
        try:
            header, data_start = _read_header(buf, pos, tolerant=True, bad=bad)
        except _Truncated:
            prev = f" after {hdus[-1].name or 'HDU ' + str(hdus[-1].index)}" if hdus else ""
            raise DataError(f"{spath}: truncated or damaged FITS file: the header of {where}{prev} has no END "
                            f"card before the file ends at byte {len(buf)} (was the file cut short?)") from None
        raw_name = header.get("EXTNAME", "PRIMARY" if not hdus else "")
        name = str(raw_name).strip().upper() if isinstance(raw_name, str) else ""
        label = f"{where} ({name})" if name else where
        xt = "" if not hdus else header.get("XTENSION", "")
        xt = xt.strip().upper() if isinstance(xt, str) else ""
        if hdus and not xt:
            raise DataError(f"{spath}: damaged FITS file: bytes at offset {pos} after "
                            f"{hdus[-1].name or 'HDU ' + str(hdus[-1].index)} are neither padding nor an "
                            "extension header (XTENSION missing or not a string)")
        # A card whose keyword itself is garbled is not counted here: if it was a layout
        # keyword, that keyword is now missing and the checks below refuse the HDU.
        layout_bad = [(num, key, why) for _, num, key, why in bad if key and _LAYOUT_KEYS.fullmatch(key)]
        if layout_bad:
            num, key, why = layout_bad[0]
            card = f"header card {num}" + (f" ({key})" if key else "")
            raise _layout_error(spath, label, f"{card} {why}; the HDU's layout cannot be trusted")
        try:
            nbytes = _data_size(header, not hdus, label)
            have = len(buf) - data_start
            if have < nbytes:
                raise DataError(f"{spath}: truncated or damaged FITS file: {where} ({name or xt}) holds "
                                f"{max(have, 0)} of the {nbytes} data bytes its header announces (was the file "
                                "cut short?)")
            heap = _check_extension(header, xt, label, nbytes, len(buf)) if hdus else None
            if heap and heap[0]:
                _check_heap(buf, data_start, header, label, *heap)
        except DataError:
            raise
        except ValueError as exc:
            raise DataError(f"{spath}: damaged FITS file: {exc}") from None
        hdus.append(HduLayout(len(hdus), header, name, xt, data_start, nbytes, tuple(bad)))
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


def blank_cards(buf: bytes, offsets) -> bytes:
    """``buf`` with the 80-byte header cards at ``offsets`` replaced by blank cards.

    A blank card (80 spaces) is valid commentary in a FITS header (Pence et al. 2010,
    §4.4.2.4), so a reader sees the header without them.
    """
    out = bytearray(buf)
    for off in offsets:
        out[off:off + CARD] = b" " * CARD
    return bytes(out)


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
            dims = [int(header[f"NAXIS{k}"]) for k in range(1, naxis + 1)]
            if bitpix not in _BITPIX or naxis < 0 or any(d < 0 for d in dims):
                raise _Unsupported("impossible sizes")   # fits_layout names them
            # math.prod on Python ints: numpy's product of huge NAXISn would wrap round.
            nbytes = abs(bitpix) // 8 * math.prod(dims) if naxis else 0
            nbytes += int(header.get("PCOUNT", 0)) if naxis else 0
            if nbytes < 0:
                raise _Unsupported("negative PCOUNT")
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
