"""Save and restore a session file, asking before an existing file is overwritten."""
from __future__ import annotations

import dataclasses
import math

import ipywidgets as w

from ...errors import DiskExplorerError
from .save_box import OverwriteGuard
from ..state.workdir import resolve_user_path, state_folder, writable_user_path
from ..state.sessions import (VIEW_SETTINGS, read_session, scene_from_dict, session_to_dict, write_session)

__all__ = ["SessionBox", "restore_session"]


def restore_session(state, document):
    """Apply a session document to ``state``: scene, data (re-read from paths), filters, view, pins,
    starting-point set-up.

    The data become exactly the session's: whatever was loaded before is dropped. Data files
    that cannot be read leave a message; everything else is still restored.
    """
    scene = scene_from_dict(document["scene"])
    pins = [{"name": p["name"], "scene": scene_from_dict(p["scene"])} for p in document.get("pins", [])]
    data = document.get("data", {})
    with state.hold_trait_notifications():
        # The session's data replace everything loaded: a kind the session lacks must not
        # survive the restore and go on counting in χ².
        state.set_data_sets(())
        if data.get("oifits"):
            state.load_files(data["oifits"], "oifits")
        for kind in ("photometry", "spectrum"):
            if data.get(kind):
                state.load_files([data[kind]], kind)
        off = set(document.get("bandpass_off") or ())
        if off:
            state.set_data_sets([dataclasses.replace(d, bandpass=False) if d.source in off else d
                                 for d in state.data_sets])
        f = document.get("filters", {})
        state.band_filter = tuple(f.get("bands", ()))
        state.instrument_filter = tuple(f.get("instruments", ()))
        lo, hi = f.get("baseline_range_m", [0.0, None])
        state.baseline_range = (float(lo or 0.0), math.inf if hi is None else float(hi))
        for k, v in document.get("view", {}).items():
            if k in VIEW_SETTINGS:
                setattr(state, k, v)
        state.pins = pins
        state.scene = scene
        from .start_page import clean_fit_setup
        state.fit_setup = clean_fit_setup(document.get("fit_setup") or {})


class SessionBox(w.VBox):
    """A path box with save / restore; an existing file needs a second, explicit confirmation."""

    def __init__(self, state):
        self.state = state
        self.path = w.Text(value="diskexplorer-session.json", layout={"width": "250px"})
        self.save_button = w.Button(description="save", layout={"width": "70px"})
        self.restore_button = w.Button(description="restore", layout={"width": "70px"})
        self.confirm = OverwriteGuard(lambda: self.save(overwrite=True))
        # the confirm row's buttons, by the names tests and callers use
        self.overwrite_button, self.cancel_button = self.confirm.overwrite_button, self.confirm.keep_button
        self.save_button.on_click(lambda b: self.save())
        self.restore_button.on_click(lambda b: self.restore())
        super().__init__([w.HTML("<div class='dx-section-title'>session</div>"),
                          w.HBox([self.path, self.save_button, self.restore_button]), self.confirm])

    def _hide_confirm(self):
        self.confirm.hide()

    def save(self, overwrite=False):
        """Write the session; if the file exists and ``overwrite`` is False, ask first.

        Returns
        -------
        bool
            Whether the file was written.
        """
        try:
            target = writable_user_path(self.path.value, state_folder(self.state))
            path = write_session(target, session_to_dict(self.state), overwrite=overwrite)
        except FileExistsError:
            self.confirm.ask(str(target))
            return False
        except (OSError, DiskExplorerError) as exc:
            self.state.show_message(f"session not saved: {exc}")
            return False
        self._hide_confirm()
        self.state.show_message(f"session saved to {path}")
        return True

    def restore(self):
        """Read the session file and apply it."""
        source = resolve_user_path(self.path.value, state_folder(self.state))
        try:
            doc = read_session(source)
            restore_session(self.state, doc)
        except (DiskExplorerError, KeyError, TypeError, ValueError) as exc:
            self.state.show_message(f"session not restored: {exc}")
            return False
        self.state.show_message(f"session restored from {source}")
        return True
