"""Where the app reads and writes the user's files: the folder the user started from.

A notebook kernel works in the notebook's folder; a served demo (``diskexplorer demo``)
runs its kernels in the package's own folder, so the CLI hands the folder it was started
from (or ``--workdir``) to the app. Every path typed into a panel is resolved here, against
that folder, and nothing is ever written inside the installed package.
"""
from __future__ import annotations

import os
from pathlib import Path

from ...errors import DiskExplorerError

__all__ = ["working_folder", "state_folder", "resolve_user_path", "writable_user_path", "package_folder"]


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


def resolve_user_path(text, workdir) -> Path:
    """A path typed by the user, as an absolute path (``~`` expanded, relative → ``workdir``).

    Parameters
    ----------
    text : str or os.PathLike
        What the user typed.
    workdir : str or os.PathLike
        The working folder (see :func:`working_folder`).
    """
    path = Path(os.fspath(text).strip()).expanduser()
    if not path.is_absolute():
        path = Path(workdir) / path
    return Path(os.path.normpath(path))


def writable_user_path(text, workdir) -> Path:
    """Like :func:`resolve_user_path`, but refuse a target inside the installed package.

    Raises
    ------
    DiskExplorerError
        If the path is empty or lies inside the ``diskexplorer`` package folder.
    """
    if not os.fspath(text).strip():
        raise DiskExplorerError("give a file name")
    path = resolve_user_path(text, workdir)
    if _inside(path.resolve(), package_folder()):
        raise DiskExplorerError(f"{path} is inside the installed diskexplorer package; "
                                "choose a folder of your own")
    return path
