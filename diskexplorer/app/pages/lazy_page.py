"""A page of a tab bar whose content is built the first time it is needed."""
from __future__ import annotations

import ipywidgets as w

__all__ = ["LazyPage"]


class LazyPage(w.VBox):
    """A tab's page whose content is built the first time it is needed.

    Parameters
    ----------
    build : callable
        Returns ``(widget, parts)``: the page's content and a dict of the objects the
        explorer exposes as attributes (its panels).

    Notes
    -----
    Every widget created in a kernel is sent to a browser page that opens, drawn or not
    (about 0.5 ms each in Chromium, plus the drawing): the hidden pages held about half of
    the app's ~1300 widgets.
    """

    def __init__(self, build):
        super().__init__()
        self._build = build
        self._parts = None

    @property
    def built(self):
        """Whether the content exists."""
        return self._parts is not None

    def build(self):
        """Build the content now (once); returns the parts."""
        if self._parts is None:
            self._parts = {}   # set first: a builder that reads its own parts must not recurse
            widget, parts = self._build()
            self._parts.update(parts)
            self.children = [widget]
        return self._parts

    def part(self, name):
        """One of the parts, building the page first if needed."""
        return self.build()[name]
