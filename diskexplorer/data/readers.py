"""One door from a data file's kind to its reader: OIFITS, photometry or spectrum."""
from __future__ import annotations

import os
from collections.abc import Callable
from typing import NamedTuple

from ..errors import DataError
from .checks import reader_door
from .oifits import read_oifits
from .photometry import read_photometry
from .spectrum import read_spectrum

__all__ = ["FileKind", "FILE_READERS", "FILE_KINDS", "FILE_KIND_NAMES", "read_data_file"]


class FileKind(NamedTuple):
    """What the code knows of one kind of data file."""

    #: How the kind is named to the user (the explorer's data tab and load messages).
    name: str
    #: The reader: ``reader(path, **options)`` returns the file's data.
    reader: Callable


#: Every kind of data file with its name and reader, in the order kinds are listed.
FILE_READERS = {
    "oifits": FileKind("OIFITS", read_oifits),
    "photometry": FileKind("photometry", read_photometry),
    "spectrum": FileKind("spectrum", read_spectrum),
}

#: The kinds of data file, in the order they are listed.
FILE_KINDS = tuple(FILE_READERS)

#: How each kind is named to the user.
FILE_KIND_NAMES = {kind: entry.name for kind, entry in FILE_READERS.items()}


def read_data_file(path, kind, **options):
    """Read ``path`` with the reader of ``kind``.

    Parameters
    ----------
    path : str or os.PathLike, or list of them for ``"oifits"``
        The file (:func:`~diskexplorer.data.read_oifits` also takes several files, a
        folder or a glob pattern).
    kind : {"oifits", "photometry", "spectrum"}
        One of :data:`FILE_KINDS`.
    **options
        Passed to the reader unchanged (:func:`~diskexplorer.data.read_oifits`:
        ``target``, ``strict``, …; :func:`~diskexplorer.data.read_photometry` and
        :func:`~diskexplorer.data.read_spectrum`: ``a_v`` (mag), ``r_v``).

    Returns
    -------
    ObservationSet or xarray.Dataset
        An :class:`~diskexplorer.data.ObservationSet` for OIFITS (u, v in m, λ in µm,
        phases in degrees); a Dataset of flux densities (Jy) against wavelength (µm) for
        photometry and spectra.

    Raises
    ------
    DataError
        An unknown kind (the message names the file, the kind and the known kinds), or
        whatever the reader refuses. Nothing else leaves this function: every reader is
        one door (:func:`~diskexplorer.data.checks.reader_door`), and so is this call.

    Examples
    --------
    >>> from diskexplorer.sample import SAMPLE_FILES, sample_data_dir
    >>> sed = read_data_file(sample_data_dir() / SAMPLE_FILES["photometry"], "photometry")
    >>> float(sed["wavelength"].min()) > 0
    True
    """
    try:
        where = path if isinstance(path, (str, os.PathLike)) else ", ".join(map(os.fspath, path))
    except TypeError:
        raise DataError(f"read_data_file: expected a path or a list of paths, got {type(path).__name__}") from None
    entry = FILE_READERS.get(kind)
    if entry is None:
        raise DataError(f"{os.fspath(where)}: unknown data kind {kind!r}; expected one of {', '.join(FILE_KINDS)}")
    with reader_door(where, entry.name):
        return entry.reader(path, **options)
