"""Sessions of the explorer: the document of a state, and the state of a document.

The document layout and the scene codec live in the core
(:mod:`diskexplorer.fitting.session_document`, :mod:`diskexplorer.fitting.scene_codec`),
so the command line reads sessions without the explorer; this module only reads a state's
traits. Restoring is :meth:`~diskexplorer.app.state.ExplorerState.restore_session`.
No widget library is imported here.
"""
from __future__ import annotations

from ...fitting.session_document import (SESSION_SCHEMA, VIEW_SETTINGS, SessionContents, decode_session,
                                         read_session, session_document, write_session)

__all__ = ["session_of_state", "read_session", "write_session", "decode_session", "SessionContents",
           "SESSION_SCHEMA", "VIEW_SETTINGS"]


def session_of_state(state):
    """The session document of an :class:`~diskexplorer.app.state.ExplorerState`."""
    return session_document(
        state.scene, data=dict(state.data_sources),
        # OIFITS files whose channel-bandpass switch is off (the default is on).
        bandpass_off=[d.source for d in state.data_sets if d.kind == "oifits" and d.source and not d.bandpass],
        bands=state.band_filter, instruments=state.instrument_filter, baseline_range=state.baseline_range,
        target=state.target,
        view={k: getattr(state, k) for k in VIEW_SETTINGS},
        pins=[(p["name"], p["scene"]) for p in state.pins],
        # free/fixed, bounds, priors and weights of the starting-point page
        fit_setup=dict(state.fit_setup))
