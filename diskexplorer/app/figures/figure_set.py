"""The explorer's figures by name, each built the first time it is needed."""
from __future__ import annotations

__all__ = ["FigureSet"]


class FigureSet:
    """Figures by name, built on first access; iteration covers the built ones only.

    Every widget of a kernel is sent to a new browser page, shown or not: the figures of
    pages not yet opened (SED, spectrum, image, profiles: 85 widgets and their arrays)
    are made only when their page is built, or when code asks for one by name.

    Parameters
    ----------
    makers : dict of str to callable
        How to make each figure, in the order updates are sent (the first page's first).
    catch_up : callable
        Called with ``(name, figure)`` right after a figure is made, to draw the current
        data and model on it.
    """

    def __init__(self, makers, catch_up):
        self._makers = dict(makers)
        self._built = {}
        self._catch_up = catch_up

    def __getitem__(self, name):
        fig = self._built.get(name)
        if fig is None:
            if name not in self._makers:
                raise KeyError(f"no figure {name!r}; the figures are {', '.join(self._makers)}")
            fig = self._built[name] = self._makers[name]()
            self._catch_up(name, fig)
        return fig

    def keys(self):
        """Every figure's name (built or not)."""
        return list(self._makers)

    def built(self, name):
        """Whether figure ``name`` exists yet."""
        return name in self._built

    def items(self):
        """(name, figure) of the built figures, in update order."""
        return [(n, self._built[n]) for n in self._makers if n in self._built]

    def values(self):
        """The built figures, in update order."""
        return [fig for _, fig in self.items()]
