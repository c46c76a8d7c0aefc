"""Background jobs: one lifecycle, its end handed back to the loop that owns the widgets."""
import asyncio
import threading

from diskexplorer.app.state.jobs import JobRunner


def _run_on_a_loop(work):
    """Start ``work`` from a running asyncio loop (as a widget callback would) and wait for its end."""
    seen = {}

    async def main():
        done = asyncio.Event()
        runner = JobRunner("thread")

        def on_done(result, error):
            seen.update(result=result, error=error, thread=threading.current_thread())
            done.set()

        assert runner.run(work, on_done)
        await asyncio.wait_for(done.wait(), timeout=20)
        seen["loop_thread"] = threading.current_thread()

    asyncio.run(main())
    return seen


def test_a_result_reaches_on_done_on_the_loops_thread():
    seen = _run_on_a_loop(lambda: 42)
    assert seen["result"] == 42 and seen["error"] is None
    assert seen["thread"] is seen["loop_thread"]


def test_a_failure_reaches_on_done_after_its_except_block_has_ended():
    # The error is handed over later, on the loop: it must still be the exception raised
    # (Python unbinds the except block's name when the block ends).
    def work():
        raise ValueError("no convergence")

    seen = _run_on_a_loop(work)
    assert seen["result"] is None and isinstance(seen["error"], ValueError)
    assert str(seen["error"]) == "no convergence"


def test_wait_runs_at_once_and_one_job_at_a_time():
    runner = JobRunner("thread")
    out = []
    assert runner.run(lambda: "now", lambda r, e: out.append((r, e)), wait=True)
    assert out == [("now", None)] and runner.mode == "thread"
    gate = threading.Event()
    assert runner.run(gate.wait, lambda r, e: None)
    assert runner.busy and not runner.run(lambda: None, lambda r, e: None)
    gate.set()
    assert runner.wait(10) and not runner.busy
