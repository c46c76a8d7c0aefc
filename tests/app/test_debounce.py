"""The debouncer and its schedulers, driven by hand: the first change of a burst at once,
later ones merged into one call per window."""
from diskexplorer.app.state.debounce import Debouncer, ImmediateScheduler, ManualScheduler
from diskexplorer.app.state.explorer_state import tiers_for


def _by_hand(delay):
    """A debouncer on a ManualScheduler, with the list of the name sets it calls back with."""
    sched, seen = ManualScheduler(), []
    return sched, seen, Debouncer(seen.append, delay=delay, scheduler=sched)


def test_changes_of_one_turn_make_one_immediate_call():
    sched, seen, d = _by_hand(0.05)
    for k in range(10):   # one message's changes: no time passes between them
        d.trigger("scene" if k % 2 else "pins")
    assert seen == [] and d.pending       # not inside the message's own handler...
    sched.advance(0.0)                    # ...but at the loop's next turn, without waiting
    assert seen == [{"scene", "pins"}] and d.calls == 1 and not d.pending


def test_first_change_after_quiet_is_not_delayed():
    sched, seen, d = _by_hand(0.04)
    d.trigger("scene")
    sched.advance(0.0)
    sched.advance(1.0)                    # quiet for longer than the window
    d.trigger("scene")
    sched.advance(0.0)
    assert d.calls == 2 and not d.pending


def test_changes_within_the_window_merge_into_one_call_at_its_end():
    sched, seen, d = _by_hand(0.05)
    d.trigger("scene")
    sched.advance(0.0)
    assert seen == [{"scene"}]
    for name in ("pins", "scene", "log_vis2"):   # 10, 20, 30 ms after the call
        sched.advance(0.01)
        d.trigger(name)
    assert d.calls == 1 and d.pending
    sched.advance(0.0199)                 # 49.9 ms after the call: still waiting
    assert d.calls == 1
    sched.advance(0.0002)
    assert seen == [{"scene"}, {"pins", "scene", "log_vis2"}] and not d.pending


def test_long_drag_redraws_once_per_window():
    sched = ManualScheduler()
    d = Debouncer(lambda names: None, delay=0.04, scheduler=sched)
    for k in range(100):  # one event per 4 ms for 0.4 s
        d.trigger("scene")
        sched.advance(0.004)
    sched.flush()
    assert 9 <= d.calls <= 12


def test_window_counts_from_the_end_of_a_slow_call():
    sched = ManualScheduler()

    def slow(names):
        sched.time += 0.1    # the recompute itself took 100 ms

    d = Debouncer(slow, delay=0.04, scheduler=sched)
    d.trigger("scene")
    sched.advance(0.0)
    d.trigger("scene")       # arrived while the slow call ran
    sched.advance(0.039)
    assert d.calls == 1 and d.pending
    sched.advance(0.002)
    assert d.calls == 2


def test_flush_and_immediate():
    seen = []
    d = Debouncer(seen.append, scheduler=ManualScheduler())
    d.trigger("a")
    d.flush()
    assert seen == [{"a"}]
    d2 = Debouncer(seen.append, scheduler=ImmediateScheduler())
    d2.trigger("b")
    assert seen[-1] == {"b"} and d2.calls == 1
    d2.trigger("c")
    assert seen[-1] == {"c"} and d2.calls == 2


def test_tiers():
    assert tiers_for({"log_vis2"}) == {"style"}
    assert tiers_for({"message"}) == set()
    assert tiers_for({"scene", "curve_position_angle"}) == {"model", "curve"}
    assert "data" in tiers_for({"band_filter"})


# --------------------------------------------------------------------------- on a real loop
def test_loop_scheduler_runs_calls_on_the_running_loop_in_time_order():
    import asyncio

    from diskexplorer.app.state.debounce import LoopScheduler

    sched = LoopScheduler()
    ran = []

    def note(name):
        # the call runs on the loop that scheduled it: it reads that loop as the running one
        ran.append((name, sched.now() - t0, asyncio.get_running_loop()))

    async def main():
        nonlocal t0
        loop = asyncio.get_running_loop()
        t0 = sched.now()
        assert abs(t0 - loop.time()) < 0.05   # the loop's own clock
        sched.call_later(0.10, lambda: note("late"))
        sched.call_later(0.02, lambda: note("early"))
        sched.call_later(0.05, lambda: note("cancelled")).cancel()
        await asyncio.sleep(0.4)
        return loop, sched.now() - t0

    t0 = None
    loop, slept = asyncio.run(main())
    assert [name for name, _, _ in ran] == ["early", "late"]   # time order; the cancelled one never ran
    assert all(on is loop for _, _, on in ran)
    early, late = (dt for _, dt, _ in ran)
    assert 0.02 <= early < late and late >= 0.10
    assert 0.4 <= slept < 5.0   # seconds (not ms), and never backwards


def test_loop_scheduler_outside_a_loop_calls_at_once():
    from diskexplorer.app.state.debounce import LoopScheduler

    ran = []
    LoopScheduler().call_later(5.0, lambda: ran.append(1))
    assert ran == [1]


def test_a_burst_on_a_real_loop_makes_a_leading_call_and_one_merged_call():
    import asyncio

    from diskexplorer.app.state.debounce import LoopScheduler

    # The Debouncer's contract: the first trigger after a quiet spell is called at the loop's
    # next turn; triggers within ``delay`` of that call are merged into one call ``delay``
    # after its end. The window is wide (0.5 s against a 10 × 5 ms burst) for a noisy machine.
    sched = LoopScheduler()
    calls = []

    async def main():
        deb = Debouncer(lambda names: calls.append((set(names), sched.now())), delay=0.5, scheduler=sched)
        names = [f"n{k}" for k in range(10)]
        deb.trigger(names[0])           # leading: not inside trigger, but at the loop's next turn
        assert calls == [] and deb.pending
        await asyncio.sleep(0)
        await asyncio.sleep(0)
        assert [n for n, _ in calls] == [{"n0"}]
        for name in names[1:]:          # the rest of the burst, within the window
            await asyncio.sleep(0.005)
            deb.trigger(name)
        burst_end = sched.now()
        assert len(calls) == 1 and deb.pending
        await asyncio.sleep(1.5)
        assert not deb.pending
        return burst_end

    burst_end = asyncio.run(main())
    assert [n for n, _ in calls] == [{"n0"}, {f"n{k}" for k in range(1, 10)}]   # 10 triggers, 2 calls
    (_, leading), (_, merged) = calls
    assert merged - leading >= 0.49 and merged >= burst_end   # a window after the leading call
