"""Recognise data files by their content: OIFITS, photometry tables and spectra.

:func:`classify_data_file` looks inside a file (a gzip-compressed one too) and says which
reader it belongs to; :func:`collect_data_files` does this for paths, lists of paths and
folders, and sorts them by kind. A file that is none of the kinds is refused with a
message that says what it is (a FITS image, a FITS table with such columns, a JSON
document, a binary file, an empty file …); inside a folder such files are skipped with a
note instead, so a README or a starting-point document next to the data does no harm.

The rules (content first, the name never decides):

* FITS (``SIMPLE  =  T`` first, possibly gzip-compressed) with an ``OI_*`` extension is
  OIFITS; a FITS table with a wavelength column and a flux column (the names
  :func:`~diskexplorer.data.read_spectrum` accepts) is a spectrum. A FITS file cut short
  is "truncated or damaged" (:class:`~diskexplorer.errors.DataError`), never skipped.
* A text table whose header has a ``unit`` or ``band``/``filter`` column is photometry
  (the photometry format requires a unit column; spectra carry their units in the
  column headers); one with wavelength and flux columns, or two or three numeric columns
  and no header, is a spectrum. The line after the header must have as many fields.

A refusal says what the file is without quoting a text file's content: a typed path may
name any readable file, and its first line is nobody else's business.
"""
from __future__ import annotations

import csv
import io
import os
from dataclasses import dataclass, field
from typing import NamedTuple

from ..errors import DataError
from .checks import reader_door
from .readers import FILE_KINDS
from .fits_tables import fits_layout, is_gzip, looks_like_fits_bytes, read_fits_bytes
from .text_tables import split_name_unit

__all__ = ["classify_data_file", "collect_data_files", "DataFiles", "SkippedFile", "DATA_KINDS",
           "NotADataFile"]

#: The kinds of data file, in the order they are listed.
DATA_KINDS = FILE_KINDS

# Column names the spectrum reader accepts (diskexplorer.data.spectrum), lower case.
_WAVE_NAMES = ("wavelength", "wave", "lambda", "wavelength_um", "wl")
_FLUX_NAMES = ("flux", "flux_density", "fluxdata", "fnu", "f_nu", "flambda", "f_lambda")
_PHOT_MARKERS = ("unit", "units", "band", "filter")
_TEXT_HEAD = 65536

# Magic bytes of formats a user may drop next to the data by mistake.
_MAGIC = ((b"\x89PNG", "a PNG image"), (b"%PDF", "a PDF document"), (b"\xff\xd8\xff", "a JPEG image"),
          (b"PK\x03\x04", "a zip archive"), (b"\x89HDF", "an HDF5/netCDF-4 file"),
          (b"CDF\x01", "a netCDF-3 file"), (b"CDF\x02", "a netCDF-3 file"),
          (b"\x93NUMPY", "a NumPy array file"))


class NotADataFile(DataError):
    """The file is readable but none of the data kinds (a folder's listing skips these)."""


class SkippedFile(NamedTuple):
    """A file of a folder that is not data: its path and what it is."""

    path: str
    reason: str


@dataclass
class DataFiles:
    """Data files sorted by kind (see :func:`collect_data_files`).

    Attributes
    ----------
    oifits, photometry, spectrum : list of str
        Paths in the order given (a folder's files sorted by name).
    skipped : list of SkippedFile
        Files of folders that are not data, with what they are.

    Also a read-only mapping kind → list of paths (``files["oifits"]``, ``dict(files)``).
    """

    oifits: list = field(default_factory=list)
    photometry: list = field(default_factory=list)
    spectrum: list = field(default_factory=list)
    skipped: list = field(default_factory=list)

    def __getitem__(self, kind):
        if kind not in DATA_KINDS:
            raise KeyError(kind)
        return getattr(self, kind)

    def keys(self):
        return DATA_KINDS

    def __iter__(self):
        return iter(DATA_KINDS)

    def __len__(self):
        return len(DATA_KINDS)

    def items(self):
        return [(k, self[k]) for k in DATA_KINDS]

    @property
    def files(self) -> list:
        """Every data file, OIFITS first."""
        return [p for k in DATA_KINDS for p in self[k]]

    @property
    def empty(self) -> bool:
        """True if no data file was found."""
        return not self.files

    @property
    def notes(self) -> list:
        """One line per skipped file: ``"<path>: skipped: <what it is>"``."""
        return [f"{s.path}: skipped: {s.reason}" for s in self.skipped]


