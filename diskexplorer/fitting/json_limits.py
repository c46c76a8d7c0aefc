"""JSON documents read within bounds: size, nesting depth, number of entries and digits.

Starting points and sessions come from users, other programs and other machines. Python's
JSON parser recurses once per level of nesting (a file of 100 000 ``[`` ends in a
``RecursionError``), converts integers of any length (one of more than 4 300 digits ends
in a ``ValueError``; a shorter one too large for a float later in an ``OverflowError``) and
reads ``NaN`` and ``Infinity``. Everything here turns such input into a
:class:`~diskexplorer.errors.SeedError` that names the document and the path of the entry,
before any field of the document is used.
"""
from __future__ import annotations

import json
import math
import os

from ..errors import SeedError

__all__ = ["MAX_DOCUMENT_BYTES", "MAX_DEPTH", "MAX_ENTRIES", "MAX_DIGITS", "read_json_document",
           "parse_json_text", "check_json_tree"]

#: Largest document read, bytes. Documents of this project hold at most a few inline
#: tables (κ, a photosphere, a species' n and k) of some thousand rows: well below.
MAX_DOCUMENT_BYTES = 32 * 2 ** 20
#: Deepest nesting of objects and arrays accepted (a session's pin scenes reach about 10).
MAX_DEPTH = 32
#: Most objects, arrays and values in one document.
MAX_ENTRIES = 4_000_000
#: Most digits of an integer (a float holds magnitudes up to about 1e308).
MAX_DIGITS = 300


class _LongInteger:
    """Stands for an integer of too many digits until its path is known."""

    def __init__(self, digits):
        self.digits = digits


def _parse_int(text):
    digits = len(text) - text.startswith("-")
    return int(text) if digits <= MAX_DIGITS else _LongInteger(digits)


def parse_json_text(text, where, locate=None):
    """Parse JSON text and check the result with :func:`check_json_tree`.

    Parameters
    ----------
    text : str
    where : str
        Names the document in messages (its path, or e.g. ``"document"``).
    locate : callable, optional
        Names an entry from its keys (see :func:`check_json_tree`).

    Raises
    ------
    SeedError
        Not JSON (with line and column), nested deeper than the parser manages, or an
        entry :func:`check_json_tree` refuses.
    """
    if len(text) > MAX_DOCUMENT_BYTES:
        raise SeedError(f"{where}: {len(text):,} characters; a document may hold at most "
                        f"{MAX_DOCUMENT_BYTES:,}")
    try:
        doc = json.loads(text, parse_int=_parse_int)
    except json.JSONDecodeError as exc:
        raise SeedError(f"{where}: line {exc.lineno}, column {exc.colno}: not valid JSON ({exc.msg})") from None
    except RecursionError:
        raise SeedError(f"{where}: nested deeper than {MAX_DEPTH} levels of objects and arrays") from None
    except ValueError as exc:  # any other refusal of the parser
        raise SeedError(f"{where}: not valid JSON ({exc})") from None
    check_json_tree(doc, where, locate)
    return doc


def read_json_document(path, what="document", where=None, locate=None):
    """Read a JSON file within :data:`MAX_DOCUMENT_BYTES` and check it (:func:`parse_json_text`).

    Parameters
    ----------
    path : str or os.PathLike
    what : str
        What the file should be, for the message of a missing file ("starting-point file").
    where : str, optional
        What messages start with (default: the path).
    locate : callable, optional
        Names an entry from its keys (see :func:`check_json_tree`).

    Returns
    -------
    object
        The parsed document (any JSON value; callers check its type).

    Raises
    ------
    SeedError
        The file is missing, unreadable, too large, not UTF-8 or not acceptable JSON;
        the message starts with the path.
    """
    path = os.fspath(path)
    where = path if where is None else where
    try:
        # A FIFO or a device would block or never end: documents are regular files.
        if os.path.exists(path) and not (os.path.isfile(path) or os.path.isdir(path)):
            raise SeedError(f"{where}: not a regular file; not a {what}")
        with open(path, "rb") as fh:
            raw = fh.read(MAX_DOCUMENT_BYTES + 1)
    except FileNotFoundError:
        raise SeedError(f"{where}: no such {what}") from None
    except IsADirectoryError:
        raise SeedError(f"{where}: is a folder, not a {what}") from None
    except OSError as exc:
        raise SeedError(f"{where}: cannot read the {what} ({exc.strerror or exc})") from None
    if len(raw) > MAX_DOCUMENT_BYTES:
        raise SeedError(f"{where}: larger than {MAX_DOCUMENT_BYTES:,} bytes; not a diskexplorer document")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SeedError(f"{where}: not UTF-8 text (byte {exc.start}); not a diskexplorer document") from None
    return parse_json_text(text, where, locate)


def check_json_tree(doc, where="document", locate=None):
    """Refuse nesting deeper than :data:`MAX_DEPTH`, more than :data:`MAX_ENTRIES` entries,
    integers of more than :data:`MAX_DIGITS` digits and non-finite numbers.

    Walks iteratively, so a document built in memory of any depth is refused without
    recursion.

    Parameters
    ----------
    doc : object
        A parsed JSON document (dicts, lists, strings, numbers, booleans, None).
    where : str
        Names the document in messages ("": a document given in memory, whose entries are
        named alone).
    locate : callable, optional
        Turns the list of keys leading to an entry into the text naming it (default:
        the keys joined by dots).

    Raises
    ------
    SeedError
        ``"<where>: <entry>: <what is wrong>"``.
    """
    locate = locate or (lambda parts: ".".join(map(str, parts)))

    def fail(parts, body):
        entry = locate(list(parts))
        if not where:   # a document in memory: entries are named alone, as the schema's messages do
            raise SeedError(f"{entry}: {body}" if entry else f"document: {body}")
        raise SeedError(f"{where}: {entry}: {body}" if entry else f"{where}: {body}")

    def check_number(value, parts):
        if isinstance(value, _LongInteger):
            fail(parts, f"a number of {value.digits:,} digits; at most {MAX_DIGITS} are read")
        if isinstance(value, bool):
            return
        if isinstance(value, int) and value.bit_length() > 3.33 * MAX_DIGITS:
            # Its decimal digits, without converting it (str() refuses beyond 4300 digits).
            digits = int(value.bit_length() * math.log10(2)) + 1
            fail(parts, f"a number of about {digits:,} digits; at most {MAX_DIGITS} are read")
        if isinstance(value, float) and not math.isfinite(value):
            fail(parts, f"{value!r} is not a finite number (JSON has no NaN or infinity)")

    count = 0
    # (container, depth, keys leading to it)
    stack = [(doc, 1, ())] if isinstance(doc, (dict, list, tuple)) else []
    if not stack and not isinstance(doc, str):
        check_number(doc, ())
    while stack:
        node, depth, parts = stack.pop()
        if depth > MAX_DEPTH:
            fail(parts[:MAX_DEPTH], f"nested deeper than {MAX_DEPTH} levels of objects and arrays")
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for key, value in items:
            count += 1
            if isinstance(value, (dict, list, tuple)):
                stack.append((value, depth + 1, parts + (key,)))
            elif not isinstance(value, str):
                check_number(value, parts + (key,))
        if count > MAX_ENTRIES:
            fail((), f"more than {MAX_ENTRIES:,} entries; not a diskexplorer document")
