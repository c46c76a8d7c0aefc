"""Building and driving an explorer in the widget tests (no browser, no event loop)."""
from diskexplorer.app import explore
from diskexplorer.app.state.debounce import ManualScheduler

__all__ = ["make_app", "settle"]


def make_app(material, scene=None, jobs="sync", **kwargs):
    """An explorer on ``material``'s data, recomputed only when a test says so.

    Parameters
    ----------
    material : (Scene, dict)
        A scene and the data to judge it against (the ``material`` fixture).
    scene : Scene, optional
        Another starting scene (default: ``material``'s).
    jobs : {"sync", "thread"}
        Refinements and scans at once (default) or in background threads.
    """
    start, data = material
    return explore(data=dict(data) if isinstance(data, dict) else data, scene=start if scene is None else scene,
                   scheduler=ManualScheduler(),
                   jobs=jobs, **kwargs)


def settle(app):
    """Run every recompute the debouncer holds (one window of time, by hand)."""
    app.debouncer.scheduler.advance(1.0)
