"""The picture a saved notebook keeps of the explorer: drawn from the live frame, written
as a second output beside the widget view, redrawn once the changes have settled."""
from explorer_helpers import build_app, settle

from diskexplorer.app.snapshot import SNAPSHOT_CSS, Snapshot, snapshot_html, snapshot_png


class _Handle:
    def __init__(self):
        self.updates = []

    def update(self, obj):
        self.updates.append(obj.data)


def test_picture_is_a_png_of_the_model_in_a_note():
    app = build_app()
    settle(app)
    png = snapshot_png(app)
    assert png.startswith(b"\x89PNG") and len(png) > 10_000
    page = snapshot_html(png, 0.0)
    assert "class='dx-snapshot'" in page and "data:image/png;base64," in page
    assert "Run the cell to bring the live explorer back" in page
    # Hidden where the live explorer is in the same output area.
    assert ".dx-snapshot" in SNAPSHOT_CSS and ":has(.dx-root)" in SNAPSHOT_CSS


def test_picture_is_redrawn_once_after_changes_settle():
    app = build_app()
    settle(app)
    shot = Snapshot(app, app.debouncer.scheduler, delay=3.0)
    shot.handle = _Handle()
    app._snapshot = shot
    scheduler = app.debouncer.scheduler
    shot.changed()
    for _ in range(3):                      # a change every second: no drawing meanwhile
        scheduler.advance(1.0)
        box = app.ring_deck.cards[0].controls["t_in"].number
        box.value = box.value + 10
        settle(app)
    assert shot.drawn == 0
    scheduler.advance(3.5)
    assert shot.drawn == 1 and "data:image/png" in shot.handle.updates[-1]
    app.snapshot()                          # asked for: at once
    assert shot.drawn == 2


def test_display_writes_widget_then_picture():
    from IPython.core.interactiveshell import InteractiveShell
    from IPython.utils.capture import capture_output

    InteractiveShell.instance()
    app = build_app()
    settle(app)
    with capture_output() as out:
        app._ipython_display_()
    kinds = [sorted(o.data) for o in out.outputs]
    assert "application/vnd.jupyter.widget-view+json" in kinds[0]
    assert "dx-snapshot" in out.outputs[1].data["text/html"]
    served = build_app()
    served.show_snapshot = False
    with capture_output() as out:
        served._ipython_display_()
    assert len(out.outputs) == 1
