"""The path box that saves a document, asking before an existing file is replaced.

Shared by every page that writes a file (the starting point, the session): one flow for
resolving the typed name in the working folder, refusing targets inside the package (and,
in a served page, outside the working folder), asking before an overwrite, and saying
where the file went or why it did not.
"""
from __future__ import annotations

import html

import ipywidgets as w

from ...errors import DiskExplorerError
from ..state.workdir import readable_path, writable_path

__all__ = ["SaveBox", "OverwriteGuard"]


class OverwriteGuard(w.HBox):
    """A hidden row that asks before a save replaces an existing file.

    Parameters
    ----------
    on_overwrite : callable
        Called without arguments when the user confirms ("overwrite").

    Notes
    -----
    A save calls :meth:`ask` when its target exists and returns; the file is written only
    from ``on_overwrite``. "keep the file" hides the row and writes nothing.
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


class SaveBox(w.VBox):
    """A file name, a save button, other actions on the same file, and the overwrite question.

    Parameters
    ----------
    state : ExplorerState
        Its working folder resolves the typed name; its message area hears the outcome.
    name : str
        The file name offered at first.
    what : str
        What is saved, for messages ("session", "starting point").
    write : callable
        ``write(path, overwrite)`` writes the document to ``path`` (a :class:`~pathlib.Path`
        in the working folder) and returns the message to show. It raises
        :class:`FileExistsError` when the file exists and ``overwrite`` is False, and
        :class:`~diskexplorer.errors.DiskExplorerError` or :class:`OSError` when it cannot write.
    actions : sequence of ipywidgets.Button
        Shown after the save button (import, restore).
    width : str
        Width of the name box (CSS).

    Attributes
    ----------
    path : ipywidgets.Text
    save_button : ipywidgets.Button
    confirm : OverwriteGuard
    """

    def __init__(self, state, name, what, write, actions=(), width="240px"):
        self.state = state
        self.what = what
        self._write = write
        self.path = w.Text(value=name, layout={"width": width})
        self.save_button = w.Button(description="save", layout={"width": "64px"})
        self.save_button.on_click(lambda b: self.save())
        self.confirm = OverwriteGuard(lambda: self.save(overwrite=True))
        super().__init__([w.HBox([self.path, self.save_button, *actions]), self.confirm])

    def target(self):
        """The typed name resolved in the working folder (for reading: import, restore).

        Raises
        ------
        DiskExplorerError
            A confined explorer's path outside its folders.
        """
        return readable_path(self.state, self.path.value)

    def save(self, overwrite=False):
        """Write the document; an existing file is replaced only with ``overwrite``.

        Returns
        -------
        bool
            Whether the file was written. If it exists, the overwrite question is shown
            and nothing is written.
        """
        try:
            target = writable_path(self.state, self.path.value)
            text = self._write(target, overwrite)
        except FileExistsError:
            self.confirm.ask(str(target))
            return False
        except (OSError, DiskExplorerError) as exc:
            self.state.show_message(f"{self.what} not saved: {exc}")
            return False
        self.confirm.hide()
        self.state.show_message(text)
        return True
