"""Where the app reads and writes the user's files: the folder the user started from.

A notebook kernel works in the notebook's folder; a served demo (``diskexplorer demo``)
runs its kernels in the package's own folder, so the CLI hands the folder it was started
from (or ``--workdir``) to the app. Every path typed into a panel is resolved here, against
that folder, and nothing is ever written inside the installed package.

A served page is *confined* (``ExplorerState.confined``, set by
:mod:`diskexplorer.app.serving.notebook_entry`): whoever can open it reads and writes as
the demo's owner, so typed paths may only lead into the working folder and the ``--data``
files and folders (``ExplorerState.read_folders``), after every symbolic link is
followed, and saves only into the working folder. A refusal says that the path is outside
those folders and nothing else: not whether it exists, nor what it is. A notebook user
(:func:`~diskexplorer.app.explore`) is not confined.
"""
from __future__ import annotations

import os
from pathlib import Path

from ...errors import DiskExplorerError

__all__ = ["working_folder", "state_folder", "resolve_user_path", "writable_user_path", "package_folder",
           "readable_path", "writable_path", "path_checker", "OUTSIDE"]

#: What a confined explorer answers for a path outside its folders (nothing about the path).
OUTSIDE = "outside the folders this demo may read"


def package_folder() -> Path:
    """The installed ``diskexplorer`` package folder (resolved)."""
    return Path(__file__).resolve().parents[2]


def _inside(path: Path, folder: Path) -> bool:
    try:
        path.relative_to(folder)
        return True
    except ValueError:
        return False


def working_folder(workdir=None) -> Path:
    """The folder relative names are resolved against (absolute, resolved).

    Parameters
    ----------
    workdir : str or os.PathLike, optional
        The folder the user started from. Default: the process's current folder.

    Raises
    ------
    DiskExplorerError
        If ``workdir`` is given and is not an existing folder.

    Notes
    -----
    If the folder lies inside the installed package (a kernel started by voila in the
    package's ``app/`` folder without ``diskexplorer demo``), the user's home folder is used
    instead, so that saves never land in the package.
    """
    if workdir is not None:
        folder = Path(os.fspath(workdir)).expanduser().resolve()
        if not folder.is_dir():
            raise DiskExplorerError(f"working folder {folder}: no such folder")
    else:
        folder = Path.cwd().resolve()
    if _inside(folder, package_folder()):
        folder = Path.home().resolve()
    return folder


def state_folder(state) -> Path:
    """The working folder an explorer state was opened with (``state.workdir``), else the current one."""
    folder = getattr(state, "workdir", None)
    return Path(folder) if folder else working_folder()


def _real(path: Path) -> Path:
    """``path`` with every symbolic link followed, existing or not (``os.path.realpath``)."""
    return Path(os.path.realpath(path))


def _allowed(real: Path, workdir, readable) -> bool:
    if _inside(real, _real(Path(workdir))):
        return True
    for item in readable:
        allowed = _real(Path(os.fspath(item)))
        # A data file given on the command line is readable itself; a folder, inside.
        if real == allowed or _inside(real, allowed):
            return True
    return False


def resolve_user_path(text, workdir, confined=False, readable=()) -> Path:
    """A path typed by the user, as an absolute path (``~`` expanded, relative → ``workdir``).

    Parameters
    ----------
    text : str or os.PathLike
        What the user typed.
    workdir : str or os.PathLike
        The working folder (see :func:`working_folder`).
    confined : bool
        Refuse a path that leads outside ``workdir`` and ``readable`` once every
        symbolic link is followed (a served page). Default False: any path.
    readable : sequence of str or os.PathLike
        Files and folders a confined explorer may read besides ``workdir`` (the demo's
        ``--data``).

    Returns
    -------
    pathlib.Path
        Normalised; when confined, with its links followed.

    Raises
    ------
    DiskExplorerError
        Confined, and the path leads outside: ``"<text>: outside the folders this demo may
        read"``, the same whether or not anything is there.
    """
    path = Path(os.fspath(text).strip()).expanduser()
    if not path.is_absolute():
        path = Path(workdir) / path
    path = Path(os.path.normpath(path))
    if confined:
        real = _real(path)
        if not _allowed(real, workdir, readable):
            raise DiskExplorerError(f"{os.fspath(text).strip()}: {OUTSIDE}")
        return real
    return path


def writable_user_path(text, workdir, confined=False) -> Path:
    """Like :func:`resolve_user_path`, but refuse a target inside the installed package.

    Parameters
    ----------
    text, workdir
        As for :func:`resolve_user_path`.
    confined : bool
        Refuse a target outside ``workdir`` once every symbolic link is followed (a
        served page may save only into its working folder).

    Raises
    ------
    DiskExplorerError
        If the path is empty, lies inside the ``diskexplorer`` package folder, or (when
        confined) outside ``workdir``.
    """
    if not os.fspath(text).strip():
        raise DiskExplorerError("give a file name")
    path = resolve_user_path(text, workdir)
    if confined and not _inside(_real(path), _real(Path(workdir))):
        raise DiskExplorerError(f"{os.fspath(text).strip()}: outside the working folder; this demo saves only "
                                f"into {workdir}")
    if _inside(path.resolve(), package_folder()):
        raise DiskExplorerError(f"{path} is inside the installed diskexplorer package; "
                                "choose a folder of your own")
    return _real(path) if confined else path


def readable_path(state, text) -> Path:
    """A path typed into a panel of ``state``'s explorer, resolved for reading.

    Relative to the state's working folder; confined to it and to
    ``state.read_folders`` when ``state.confined`` (see :func:`resolve_user_path`).
    """
    return resolve_user_path(text, state_folder(state), confined=bool(getattr(state, "confined", False)),
                             readable=tuple(getattr(state, "read_folders", ())))


def writable_path(state, text) -> Path:
    """A path typed into a panel of ``state``'s explorer, resolved for writing (:func:`writable_user_path`)."""
    return writable_user_path(text, state_folder(state), confined=bool(getattr(state, "confined", False)))


def path_checker(state):
    """For readers of documents (``check_path=``): None when ``state`` is not confined, else a
    function that returns an absolute path it may read or raises DiskExplorerError."""
    if not getattr(state, "confined", False):
        return None
    return lambda path: readable_path(state, path)
