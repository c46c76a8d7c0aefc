"""The explorer application: the only package of ours that imports widget libraries.

Rooms (sub-packages), each with one job:

``state``
    The explorer's headless part: the state object and the only methods that change it,
    the debouncer, data sets and their filtered view, model views, sessions, background
    jobs and the working folder. It imports no widget library (``tests/test_layering.py``).
``controls``
    Widgets that write to the state: parameter sliders, the model panels, ring cards and
    dust-mixture editors.
``figures``
    bqplot figures and the χ² table; they read frames and data views, never the state.
``pages``
    One thin module per page of the tab bars (data, pins and sessions, starting point,
    χ² grid, derived quantities) and the save-with-a-question row they share.
``serving``
    ``diskexplorer demo``: the voila server (no widgets) and the served notebook's entry.

``explorer.py`` assembles them: the layout, the one observer and the one draw path.

``explore()`` opens the application on the sample data; see :class:`Explorer`.
Importing this package loads no widget library: :func:`explore`, :class:`Explorer` and
:class:`Frame` are imported on first use, so the headless room and the server can be
used from a script or the command line without ipywidgets.
"""

__all__ = ["explore", "Explorer", "Frame"]


def __getattr__(name):
    # Deferred: the explorer imports ipywidgets and bqplot; the headless room must not.
    if name in __all__:
        from . import explorer

        return getattr(explorer, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
