"""Pinned states: name, pin, remove; their colours and χ² are shown beside the live model."""
from __future__ import annotations

import html

import ipywidgets as w

from ...errors import DiskExplorerError
from ..palette import PIN_COLOURS
from ..state.explorer_state import MAX_PINS

__all__ = ["PinBoard", "pin_colour"]


def pin_colour(index):
    """Overlay colour of pin ``index``."""
    return PIN_COLOURS[index % len(PIN_COLOURS)]


class PinBoard(w.VBox):
    """Pin the current model under a name (up to :data:`MAX_PINS`), list and remove pins."""

    def __init__(self, state):
        self.state = state
        self.name = w.Text(placeholder="name of the pin", layout={"width": "190px"})
        self.pin_button = w.Button(description="pin current model", icon="thumb-tack", layout={"width": "160px"})
        self.pin_button.on_click(lambda b: self.pin())
        self.rows = w.VBox()
        self.totals = {}
        super().__init__([w.HTML(f"<div class='dx-section-title'>compare (up to {MAX_PINS} pins)</div>"),
                          w.HBox([self.name, self.pin_button]), self.rows])
        state.observe(lambda ch: self.sync(), "pins")
        self.sync()

    def pin(self):
        """Pin the live scene under the typed name."""
        try:
            self.state.pin(self.name.value)
            self.name.value = ""
        except DiskExplorerError as exc:
            self.state.show_message(str(exc))

    def show_totals(self, totals):
        """Show χ²/N per pin (list of floats or None, in pin order)."""
        self.totals = dict(enumerate(totals))
        self.sync()

    def sync(self):
        """One row per pin: colour, name, χ²/N, remove."""
        rows = []
        for k, p in enumerate(self.state.pins):
            chi = self.totals.get(k)
            chi_txt = "" if chi is None else f"χ²/N {chi:.3g}"
            label = w.HTML(f"<span style='display:inline-block;width:18px;border-top:3px dashed {pin_colour(k)};"
                           f"margin-right:6px;vertical-align:middle'></span>{html.escape(p['name'])} "
                           f"<span style='color:#6b7280'>{chi_txt}</span>", layout={"width": "250px"})
            remove = w.Button(description="remove", layout={"width": "70px"})
            remove.on_click((lambda i: lambda b: self.state.unpin(i))(k))
            rows.append(w.HBox([label, remove]))
        self.rows.children = rows
        self.pin_button.disabled = len(self.state.pins) >= MAX_PINS
