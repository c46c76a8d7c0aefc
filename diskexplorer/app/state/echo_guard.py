"""The one guard against feedback loops between the state and the widgets that show it.

When the program shows a new value in a widget (the state changed elsewhere), the widget's
observer fires as if the user had typed it; written back to the state, that value would
start another round. Code that shows values does so inside ``with guard:``, and observers
return early ``if guard:``. The guard is re-entrant and exception-safe: a failure while
showing values never leaves a control deaf to the user.
"""
from __future__ import annotations

__all__ = ["EchoGuard"]


class EchoGuard:
    """True while the program itself is changing widgets (see the module docstring).

    Examples
    --------
    >>> guard = EchoGuard()
    >>> with guard:
    ...     bool(guard)
    True
    >>> bool(guard)
    False
    """

    __slots__ = ("_depth",)

    def __init__(self):
        self._depth = 0

    def __enter__(self):
        self._depth += 1
        return self

    def __exit__(self, *exc):
        self._depth -= 1
        return False

    def __bool__(self):
        return self._depth > 0
