"""The explorer's headless room: state, recompute scheduling, data, sessions, jobs, files.

Nothing here imports a widget library (``tests/test_layering.py`` checks it), so the
state and everything that changes it can be driven from a script or a test without a
front end.

Modules
-------
explorer_state
    :class:`ExplorerState`: the single source of truth, and the only methods that change
    the scene, the data, the pins and the settings.
debounce
    The debouncer and its schedulers (asyncio loop, manual for tests).
data_sets
    Loaded files as :class:`DataSet` entries; reading paths, folders and dicts.
data_view
    The filtered data of the moment and its :class:`~diskexplorer.fitting.Comparison`.
model_views
    Model curves, images and profiles the figures draw (no judgement).
frames
    :class:`Frame`: what one recomputation produced for one scene.
fit_setup
    The starting-point set-up (free, bounds, priors, weights) and the data description.
sessions
    Session documents (scene codec from :mod:`diskexplorer.fitting`).
jobs
    Background jobs (refinement, scans): one runner, one completion signature.
workdir
    The working folder every typed path resolves against.
"""
from .explorer_state import MAX_PINS, TIERS, ExplorerState, tiers_for

__all__ = ["ExplorerState", "TIERS", "tiers_for", "MAX_PINS"]
