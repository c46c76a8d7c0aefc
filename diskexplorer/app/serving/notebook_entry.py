"""The explorer as ``diskexplorer demo`` serves it: folder and data from the command line.

The served notebook's kernel runs in the package's folder, so the command line hands over
the user's folder and data files through the environment (names in
:mod:`diskexplorer.app.serving.server`). A served explorer is *confined*
(:mod:`~diskexplorer.app.state.workdir`): typed paths may lead only into the working folder
and the ``--data`` files and folders, and saves only into the working folder.
"""
from __future__ import annotations

import os

from ...errors import DiskExplorerError
from .server import DATA_VARIABLE, WORKDIR_VARIABLE, mark_ready
from ..explorer import explore

__all__ = ["explore_served", "served_settings"]


def served_settings(environ=None):
    """``(workdir, data_paths)`` handed over by ``diskexplorer demo`` (None where unset)."""
    environ = os.environ if environ is None else environ
    workdir = environ.get(WORKDIR_VARIABLE) or None
    data = [p for p in (environ.get(DATA_VARIABLE) or "").split(os.pathsep) if p]
    return workdir, (data or None)


def explore_served(environ=None, **kwargs):
    """Open the explorer with the folder and data the command line named, confined to them.

    Parameters
    ----------
    environ : mapping, optional
        Where to read the settings (default ``os.environ``).
    **kwargs
        Passed to :func:`~diskexplorer.app.explore`.
    """
    workdir, data = served_settings(environ)
    if data is None:
        app = explore(workdir=workdir, **kwargs)
    else:
        try:
            app = explore(data=data if len(data) > 1 else data[0], workdir=workdir, **kwargs)
        except DiskExplorerError as exc:
            # A served page cannot show a traceback usefully: open without the data and say why
            # in the app's notice, so the user can fix the file and load it from the data tab.
            app = explore(data=[], workdir=workdir, **kwargs)
            app.state.show_message(f"not loaded: {exc}")
    # Whoever opens the page reads and writes as the demo's owner: only the working folder
    # and the --data files and folders.
    app.state.confine(readable=data or ())
    # A served page is never saved: no picture to draw in the kernel.
    app.show_snapshot = False
    mark_ready(environ)
    return app
