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
"""
from __future__ import annotations

import re

import numpy as np

__all__ = ["open_simple_fits", "SimpleHDU"]

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


def _read_header(buf, start):
    """(header dict, header bytes end) of the header starting at byte ``start``."""
    header = {}
    pos = start
    while True:
        if pos + BLOCK > len(buf):
            raise _Unsupported("truncated header")
        block = buf[pos:pos + BLOCK]
        pos += BLOCK
        for k in range(0, BLOCK, CARD):
            card = block[k:k + CARD].decode("ascii", errors="strict")
            key = card[:8].rstrip()
            if key == "END":
                return header, pos
            if key in _UNSUPPORTED_KEYS:
                raise _Unsupported(key)
            if card[8:10] == "= " and key and key not in ("COMMENT", "HISTORY"):
                header[key] = _parse_value(card[10:])


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


def open_simple_fits(path):
    """The HDUs of a simple FITS file, or ``None`` when astropy should read it instead.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    list of SimpleHDU or None
    """
    with open(path, "rb") as fh:
        buf = fh.read()
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
                raise _Unsupported("truncated data")
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
    except (_Unsupported, KeyError, ValueError, UnicodeDecodeError, TypeError):
        return None
    return hdus or None
