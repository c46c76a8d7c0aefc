"""Building and driving an explorer in the widget tests (no browser, no event loop)."""
from diskexplorer.app import explore
from diskexplorer.app.state.debounce import ManualScheduler

__all__ = ["build_app", "make_app", "settle"]


def build_app(data=None, scene=None, jobs="sync", **kwargs):
    """An explorer recomputed only when a test says so (a ``ManualScheduler``: see :func:`settle`).

    Parameters
    ----------
    data, scene
        As :func:`diskexplorer.app.explore` takes them (None: the sample's).
    jobs : {"sync", "thread"}
        Refinements and scans at once (default) or in background threads.
    **kwargs
        Further arguments of ``explore`` (``workdir``...).
    """
    return explore(data=data, scene=scene, scheduler=ManualScheduler(), jobs=jobs, **kwargs)


def make_app(material, scene=None, jobs="sync", **kwargs):
    """An explorer on ``material``'s data, recomputed only when a test says so.

    Parameters
    ----------
    material : (Scene, dict)
        A scene and the data to judge it against (the ``material`` fixture).
    scene : Scene, optional
        Another starting scene (default: ``material``'s).
    jobs, **kwargs
        As :func:`build_app` takes them.
    """
    start, data = material
    return build_app(dict(data) if isinstance(data, dict) else data, start if scene is None else scene,
                     jobs=jobs, **kwargs)


def settle(app):
    """Run every recompute the debouncer holds (one window of time, by hand)."""
    app.debouncer.scheduler.advance(1.0)
