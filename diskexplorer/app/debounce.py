"""Coalescing bursts of state changes into one recomputation.

A :class:`Debouncer` gathers the names of changed state traits; the first change of a
burst asks its *scheduler* for one call after ``delay`` seconds, and every change that
arrives before that call is merged into it. The scheduler is injected: the live app uses
the kernel's asyncio loop (:class:`LoopScheduler`), tests drive a
:class:`ManualScheduler` by hand, scripts use :class:`ImmediateScheduler`.
"""
from __future__ import annotations

import asyncio

__all__ = ["Debouncer", "LoopScheduler", "ManualScheduler", "ImmediateScheduler"]


class _Handle:
    def __init__(self, fn):
        self.fn = fn
        self.cancelled = False

    def cancel(self):
        self.cancelled = True


class ImmediateScheduler:
    """Runs the call at once (no coalescing): for scripts and benchmarks."""

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

    def call_later(self, delay, fn):
        """Queue ``fn`` to run when the clock passes ``time + delay`` (s)."""
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
    """Merge a burst of triggers into one call of ``callback(names)``.

    Parameters
    ----------
    callback : callable
        Called with the set of names gathered during the burst.
    delay : float
        Seconds between the first trigger of a burst and the call. Triggers during the
        wait join the pending call instead of restarting the clock, so a long slider
        drag still redraws about every ``delay`` seconds.
    scheduler : object with ``call_later(delay, fn)``
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

    @property
    def pending(self) -> bool:
        """Whether a call is waiting."""
        return self._handle is not None

    def trigger(self, *names):
        """Note ``names`` as changed and make sure one call is scheduled."""
        self._names.update(names)
        if self._handle is None:
            self._handle = True  # mark before scheduling: an immediate scheduler runs at once
            handle = self.scheduler.call_later(self.delay, self._fire)
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
            self.callback(names)
