"""The debouncer and its schedulers, driven by hand."""
from diskexplorer.app.debounce import Debouncer, ImmediateScheduler, ManualScheduler
from diskexplorer.app.state import tiers_for


def test_burst_coalesces_into_one_call_with_all_names():
    sched = ManualScheduler()
    seen = []
    d = Debouncer(seen.append, delay=0.05, scheduler=sched)
    for k in range(10):
        d.trigger("scene" if k % 2 else "pins")
        sched.advance(0.001)
    assert seen == [] and d.pending
    sched.advance(0.05)
    assert seen == [{"scene", "pins"}] and d.calls == 1 and not d.pending


def test_long_drag_redraws_once_per_window():
    sched = ManualScheduler()
    d = Debouncer(lambda names: None, delay=0.04, scheduler=sched)
    for k in range(100):  # one event per 4 ms for 0.4 s
        d.trigger("scene")
        sched.advance(0.004)
    sched.flush()
    assert 9 <= d.calls <= 11


def test_flush_and_immediate():
    seen = []
    d = Debouncer(seen.append, scheduler=ManualScheduler())
    d.trigger("a")
    d.flush()
    assert seen == [{"a"}]
    d2 = Debouncer(seen.append, scheduler=ImmediateScheduler())
    d2.trigger("b")
    assert seen[-1] == {"b"} and d2.calls == 1


def test_tiers():
    assert tiers_for({"log_vis2"}) == {"style"}
    assert tiers_for({"notice"}) == set()
    assert tiers_for({"scene", "curve_position_angle"}) == {"model", "curve"}
    assert "data" in tiers_for({"band_filter"})
