"""What an evaluation reads: the starting point, and data files replacing its data."""
from __future__ import annotations

import os

from ..data.classify import classify_data_file, collect_data_files
from ..errors import DataError

__all__ = ["load_start", "data_description_with", "classify_data_file"]


def load_start(source):
    """Read a starting-point document.

    Parameters
    ----------
    source : str, os.PathLike, dict or StartingPoint
        A path to a starting-point JSON document (see
        :func:`diskexplorer.fitting.read_start`), the document itself, or an already
        read :class:`~diskexplorer.fitting.StartingPoint`.

    Returns
    -------
    StartingPoint

    Raises
    ------
    SeedError
        Unreadable or malformed document (the message names the entry).
    """
    from ..fitting.start_import import StartingPoint, read_start

    if isinstance(source, StartingPoint):
        return source
    return read_start(source)


def data_description_with(description, files=None, base_dir=None, *, say=None):
    """A data description whose kinds are replaced by ``files`` where given.

    Parameters
    ----------
    description : DataDescription or dict or None
        The data a starting point names.
    files : path or sequence of paths, optional
        Data files and folders (OIFITS, photometry, spectrum) sorted by content with
        :func:`~diskexplorer.data.collect_data_files`. Each kind given replaces that kind of the
        description entirely (its selections and error floors too); kinds not given are
        kept. Weights are kept.
    base_dir : str, optional
        Folder the description's relative paths refer to; override paths are made
        absolute against the current directory, so they stay right whatever the base.
    say : callable, optional
        ``say(message)`` for each file of a folder that is skipped as not data, and for
        each kind of the description that the files do not replace and that is kept
        (the explorer replaces all its data on a load; here the output says what stays).

    Returns
    -------
    DataDescription

    Raises
    ------
    DataError
        More than one photometry or spectrum file, a file that does not exist, is none
        of the kinds or is damaged.
    """
    from ..fitting.data_description import DataDescription, describe_data

    desc = describe_data(description)
    if not files:
        return desc
    found = collect_data_files(files)
    for note in found.notes:
        (say or (lambda message: None))(f"note: {note}")
    kinds = {k: [os.path.abspath(p) for p in v] for k, v in found.items()}
    for kind in ("photometry", "spectrum"):
        if len(kinds[kind]) > 1:
            raise DataError(f"{len(kinds[kind])} {kind} files given ({', '.join(kinds[kind])}); "
                            f"an evaluation uses one {kind} file")
    d = desc.as_dict()
    if kinds["oifits"]:
        d["oifits"] = kinds["oifits"]
    if kinds["photometry"]:
        d["photometry"] = kinds["photometry"][0]
    if kinds["spectrum"]:
        d["spectrum"] = kinds["spectrum"][0]
    for kind in ("oifits", "photometry", "spectrum"):
        kept = d.get(kind)
        if kept and not kinds[kind]:
            paths = [e["path"] if isinstance(e, dict) else e for e in (kept if isinstance(kept, list) else [kept])]
            (say or (lambda message: None))(f"note: keeping the document's {kind} data ({', '.join(map(str, paths))}): "
                                            f"--data gave no {kind} file")
    return DataDescription.from_dict(d)