def classify_data_file(path) -> str:
    """Which kind of data file ``path`` holds, judged by its content.

    Parameters
    ----------
    path : str or os.PathLike
        A file (gzip-compressed FITS is looked into).

    Returns
    -------
    str
        ``"oifits"``, ``"photometry"`` or ``"spectrum"``.

    Raises
    ------
    DataError
        The file does not exist or is a folder; a FITS file is truncated or damaged.
    NotADataFile
        (a DataError) The file is none of the kinds; the message says what it is, e.g.
        "a FITS image (PRIMARY (image 64 × 64)): not OIFITS (no OI_* table) and not a
        spectrum table …".

    Examples
    --------
    >>> classify_data_file("night1.oifits.gz")    # doctest: +SKIP
    'oifits'
    """
    spath = os.fspath(path)
    if os.path.isdir(spath):
        raise DataError(f"{spath}: is a folder, not a data file (collect_data_files reads folders)")
    if not os.path.exists(spath):
        raise DataError(f"{spath}: no such data file")
    with reader_door(spath, "a data file"):
        return _classify(spath)


def _classify(spath):
    try:
        with open(spath, "rb") as fh:
            head = fh.read(_TEXT_HEAD)
    except OSError as exc:
        raise DataError(f"{spath}: cannot be read ({exc.strerror or exc})") from None
    if not head:
        raise NotADataFile(f"{spath}: an empty file (0 bytes); expected OIFITS, or a photometry or spectrum table")
    compressed = is_gzip(head)
    if compressed or looks_like_fits_bytes(head):
        buf = read_fits_bytes(spath)
        if looks_like_fits_bytes(buf):
            return _classify_fits(spath, buf)
        if compressed:
            raise NotADataFile(f"{spath}: a gzip-compressed file that does not hold FITS "
                               f"({_what_bytes(buf[:_TEXT_HEAD])}); only FITS files may be compressed")
    if head.startswith(b"SIMPLE"):
        raise DataError(f"{spath}: damaged FITS file: the first card starts with SIMPLE but is not "
                        "'SIMPLE  =                    T'")
    what = _what_bytes(head)
    if what is not None:
        raise NotADataFile(f"{spath}: {what}, not FITS and not a text table; expected OIFITS, or a "
                           "photometry or spectrum table")
    return _classify_text(spath, head)


def _what_bytes(head):
    """What a non-FITS file is, from its first bytes; None for text."""
    for magic, what in _MAGIC:
        if head.startswith(magic):
            return what
    sample = head[:4096]
    control = sum(1 for b in sample if b < 32 and b not in (9, 10, 12, 13))
    if b"\x00" in sample or control > len(sample) // 10:
        return "a binary file"
    return None


def _classify_fits(path, buf):
    hdus = fits_layout(buf, path)
    names = [h.name for h in hdus[1:]]
    if any(n.startswith("OI_") for n in names):
        return "oifits"
    for h in hdus[1:]:
        cols = {c.lower() for c in h.columns}
        if cols & set(_WAVE_NAMES) and cols & set(_FLUX_NAMES):
            return "spectrum"
    tables = [h for h in hdus[1:] if h.columns]
    if not tables and len(hdus) == 1 and hdus[0].data_bytes:
        what = "a FITS image"
    elif len(tables) == 1:
        what = f"a FITS table with columns {', '.join(tables[0].columns) or '(none)'}"
    elif tables:
        what = f"a FITS file with {len(tables)} tables"
    elif any(h.data_bytes for h in hdus):
        what = "a FITS image file"
    else:
        what = "a FITS file without data"
    holds = "; ".join(h.describe() for h in hdus)
    raise NotADataFile(f"{path}: {what}: not OIFITS (no OI_* table) and not a spectrum table (no table with a "
                       f"wavelength column ({', '.join(_WAVE_NAMES)}) and a flux column "
                       f"({', '.join(_FLUX_NAMES)})); it holds HDUs {holds}")


def _split(line, delim):
    if delim is None:
        return line.split()
    return [f.strip() for f in next(csv.reader(io.StringIO(line), delimiter=delim))]


def _numeric(fields):
    try:
        [float(f) for f in fields if f.strip()]
    except ValueError:
        return False
    return bool(fields)


