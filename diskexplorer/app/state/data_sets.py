"""The data sets the explorer holds: one per file, with what its reader warned about.

The explorer keeps a list of :class:`DataSet` (any number of OIFITS files, at most one
photometry table and one spectrum, because a starting-point document names one of each).
Everything the figures and χ² see is combined from that list by :func:`combine_data_sets`,
so adding or removing a file is one edit of the list. No widget library is used here.
"""
from __future__ import annotations

import os
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ...data.readers import FILE_KIND_NAMES, FILE_KINDS, read_data_file
from ...errors import DataError, DiskExplorerError
from .workdir import resolve_user_path

__all__ = ["DataSet", "describe_loaded", "read_data_set", "read_data_sets", "data_sets_from", "combine_data_sets",
           "bandpass_choice", "DATA_SET_KINDS", "SINGLE_KINDS"]

#: The kinds of data set, in the order they are listed.
DATA_SET_KINDS = FILE_KINDS
#: Kinds of which the explorer holds one at a time (a new one replaces the old one).
SINGLE_KINDS = ("photometry", "spectrum")

_KIND_LABEL = FILE_KIND_NAMES
_POINT_LABEL = {"vis2": "V²", "vis": "visibilities", "t3": "closure phases", "flux": "OI_FLUX",
                "photometry": "photometric points", "spectrum": "spectral samples"}


@dataclass(frozen=True, eq=False)
class DataSet:
    """One loaded data set.

    Attributes
    ----------
    kind : {"oifits", "photometry", "spectrum"}
    data : ObservationSet or xarray.Dataset
        What the kind's reader returned.
    source : str
        Absolute path of the file; "" for data given in memory.
    label : str
        Short name shown in the data tab (the file name).
    warnings : tuple of str
        What the reader warned about (e.g. wavelengths in reversed order), one line each,
        without the file name the reader puts first.
    bandpass : bool
        OIFITS only: whether the model of its points is averaged over each channel's
        EFF_BAND (True, the default) or taken at the channel centre (False); see
        :func:`bandpass_choice`.

    Notes
    -----
    Compared by identity: two reads of one file are two data sets.
    """

    kind: str
    data: object
    source: str = ""
    label: str = ""
    warnings: tuple = ()
    bandpass: bool = True

    def __post_init__(self):
        if self.kind not in DATA_SET_KINDS:
            raise DataError(f"data set {self.label or self.source!r}: unknown kind {self.kind!r}; "
                            f"expected one of {', '.join(DATA_SET_KINDS)}")
        if not self.label:
            object.__setattr__(self, "label", Path(self.source).name if self.source else f"{self.kind} (in memory)")

    @property
    def not_judged(self):
        """Groups of this data set's points that χ² leaves out, with the reason (list of LeftOut)."""
        if self.kind != "oifits":
            return []
        from ...fitting.not_judged import not_judged

        return not_judged(self.data)

    @property
    def n_points(self) -> dict:
        """Points by observable (``vis2``, ``t3``, …, or ``photometry`` / ``spectrum``); empty ones left out."""
        if self.kind == "oifits":
            return {k: n for k, n in self.data.n_points().items() if n}
        if self.kind == "photometry":
            return {"photometry": int(self.data.sizes.get("point", 0))}
        return {"spectrum": int(self.data["wavelength"].size)}

    @property
    def kind_label(self) -> str:
        """The kind as shown to the user (``OIFITS``, ``photometry``, ``spectrum``)."""
        return _KIND_LABEL[self.kind]

    def describe_points(self) -> str:
        """The points as text, e.g. ``"600 V², 800 closure triangles"``."""
        parts = [f"{n:,} {_POINT_LABEL.get(k, k)}" for k, n in self.n_points.items()]
        return ", ".join(parts) or "no points"


def _messages(caught, path=""):
    """Distinct warning texts, without the ``"<path>: "`` the readers start them with."""
    out = []
    for w in caught:
        text = str(getattr(w, "message", w))
        if path:
            text = text.removeprefix(f"{path}: ")
        if text not in out:
            out.append(text)
    return out


def describe_loaded(data_sets):
    """One line naming each data set: kind, file and points (the message after a load)."""
    return "; ".join(f"{d.kind_label}: {d.label} ({d.describe_points()})" for d in data_sets)


