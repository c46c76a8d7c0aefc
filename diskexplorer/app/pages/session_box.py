"""Save and restore the whole session: a file name, save (asking before overwriting), restore."""
from __future__ import annotations

import ipywidgets as w

from ...errors import DiskExplorerError
from ..state.sessions import decode_session, read_session, session_of_state, write_session
from ..state.workdir import path_checker
from .save_box import SaveBox

__all__ = ["SessionBox"]


class SessionBox(w.VBox):
    """A file name with save / restore; an existing file needs a second, explicit confirmation."""

    def __init__(self, state):
        self.state = state
        self.restore_button = w.Button(description="restore", layout={"width": "70px"})
        self.restore_button.on_click(lambda b: self.restore())
        self.save_box = SaveBox(state, "diskexplorer-session.json", "session", self._write,
                                actions=[self.restore_button], width="250px")
        self.path, self.save_button, self.confirm = self.save_box.path, self.save_box.save_button, self.save_box.confirm
        # the confirm row's buttons, by the names tests and callers use
        self.overwrite_button, self.cancel_button = self.confirm.overwrite_button, self.confirm.keep_button
        super().__init__([w.HTML("<div class='dx-section-title'>session</div>"), self.save_box])

    def save(self, overwrite=False):
        """Write the session; if the file exists and ``overwrite`` is False, ask first.

        Returns
        -------
        bool
            Whether the file was written.
        """
        return self.save_box.save(overwrite)

    def _write(self, path, overwrite):
        written = write_session(path, session_of_state(self.state), overwrite=overwrite)
        return f"session saved to {written}"

    def restore(self):
        """Read the session file and apply it; a session that cannot be taken changes nothing."""
        try:
            source = self.save_box.target()
            contents = decode_session(read_session(source), base_dir=source.parent, where=f"session {source}",
                                      check_path=path_checker(self.state))
        except DiskExplorerError as exc:
            self.state.show_message(f"session not restored: {exc}")
            return False
        try:
            problems = self.state.restore_session(contents, source=source)
        except DiskExplorerError:
            return False   # the state is unchanged and its message says why
        self.state.show_message(f"session restored from {source}" + "".join(f"; {p}" for p in problems))
        return True