def _classify_text(path, head):
    text = head.decode("utf-8", errors="replace").lstrip("\ufeff")
    stripped = text.lstrip()
    if stripped.startswith(("{", "[")):
        raise NotADataFile(f"{path}: a JSON document (such as a starting point), not a data table")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if len(head) == _TEXT_HEAD and len(lines) > 1:
        lines = lines[:-1]  # the read may have cut the last line
    if not lines:
        raise NotADataFile(f"{path}: a text file with no table rows (only blank or '#' comment lines); expected "
                           "OIFITS, or a photometry or spectrum table")
    first = lines[0]
    delim = next((d for d in (",", ";", "\t") if d in first), None)
    try:
        fields = _split(first, delim)
        second = _split(lines[1], delim) if len(lines) > 1 else None
    except csv.Error:   # a field longer than the csv module allows, a stray quote …
        raise NotADataFile(f"{path}: a text file that is not a data table (its first lines are not delimited "
                           "rows of fields); expected OIFITS, or a photometry or spectrum table") from None
    if _numeric(fields):
        if len(fields) in (2, 3) and (second is None or (len(second) == len(fields) and _numeric(second))):
            return "spectrum"
        raise NotADataFile(f"{path}: a text table of {len(fields)} numeric columns without a header; a spectrum "
                           "without a header has 2 or 3 columns (wavelength, flux[, error]) and photometry "
                           "needs a header")
    names = [split_name_unit(f)[0] for f in fields]
    if second is None or len(second) != len(fields):
        raise NotADataFile(f"{path}: a text file that is not a data table (its first line is not followed by rows "
                           "with the same number of fields); expected OIFITS, or a photometry or spectrum table")
    if set(names) & set(_PHOT_MARKERS):
        return "photometry"
    iw = next((names.index(n) for n in _WAVE_NAMES if n in names), None)
    if iw is not None and set(names) & set(_FLUX_NAMES) and _numeric([second[iw]]):
        return "spectrum"
    if delim is None and not all(n.replace("_", "").isalnum() for n in names):
        raise NotADataFile(f"{path}: a text file that is not a data table (its first line does not name "
                           "columns); expected OIFITS, or a photometry or spectrum table")
    raise NotADataFile(f"{path}: a text table of {len(fields)} columns: not photometry (needs a unit and a band or "
                       "wavelength column) and not a spectrum (needs wavelength and flux columns)")


def collect_data_files(paths, may_read=None) -> DataFiles:
    """Sort data files by kind; folders are listed and their non-data files skipped.

    Parameters
    ----------
    paths : str, os.PathLike or iterable of them
        Files and/or folders. A folder's files (not its sub-folders) are classified by
        content, in name order; hidden files (``.name``) are ignored.
    may_read : callable, optional
        ``may_read(path) -> bool`` for each file found in a folder, before it is opened:
        a file it refuses (e.g. a link out of the folders a served page may read) is
        skipped as "not readable here", without a word on what it is.

    Returns
    -------
    DataFiles
        Paths per kind (as given, not made absolute; duplicates dropped) and the files of
        folders that are not data (``.skipped``, with what they are; ``.notes`` as text).

    Raises
    ------
    DataError
        A path that does not exist; a file given by name that is none of the kinds
        (:class:`NotADataFile`); a damaged or truncated FITS file, given or in a folder;
        a folder that holds no data file.

    Examples
    --------
    >>> files = collect_data_files(["night1.fits", "my_data/"])    # doctest: +SKIP
    >>> files.oifits, files.photometry, files.notes                # doctest: +SKIP
    """
    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    try:
        items = [os.fspath(p) for p in paths]
    except TypeError:
        raise DataError(f"data files: expected a path or a list of paths, got {type(paths).__name__}") from None
    out = DataFiles()
    seen = set()

    def add(p, kind):
        key = os.path.realpath(p)
        if key not in seen:
            seen.add(key)
            out[kind].append(p)

    for p in items:
        if os.path.isdir(p):
            found = 0
            for name in sorted(os.listdir(p)):
                if name.startswith("."):
                    continue
                f = os.path.join(p, name)
                if may_read is not None and not may_read(f):
                    out.skipped.append(SkippedFile(f, "not readable here"))
                    continue
                if os.path.isdir(f):
                    out.skipped.append(SkippedFile(f, "a folder (folders inside a data folder are not searched)"))
                    continue
                try:
                    kind = classify_data_file(f)
                except NotADataFile as exc:
                    out.skipped.append(SkippedFile(f, str(exc).removeprefix(f"{f}: ")))
                    continue
                add(f, kind)
                found += 1
            if not found:
                listed = f" (skipped: {', '.join(os.path.basename(s.path) for s in out.skipped)})" \
                    if out.skipped else ""
                raise DataError(f"{p}: folder holds no data file (OIFITS, photometry or spectrum table){listed}")
        elif not os.path.exists(p):
            raise DataError(f"{p}: no such data file or folder")
        else:
            add(p, classify_data_file(p))
    return out
