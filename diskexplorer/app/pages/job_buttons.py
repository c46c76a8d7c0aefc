"""The start and cancel buttons and the progress line of a page's background job."""
from __future__ import annotations

import ipywidgets as w

__all__ = ["JobButtons", "comparison_to_judge"]


class JobButtons:
    """Start, cancel and a progress line, kept in step with one background job's lifecycle.

    Parameters
    ----------
    state : ExplorerState
        Its message area hears why a job failed.
    start_text : str
        The start button's words.
    on_start, on_cancel : callable
        Called without arguments when the buttons are clicked.
    start_width : str
        Width of the start button (CSS).
    progress_class : str
        CSS class of the progress line (the browser tests find it by it).

    Notes
    -----
    A page calls :meth:`started` when its job begins and :meth:`ended` from the job's
    ``on_done(result, error)`` (:meth:`~diskexplorer.app.state.jobs.JobRunner.run`).
    """

    def __init__(self, state, start_text, on_start, on_cancel, start_width="100px", progress_class=None):
        self.state = state
        self.start_button = w.Button(description=start_text, button_style="primary", layout={"width": start_width})
        self.cancel_button = w.Button(description="cancel", disabled=True, layout={"width": "80px"})
        self.progress = w.Label("")
        if progress_class:
            self.progress.add_class(progress_class)
        self.start_button.on_click(lambda b: on_start())
        self.cancel_button.on_click(lambda b: on_cancel())

    def started(self, text):
        """The job began: only cancel can be pressed; ``text`` on the progress line."""
        self.start_button.disabled = True
        self.cancel_button.disabled = False
        self.progress.value = text

    def cancelling(self):
        """Cancel was asked for; the job stops at its next check."""
        self.progress.value = "cancelling …"

    def ended(self, error, failure, progress=""):
        """The job ended: start can be pressed again.

        Parameters
        ----------
        error : Exception or None
            What the job raised, if it failed.
        failure : str
            What failed, for the message ("refinement", "scan").
        progress : str
            The progress line after a failure.

        Returns
        -------
        bool
            Whether the job succeeded (the page then shows its result).
        """
        self.start_button.disabled = False
        self.cancel_button.disabled = True
        if error is None:
            return True
        self.progress.value = progress
        self.state.show_message(f"{failure} failed: {error}")
        return False


def comparison_to_judge(state, comparison, refusal):
    """``comparison`` if it holds data to judge against, else None after saying ``refusal``.

    A background job that needs data (refinement, a scan) checks this before it starts.
    """
    if comparison is None or not comparison.kinds:
        state.show_message(refusal)
        return None
    return comparison