def read_data_set(path, kind=None, lenient=False) -> DataSet:
    """Read one file into a :class:`DataSet`, keeping the reader's warnings.

    Parameters
    ----------
    path : str or os.PathLike
        The file (made absolute).
    kind : {"oifits", "photometry", "spectrum"}, optional
        Which reader to use; default: judged from the content
        (:func:`~diskexplorer.data.classify.classify_data_file`).
    lenient : bool
        OIFITS only: read what conforms in a file that does not conform to the standard,
        each defect becoming one of the data set's warnings (``read_oifits(strict=False)``).

    Returns
    -------
    DataSet

    Raises
    ------
    DataError
        The file is missing, none of the kinds, or its reader refuses it; the message
        names the file.
    """
    from ...data.classify import classify_data_file

    path = os.path.abspath(os.fspath(path))
    if kind is None:
        kind = classify_data_file(path)
    with warnings.catch_warnings(record=True) as caught:
        # Every warning of this read belongs to this file, also one already shown once.
        warnings.simplefilter("always")
        try:
            data = read_data_file(path, kind, **({"strict": False} if lenient and kind == "oifits" else {}))
        except DiskExplorerError:
            raise
        except OSError as exc:
            raise DataError(f"{path}: cannot be read as {_KIND_LABEL[kind]}: {exc.strerror or type(exc).__name__}") from exc
        except (ValueError, TypeError, KeyError, IndexError) as exc:
            # The readers' door turns these into DataErrors; should one slip through, its
            # text may quote the file, so only its kind is said.
            raise DataError(f"{path}: cannot be read as {_KIND_LABEL[kind]} (the reader failed with "
                            f"{type(exc).__name__})") from exc
    notes = _messages(caught, path)
    if kind == "oifits":
        notes += [n for n in _messages(data.notes, path) if n not in notes]
    return DataSet(kind, data, source=path, warnings=tuple(notes))


def read_data_sets(paths, kind=None, lenient=False, may_read=None):
    """Read files and folders into data sets; a folder's files are recognised by content.

    Parameters
    ----------
    paths : str, os.PathLike or sequence of them
        Files and folders.
    kind : {"oifits", "photometry", "spectrum"}, optional
        Read every file with this kind's reader (folders are still sorted by content and
        only files of this kind are read). Default: each file's kind from its content.
    lenient : bool
        Read what conforms in OIFITS files that do not conform (see :func:`read_data_set`).
    may_read : callable, optional
        ``may_read(path) -> bool`` for the files found in folders, before they are opened
        (a served page's confinement: :func:`~diskexplorer.data.classify.collect_data_files`).

    Returns
    -------
    (list of DataSet, list of str)
        The data sets (OIFITS first, in the order given) and notes: files of folders that
        were skipped (not data, or not of ``kind``) and files that were refused, each with
        its defects. One file that cannot be read does not keep the others out.

    Raises
    ------
    DataError
        When no file can be read (naming each with its defects), a folder without data,
        or more than one photometry table or spectrum.
    """
    from ...data.classify import collect_data_files

    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    paths = [os.fspath(p) for p in paths]
    if not paths:
        raise DataError("no data file given")
    notes = []
    if kind is None:
        files = collect_data_files(paths, may_read)
        notes += files.notes
        todo = [(k, p) for k, ps in files.items() for p in ps]
    else:
        todo = []
        for p in paths:
            if os.path.isdir(p):
                files = collect_data_files([p], may_read)
                notes += files.notes
                todo += [(kind, f) for f in files[kind]]
                notes += [f"{f}: skipped: {_KIND_LABEL[k]}, not {_KIND_LABEL[kind]}"
                          for k, fs in files.items() if k != kind for f in fs]
            else:
                todo.append((kind, p))
        if not todo:
            raise DataError(f"{', '.join(paths)}: no {_KIND_LABEL[kind]} file found")
    for single in SINGLE_KINDS:
        several = [p for k, p in todo if k == single]
        if len(several) > 1:
            raise DataError(f"{len(several)} {single} files ({', '.join(several)}): the explorer judges the model "
                            f"against one {single} table at a time; give the one you mean")
    sets, refused = [], []
    for k, p in todo:
        try:
            sets.append(read_data_set(p, k, lenient=lenient))
        except DataError as exc:
            refused.append(str(exc))
    if refused and not sets:
        raise DataError(" | ".join(refused) if len(refused) > 1 else refused[0])
    hint = "" if lenient else " (lenient reading may read what conforms in it)"
    notes += [f"refused: {r}{hint if 'not a valid OIFITS file' in r else ''}" for r in refused]
    return sets, notes


def _split_by_file(obs):
    """One ObservationSet per file of ``obs`` (in its order), or None if its points do not name their files."""
    files = list(obs.files)
    if len(files) < 2:
        return None
    datasets = obs.datasets()
    named = {f for ds in datasets.values() for f in np.unique(ds["file"].values.astype(str))}
    if not named <= set(files):
        return None
    from ...data.observations import ObservationSet

    parts = []
    for f in files:
        kinds = {}
        for k, ds in datasets.items():
            index = np.flatnonzero(ds["file"].values.astype(str) == f)
            kinds[k] = ds.isel(point=index) if index.size else None
        notes = [n for n in obs.notes if str(n).startswith(f)]
        parts.append((f, ObservationSet(**kinds, targets=obs.targets, arrays=obs.arrays, files=(f,), notes=notes)))
    return parts


