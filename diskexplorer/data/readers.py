"""One door from a data file's kind to its reader: OIFITS, photometry or spectrum."""
from __future__ import annotations

import os

from ..errors import DataError

__all__ = ["FILE_KINDS", "FILE_KIND_NAMES", "read_data_file"]

#: The kinds of data file, in the order they are listed.
FILE_KINDS = ("oifits", "photometry", "spectrum")

#: How each kind is named to the user.
FILE_KIND_NAMES = {"oifits": "OIFITS", "photometry": "photometry", "spectrum": "spectrum"}


def _reader(kind):
    # Deferred: each reader imports astropy's FITS or table code only when used.
    if kind == "oifits":
        from .oifits import read_oifits
        return read_oifits
    if kind == "photometry":
        from .photometry import read_photometry
        return read_photometry
    from .spectrum import read_spectrum
    return read_spectrum


def read_data_file(path, kind, **options):
    """Read ``path`` with the reader of ``kind``.

    Parameters
    ----------
    path : str or os.PathLike
    kind : {"oifits", "photometry", "spectrum"}
    **options
        Passed to the reader (:func:`~diskexplorer.data.read_oifits`: ``target``,
        ``strict``, …; :func:`~diskexplorer.data.read_photometry` and
        :func:`~diskexplorer.data.read_spectrum`: ``a_v``, ``r_v``).

    Returns
    -------
    ObservationSet or xarray.Dataset

    Raises
    ------
    DataError
        An unknown kind (naming the file), or whatever the reader refuses.
    """
    if kind not in FILE_KINDS:
        raise DataError(f"{os.fspath(path)}: unknown data kind {kind!r}; expected one of {', '.join(FILE_KINDS)}")
    return _reader(kind)(path, **options)
