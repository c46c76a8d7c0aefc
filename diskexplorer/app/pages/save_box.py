"""The "file exists — overwrite it?" row shared by every panel that saves a file."""
from __future__ import annotations

import html

import ipywidgets as w

__all__ = ["OverwriteGuard"]


class OverwriteGuard(w.HBox):
    """A hidden row that asks before a save replaces an existing file.

    Parameters
    ----------
    on_overwrite : callable
        Called without arguments when the user confirms ("overwrite").

    Notes
    -----
    A panel's ``save()`` calls :meth:`ask` when its target exists and returns; the file is
    written only from ``on_overwrite``. "keep the file" hides the row and writes nothing.
    """

    def __init__(self, on_overwrite):
        self.text = w.HTML()
        self.overwrite_button = w.Button(description="overwrite", button_style="warning", layout={"width": "90px"})
        self.keep_button = w.Button(description="keep the file", layout={"width": "110px"})
        self.overwrite_button.on_click(lambda b: on_overwrite())
        self.keep_button.on_click(lambda b: self.hide())
        super().__init__([self.text, self.overwrite_button, self.keep_button], layout={"display": "none"})
        self.add_class("dx-overwrite-guard")

    def ask(self, path):
        """Show the question for ``path``."""
        self.text.value = f"<b>{html.escape(str(path))}</b> exists. Overwrite it?&nbsp;"
        self.layout.display = None

    def hide(self):
        self.layout.display = "none"