def _observation_sets(obs):
    """Data sets of an ObservationSet given in memory: one per file it names, if its points say so."""
    parts = _split_by_file(obs)
    if parts is None:
        src = os.path.abspath(obs.files[0]) if len(obs.files) == 1 and os.path.isfile(obs.files[0]) else ""
        label = "" if src else ("in memory: " + ", ".join(Path(f).name for f in obs.files) if obs.files
                                else "observations (in memory)")
        return [DataSet("oifits", obs, source=src, label=label, warnings=tuple(_messages(obs.notes, src)))]
    return [DataSet("oifits", part, source=os.path.abspath(f) if os.path.isfile(f) else "",
                    label=Path(f).name, warnings=tuple(_messages(part.notes, f))) for f, part in parts]


def data_sets_from(data, workdir=None, lenient=False):
    """Turn what :func:`~diskexplorer.app.explore` accepts as ``data`` into data sets.

    Parameters
    ----------
    data : str, os.PathLike, sequence of them, ObservationSet, dict or sequence of DataSet
        A file or folder, several of them, interferometric data in memory, or a dict with
        ``observations``, ``photometry``, ``spectrum`` and optionally ``paths`` (as
        :func:`diskexplorer.sample.load_sample_data` returns). An empty sequence: no data.
    workdir : str or os.PathLike, optional
        Folder that relative paths refer to (default: the current folder).

    Returns
    -------
    (list of DataSet, list of str)
        The data sets and notes on skipped files.

    Raises
    ------
    DataError
        A file that cannot be read, or ``data`` of a type that is none of these.
    """
    from ...data.observations import ObservationSet

    if isinstance(data, DataSet):
        return [data], []
    if isinstance(data, ObservationSet):
        return _observation_sets(data), []
    if isinstance(data, dict):
        return _sets_from_dict(data), []
    if isinstance(data, (str, os.PathLike)):
        data = [data]
    try:
        items = list(data)
    except TypeError:
        raise DataError(f"data: expected a path, a list of paths, a folder, an ObservationSet or a dict, "
                        f"got {type(data).__name__}") from None
    if not items:
        return [], []
    if all(isinstance(x, DataSet) for x in items):
        return items, []
    if not all(isinstance(x, (str, os.PathLike)) for x in items):
        kinds = sorted({type(x).__name__ for x in items})
        raise DataError(f"data: a list must hold paths (str or os.PathLike) or DataSets, got {', '.join(kinds)}")
    base = workdir if workdir is not None else Path.cwd()
    return read_data_sets([resolve_user_path(x, base) for x in items], lenient=lenient)


def _sets_from_dict(data):
    from ...data.observations import ObservationSet

    unknown = sorted(set(data) - {"observations", "photometry", "spectrum", "paths"})
    if unknown:
        raise DataError(f"data: unknown key(s) {', '.join(map(repr, unknown))}; expected observations, "
                        "photometry, spectrum, paths")
    paths = data.get("paths") or {}
    out = []
    obs = data.get("observations")
    if obs is not None:
        if not isinstance(obs, ObservationSet):
            raise DataError(f"data['observations']: expected an ObservationSet, got {type(obs).__name__}")
        out += _observation_sets(obs)
    for kind in SINGLE_KINDS:
        ds = data.get(kind)
        if ds is not None:
            src = paths.get(kind) or ""
            out.append(DataSet(kind, ds, source=os.path.abspath(src) if src else ""))
    return out


def combine_data_sets(data_sets):
    """What the explorer's state holds for a list of data sets.

    Parameters
    ----------
    data_sets : sequence of DataSet

    Returns
    -------
    dict
        ``observations`` (the OIFITS sets concatenated in order, or None), ``photometry``
        and ``spectrum`` (Dataset or None), ``data_sources`` (``{"oifits": [paths],
        "photometry": path, "spectrum": path}``, files only) and ``warnings`` (what
        combining them warned about, e.g. two arrays of one name).
    """
    from ...data.observations import ObservationSet

    oifits = [d for d in data_sets if d.kind == "oifits"]
    caught = []
    if len(oifits) > 1:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            observations = ObservationSet.concat([d.data for d in oifits])
    else:
        observations = oifits[0].data if oifits else None
    out = {"observations": observations, "photometry": None, "spectrum": None, "warnings": _messages(caught)}
    sources = {}
    if any(d.source for d in oifits):
        sources["oifits"] = [d.source for d in oifits if d.source]
    for d in data_sets:
        if d.kind in SINGLE_KINDS:
            out[d.kind] = d.data
            if d.source:
                sources[d.kind] = d.source
    out["data_sources"] = sources
    return out


def bandpass_choice(data_sets):
    """The channel-bandpass choice of ``data_sets`` as :class:`~diskexplorer.fitting.Comparison` takes it.

    Returns
    -------
    True or dict
        True when every OIFITS data set averages over its channels; otherwise
        ``{file: False}`` for the files (the points' ``file`` coordinate) of those that do not.
    """
    off = {f: False for d in data_sets if d.kind == "oifits" and not d.bandpass for f in d.data.files}
    return off or True
