"""Small delimited-text table reader that remembers line numbers for error messages.

Used by the photometry and spectrum readers: every refusal names file, line and field,
and none quotes the file's content (a typed path may name any readable file: a message
that echoed a line would show it).
"""

from __future__ import annotations

import csv
import io
import os
import re

from ..errors import DataError

__all__ = ["TextTable", "read_text_table", "parse_float", "split_name_unit"]

_UNIT_IN_NAME = re.compile(r"^\s*([^\[\(]+?)\s*[\[\(]\s*([^\]\)]*)\s*[\]\)]\s*$")


class TextTable:
    """Rows of a text table with their 1-based line numbers.

    Attributes
    ----------
    path : str
    header : list of str or None
        Column names (lower-cased, stripped), None when the file has no header line.
    units : list of str or None
        Units given in the header as ``name [unit]`` or ``name (unit)`` ("" when absent).
    rows : list of (int, list of str)
        (line number, fields).
    """

    def __init__(self, path, header, units, rows):
        self.path, self.header, self.units, self.rows = path, header, units, rows

    def column(self, *names):
        """Index of the first of ``names`` present in the header, or None."""
        if self.header is None:
            return None
        for n in names:
            if n in self.header:
                return self.header.index(n)
        return None


def split_name_unit(text: str) -> tuple[str, str]:
    """Split ``"wavelength [um]"`` into ``("wavelength", "um")``; no unit gives ``""``."""
    m = _UNIT_IN_NAME.match(text)
    if m:
        return m.group(1).strip().lower(), m.group(2).strip()
    return text.strip().lower(), ""


def parse_float(text: str, path, line: int, field: str) -> float:
    """Parse a number or refuse it naming file, line and field; empty gives NaN.

    ``inf`` and numbers beyond the float range parse (to ±inf): the readers check the
    range of every value they keep.
    """
    t = text.strip()
    if t == "" or t.lower() in ("nan", "--", "null"):
        return float("nan")
    try:
        return float(t)
    except ValueError:
        raise DataError(f"{path}: line {line}: field {field!r}: not a number") from None


def _looks_numeric(fields) -> bool:
    try:
        [float(f) for f in fields if f.strip()]
    except ValueError:
        return False
    return True


def read_text_table(path, *, require_header: bool) -> TextTable:
    """Read a comma-, semicolon-, tab- or whitespace-separated table.

    Lines that are empty or start with ``#`` are skipped. The first remaining line is the
    header unless it is entirely numeric.

    Raises
    ------
    DataError
        File missing or binary, no data rows, no header when one is required, or rows
        whose number of fields differs from the header's.
    """
    spath = os.fspath(path)
    try:
        with open(spath, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise DataError(f"{spath}: cannot be read: {exc}") from exc
    if b"\x00" in raw or raw[:9] == b"SIMPLE  =":
        raise DataError(f"{spath}: not a text table (binary content)")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    lines = [(i + 1, ln) for i, ln in enumerate(text.splitlines())
             if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise DataError(f"{spath}: no data rows")
    first = lines[0][1]
    delim = next((d for d in (",", ";", "\t") if d in first), None)

    def split(ln, lineno):
        if delim is None:
            return ln.split()
        try:
            return next(csv.reader(io.StringIO(ln), delimiter=delim), [])
        except csv.Error:   # e.g. a field longer than the csv module's limit
            raise DataError(f"{spath}: line {lineno}: not a delimited row of fields") from None

    header = units = None
    start = 0
    first_fields = split(first, lines[0][0])
    if not _looks_numeric(first_fields):
        pairs = [split_name_unit(f) for f in first_fields]
        header = [p[0] for p in pairs]
        units = [p[1] for p in pairs]
        start = 1
    elif require_header:
        raise DataError(f"{spath}: line {lines[0][0]}: a header line naming the columns is required")
    rows = []
    width = len(header) if header else len(first_fields)
    for lineno, ln in lines[start:]:
        fields = [f.strip() for f in split(ln, lineno)]
        if len(fields) != width:
            raise DataError(f"{spath}: line {lineno}: {len(fields)} field(s), expected {width}"
                            + (" (as many as the header names)" if header else " (as many as the first row)"))
        rows.append((lineno, fields))
    if not rows:
        raise DataError(f"{spath}: no data rows after the header")
    return TextTable(spath, header, units, rows)
