"""What one slider step sends to the browser: the marks that must change, and little else.

Every widget message costs the page a parse and, for marks, a redraw; a step that floods
the page with updates of unchanged widgets makes the sliders lag. The count is measured
headlessly by wrapping ipywidgets' single send path (``Widget._send``).
"""
import bqplot as bq
import ipywidgets as w
from ipywidgets.widgets import widget as widget_module

from diskexplorer.sample import demo_scene
from explorer_helpers import make_app, settle

#: Messages of one T_in step on the synthetic material with the demo scene, measured
#: 2026-12-04: 10, one per widget — the slider's echo of the page's value, its number box,
#: seven model lines of the first page's figures (the V² curve first) and the χ² table.
#: The budget leaves room for a figure or two more, not for a flood.
BUDGET = 16


class _Recorder:
    def __init__(self, monkeypatch):
        self.sent = []
        original = w.Widget._send

        def send(widget, msg, buffers=None):
            self.sent.append((widget, msg.get("method"), tuple(sorted((msg.get("state") or {}).keys()))))
            return original(widget, msg, buffers)

        monkeypatch.setattr(w.Widget, "_send", send)

    def widgets(self):
        return [wid for wid, _, _ in self.sent]


def _widgets_in(value):
    if isinstance(value, w.Widget):
        return [value]
    if isinstance(value, (list, tuple)):
        return [x for item in value for x in _widgets_in(item)]
    if isinstance(value, dict):
        return [x for item in value.values() for x in _widgets_in(item)]
    return []


def _on_the_page(app):
    """The model ids of every widget the displayed app holds: children, marks, scales, axes...

    Follows every synced trait that refers to widgets, so the pages not yet built hold only
    their empty ``LazyPage``.
    """
    seen, stack = {}, [app]
    while stack:
        wid = stack.pop()
        if wid.model_id not in seen:
            seen[wid.model_id] = wid
            stack.extend(x for key in wid.keys for x in _widgets_in(getattr(wid, key)))
    return set(seen)


def _step(app, recorder):
    """One arrow-key step of the inner ring's T_in as the page sends it, recomputed."""
    control = app.ring_deck.cards[0].controls["t_in"]
    before_widgets = set(widget_module._instances)
    recorder.sent.clear()
    control.slider.set_state({"value": control.slider.value + control.step})
    settle(app)
    return list(recorder.sent), set(widget_module._instances) - before_widgets


def test_a_slider_step_sends_its_marks_and_stays_within_budget(material, monkeypatch, capsys):
    app = make_app(material, scene=demo_scene())
    settle(app)
    recorder = _Recorder(monkeypatch)
    sent, created = _step(app, recorder)
    with capsys.disabled():
        print(f"\none T_in step: {len(sent)} widget messages "
              f"({len({id(wid) for wid, _, _ in sent})} widgets), {len(created)} widgets created")
    assert not created, "a slider step must not create widgets"
    widgets = [wid for wid, _, _ in sent]
    vis2 = app.figures["vis2"]
    assert vis2.curve in widgets, "the V² model curve was not redrawn"
    lines = [(wid, keys) for wid, _, keys in sent if isinstance(wid, bq.Lines)]
    assert lines[0] == (vis2.curve, ("y",)), "the V² curve's new values go first"
    assert app.chi2.widget in widgets, "the χ² table was not updated"
    assert len(sent) <= BUDGET, [(type(wid).__name__, keys) for wid, _, keys in sent]
    # Figures of pages never opened do not exist, and every message goes to a widget of the
    # displayed page (hidden pages are empty LazyPages, so none of theirs).
    assert not any(app.figures.built(name) for name in ("sed", "spectrum", "image", "profiles"))
    shown = _on_the_page(app)
    assert [type(wid).__name__ for wid in widgets if wid.model_id not in shown] == []
    # Every message carries a change: no update with an empty state.
    assert all(keys for _, method, keys in sent if method == "update")
    # A second identical step sends no more than the first.
    again, _ = _step(app, recorder)
    with capsys.disabled():
        print(f"the same step again: {len(again)} widget messages")
    assert len(again) <= len(sent)


def test_a_style_toggle_resends_no_model_data(material, monkeypatch):
    # A log axis swaps the figure's scale: marks are told their new scales, but no mark's
    # data and no χ² are sent again (the style tier recomputes nothing).
    app = make_app(material)
    settle(app)
    recorder = _Recorder(monkeypatch)
    app.toggles["log_vis2"].value = not app.toggles["log_vis2"].value
    settle(app)
    assert recorder.sent, "the toggle changed nothing on the page"
    assert app.chi2.widget not in recorder.widgets()
    data_keys = {"x", "y", "colors", "labels"}
    resent = [(type(wid).__name__, keys) for wid, _, keys in recorder.sent if set(keys) & data_keys]
    assert not resent, resent
