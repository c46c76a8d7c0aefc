"""Running long jobs (refinement, grid scans, cluster start-up) off the kernel's thread.

Every background job of the explorer has one lifecycle, :meth:`JobRunner.run`: the work
runs in a :class:`threading.Thread` (``mode="thread"``, the live app) or at once in the
caller's thread (``mode="sync"``, tests and scripts, or ``wait=True``), and its end is handed
to ``on_done(result, error)``, exactly one of them None, on the thread that owns the
widgets. Progress goes the same way through :meth:`JobRunner.post`: the kernel's asyncio
loop when there is one (``call_soon_threadsafe``), so that widget messages are sent from the
thread that runs the comms; without a running loop (a plain script, pytest) the callable
runs directly.
"""
from __future__ import annotations

import asyncio
import threading
import time

__all__ = ["JobRunner", "Throttle"]


class Throttle:
    """Let a call through at most every ``interval`` seconds (progress readouts).

    Parameters
    ----------
    interval : float
        Minimum time between two accepted calls, s.
    clock : callable, optional
        Returns the time in s (tests inject their own).
    """

    def __init__(self, interval=0.2, clock=time.monotonic):
        self.interval = float(interval)
        self.clock = clock
        self._last = -float("inf")

    def ready(self) -> bool:
        """Whether a call may go through now (and if so, start a new interval)."""
        now = self.clock()
        if now - self._last >= self.interval:
            self._last = now
            return True
        return False


class JobRunner:
    """Run one job at a time, in a background thread or synchronously.

    Parameters
    ----------
    mode : {"thread", "sync"}
        ``thread``: :meth:`start` returns at once and the job runs in a daemon thread;
        ``sync``: :meth:`start` runs the job before returning.

    Attributes
    ----------
    thread : threading.Thread or None
        The running (or last) job thread.
    cancel_event : threading.Event
        Set by :meth:`cancel`; jobs poll ``cancel_event.is_set``.
    """

    def __init__(self, mode="thread"):
        if mode not in ("thread", "sync"):
            raise ValueError(f"JobRunner mode {mode!r}; expected 'thread' or 'sync'")
        self.mode = mode
        self.thread = None
        self.cancel_event = threading.Event()
        self._loop = None
        self._owner = None

    @property
    def busy(self) -> bool:
        """Whether a job is running."""
        return self.thread is not None and self.thread.is_alive()

    def start(self, job, name="diskexplorer-job"):
        """Run ``job()`` (see the class docstring); returns False if a job is still running."""
        if self.busy:
            return False
        self.cancel_event = threading.Event()
        try:
            # The loop that runs the widget callbacks; results are posted back to it.
            self._loop = asyncio.get_running_loop()
        except RuntimeError:
            self._loop = None
        self._owner = threading.current_thread()
        if self.mode == "sync":
            job()
            return True
        self.thread = threading.Thread(target=job, name=name, daemon=True)
        self.thread.start()
        return True

    def run(self, work, on_done, name="diskexplorer-job", wait=False):
        """Run ``work()`` and hand its end to ``on_done(result, error)`` on the widgets' thread.

        Parameters
        ----------
        work : callable
            Takes no argument and returns the result. It may poll :attr:`cancelled` and
            report progress with :meth:`post`.
        on_done : callable
            Called once with ``(result, None)``, or ``(None, exception)`` if ``work`` raised.
        name : str
            Name of the thread (seen in debuggers and thread dumps).
        wait : bool
            Run in the caller's thread whatever :attr:`mode` is (tests, scripts).

        Returns
        -------
        bool
            Whether the job was started (False while another one runs).
        """
        def job():
            try:
                result = work()
            except Exception as exc:  # noqa: BLE001 - any failure must end the job visibly
                # Bound now: Python unbinds ``exc`` when the except block ends, before the
                # widgets' loop runs the posted call.
                self.post(lambda error=exc: on_done(None, error))
                return
            self.post(lambda: on_done(result, None))

        if not wait:
            return self.start(job, name=name)
        mode, self.mode = self.mode, "sync"
        try:
            return self.start(job, name=name)
        finally:
            self.mode = mode

    def cancelled(self) -> bool:
        """Whether :meth:`cancel` was called since the job started (jobs poll it)."""
        return self.cancel_event.is_set()

    def cancel(self):
        """Ask the running job to stop (it polls :attr:`cancel_event`)."""
        self.cancel_event.set()

    def wait(self, timeout=None):
        """Wait for the job thread to end (tests); returns whether it has ended."""
        if self.thread is None:
            return True
        self.thread.join(timeout)
        return not self.thread.is_alive()

    def post(self, fn):
        """Run ``fn()`` on the widgets' thread: via the captured loop, else right here."""
        loop = self._loop
        if loop is not None and loop.is_running() and threading.current_thread() is not self._owner:
            loop.call_soon_threadsafe(fn)
        else:
            fn()
