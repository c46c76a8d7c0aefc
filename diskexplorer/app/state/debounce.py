"""Coalescing bursts of state changes into few recomputations, the first one at once.

A :class:`Debouncer` gathers the names of changed state traits. The first change after a
quiet spell is computed at once — at the end of the current turn of the event loop, so
that every change made by the same message (a slider step, a loaded file) joins it — and
changes that arrive within ``delay`` seconds of a call are merged into one call ``delay``
after it: a key press redraws without waiting, a drag redraws about every ``delay``
seconds. The scheduler is injected: the live app uses the kernel's asyncio loop
(:class:`LoopScheduler`), tests drive a :class:`ManualScheduler` by hand, scripts use
:class:`ImmediateScheduler`.
"""
from __future__ import annotations

import asyncio
import time

__all__ = ["Debouncer", "LoopScheduler", "ManualScheduler", "ImmediateScheduler"]


class _Handle:
    def __init__(self, fn):
        self.fn = fn
        self.cancelled = False

    def cancel(self):
        self.cancelled = True


class ImmediateScheduler:
    """Runs the call at once (no coalescing): for scripts and benchmarks."""

    def now(self):
        """The clock, s (monotonic)."""
        return time.monotonic()

    def call_later(self, delay, fn):
        """Call ``fn()`` now; ``delay`` (s) is ignored."""
        fn()
        return _Handle(fn)


class LoopScheduler:
    """Schedules on the running asyncio loop (the kernel's loop under Jupyter and voila).

    Widget messages are handled on that same loop, so a burst of slider messages is
    processed before the timer fires and the callback runs on the kernel's own thread:
    no locking, and widget updates are sent from the thread that owns the comms
    (a ``threading.Timer`` would update widgets from a foreign thread).
    Outside a running loop (a plain script) the call runs at once.
    """

    def now(self):
        """The running loop's clock, s (monotonic outside a loop)."""
        try:
            return asyncio.get_running_loop().time()
        except RuntimeError:
            return time.monotonic()

    def call_later(self, delay, fn):
        """Call ``fn()`` after ``delay`` seconds on the running loop; returns a cancellable handle."""
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:
            fn()
            return _Handle(fn)
        return loop.call_later(delay, fn)


class ManualScheduler:
    """A scheduler driven by hand, for tests.

    Attributes
    ----------
    time : float
        The scheduler's clock in seconds, advanced only by :meth:`advance`.
    """

    def __init__(self):
        self.time = 0.0
        self._queue = []

    def now(self):
        """The scheduler's clock, s."""
        return self.time

    def call_later(self, delay, fn):
        """Queue ``fn`` to run when the clock passes ``time + delay`` (s); ``advance(0)`` runs a zero delay."""
        h = _Handle(fn)
        self._queue.append((self.time + float(delay), h))
        return h

    @property
    def pending(self):
        """Number of queued, not cancelled calls."""
        return sum(1 for _, h in self._queue if not h.cancelled)

    def advance(self, seconds):
        """Move the clock by ``seconds`` and run every call that fell due, in order."""
        self.time += float(seconds)
        due = sorted((item for item in self._queue if item[0] <= self.time), key=lambda it: it[0])
        self._queue = [item for item in self._queue if item[0] > self.time]
        for _, h in due:
            if not h.cancelled:
                h.fn()

    def flush(self):
        """Run everything queued, whatever its due time."""
        while self._queue:
            self.advance(max(t for t, _ in self._queue) - self.time)


class Debouncer:
    """Merge triggers into calls of ``callback(names)``: the first at once, then one per window.

    Parameters
    ----------
    callback : callable
        Called with the set of names gathered since the last call.
    delay : float
        Window, s. A trigger when no call ran for ``delay`` seconds is called at the
        scheduler's next turn (``call_later(0, ...)``, after the current message has made
        all its changes); later triggers wait until ``delay`` seconds after the end of the
        last call and are merged into that one call, so a long slider drag redraws about
        every ``delay`` seconds and a slow recompute is never followed back to back by
        another.
    scheduler : object with ``call_later(delay, fn)`` and ``now()``
        Where the wait happens (see the module docstring).

    Attributes
    ----------
    calls : int
        How many times ``callback`` ran.
    """

    def __init__(self, callback, delay=0.04, scheduler=None):
        self.callback = callback
        self.delay = float(delay)
        self.scheduler = scheduler if scheduler is not None else LoopScheduler()
        self.calls = 0
        self._names = set()
        self._handle = None
        self._last = None   # scheduler time at the end of the last call

    @property
    def pending(self) -> bool:
        """Whether a call is waiting."""
        return self._handle is not None

    def trigger(self, *names):
        """Note ``names`` as changed and make sure one call is scheduled."""
        self._names.update(names)
        if self._handle is None:
            wait = 0.0
            if self._last is not None:
                wait = max(0.0, self._last + self.delay - self.scheduler.now())
            self._handle = True  # mark before scheduling: an immediate scheduler runs at once
            handle = self.scheduler.call_later(wait, self._fire)
            if self._handle is True:
                self._handle = handle

    def flush(self):
        """Run the pending call now (if any)."""
        if self._handle is not None:
            if hasattr(self._handle, "cancel"):
                self._handle.cancel()
            self._fire()

    def _fire(self):
        names, self._names, self._handle = self._names, set(), None
        if names:
            self.calls += 1
            try:
                self.callback(names)
            finally:
                self._last = self.scheduler.now()
