"""Headless tests of the χ² grid panel: a serial scan fills the map, a click moves the model."""
import time

import numpy as np
import pytest

from diskexplorer.app.pages.scan_page import cell_edges, default_range
from diskexplorer.fitting import Comparison
from explorer_helpers import make_app, settle

SCAN_PAGE = 4


def _app(material, jobs="sync", warm=False):
    app = make_app(material, jobs=jobs)
    # The live app (jobs="thread") warms the local cluster when the page opens: only the
    # tests of that warming do.
    app.scan_page.warm = warm
    app.figure_tabs.selected_index = SCAN_PAGE
    return app



def _set_axes(panel, n=3):
    panel.x_axis.path.value = "rings.0.r_in"
    panel.y_axis.path.value = "rings.0.t_in"
    panel.x_axis.lo.value, panel.x_axis.hi.value, panel.x_axis.n.value, panel.x_axis.log.value = 0.3, 0.42, n, True
    panel.y_axis.lo.value, panel.y_axis.hi.value, panel.y_axis.n.value = 1400.0, 1600.0, n
    panel.scheduler.value = "serial"


def test_building_the_app_starts_no_cluster(material):
    app = _app(material)
    assert app.scan_page._clients == {}
    assert app.scan_page.scheduler.value == "local"
    assert "rings.0.r_in" in app.scan_page.x_axis.path.options


def test_cell_edges_and_default_range():
    assert cell_edges([1.0, 2.0, 3.0]) == pytest.approx([0.5, 1.5, 2.5, 3.5])
    assert cell_edges([1.0, 10.0, 100.0], log=True) == pytest.approx([10 ** -0.5, 10 ** 0.5, 10 ** 1.5, 10 ** 2.5])
    lo, hi, log = default_range("rings.0.r_in", 0.4)
    assert log and lo == pytest.approx(0.4 / 1.2) and hi == pytest.approx(0.48)


def test_serial_scan_fills_the_map_and_a_click_sets_the_scene(material):
    app = _app(material)
    panel = app.scan_page
    _set_axes(panel)
    scene = app.state.scene
    assert panel.scan_now()
    assert app.state.scene is scene  # a scan never moves the model
    assert panel.draws == 3 and len(panel.datasets) == 1  # one chunk per row: redrawn as rows arrived
    assert np.all(np.isfinite(panel.chi2)) and panel.chi2.shape == (3, 3)
    assert np.asarray(panel.heat.color).shape == (3, 3) and panel.heat.visible
    assert np.asarray(panel.heat.column).size == 4 and np.asarray(panel.heat.row).size == 4
    assert panel.best.visible and "complete: 9 of 9" in panel.progress.value
    # χ² of a grid point equals the core's comparison at that point
    from diskexplorer.fitting.paths import set_values

    _, ys, _, xs = panel.axes
    ref = app.view.comparison.compare(set_values(scene, {"rings.0.t_in": ys[1], "rings.0.r_in": xs[2]})).total
    assert panel.chi2[1, 2] == pytest.approx(ref, rel=1e-12)
    i, j = np.unravel_index(np.argmin(panel.chi2), panel.chi2.shape)
    assert panel.best.x[0] == pytest.approx(xs[j]) and panel.best.y[0] == pytest.approx(ys[i])
    assert "2.30" in panel.levels.value and "6.18" in panel.levels.value
    # clicking a cell: the message the browser sends with interactions={"click": "select"}
    panel.heat.set_state({"selected": [[2, 0]]})
    assert app.state.scene.rings[0].t_in == pytest.approx(ys[2])
    assert app.state.scene.rings[0].r_in == pytest.approx(xs[0])
    assert app.ring_deck.cards[0].controls["t_in"].value == pytest.approx(ys[2])
    assert "grid point" in app.message_area.value
    settle(app)
    assert app.frame.result.total == pytest.approx(panel.chi2[2, 0], rel=1e-12)


def test_ranges_around_the_model(material):
    app = _app(material)
    panel = app.scan_page
    panel.x_axis.path.value = "rings.0.t_in"
    app.ring_deck.cards[0].controls["t_in"].number.value = 1200.0
    panel.centre_button.click()
    assert panel.x_axis.lo.value < 1200.0 < panel.x_axis.hi.value
    assert (panel.x_axis.lo.value + panel.x_axis.hi.value) / 2 == pytest.approx(1200.0)


def test_bad_input_is_refused_with_a_message(material):
    app = _app(material)
    panel = app.scan_page
    _set_axes(panel)
    panel.y_axis.path.value = "rings.0.r_in"
    assert not panel.scan_now() and "two different" in app.message_area.value
    _set_axes(panel)
    panel.x_axis.lo.value = -1.0
    panel.x_axis.log.value = False
    assert not panel.scan_now() and "rings.0.r_in" in app.message_area.value
    _set_axes(panel)
    panel.scheduler.value = "somewhere"
    assert not panel.scan_now() and "tcp://" in app.message_area.value
    assert panel._clients == {}


class _SlowComparison(Comparison):
    """The real comparison, 15 ms slower per model."""

    def compare(self, scene):
        time.sleep(0.015)
        return super().compare(scene)


def test_cancel_keeps_the_rows_done(material):
    app = _app(material, jobs="thread")
    panel = app.scan_page
    view = app.view
    slow = _SlowComparison(view.observations, view.photometry, view.spectrum)
    panel._comparison = lambda: slow
    _set_axes(panel, n=8)
    panel.start_button.click()
    t0 = time.time()
    while panel.draws < 2 and time.time() - t0 < 15:
        time.sleep(0.01)
    panel.cancel_button.click()
    assert panel.runner.wait(15)
    done_rows = int(np.sum(np.all(np.isfinite(panel.chi2), axis=1)))
    assert 2 <= done_rows < 8 and np.isnan(panel.chi2[-1]).all()
    assert panel.progress.value.startswith("cancelled")
    assert not panel.start_button.disabled


@pytest.mark.slow
def test_local_scans_share_one_warm_cluster(material):
    # "local" is the process's shared cluster: started by the first scan, reused by the next
    # one (of this panel or another app's) and equal to the serial scan.
    from diskexplorer.fitting.scan import close_local_cluster, local_client

    close_local_cluster()
    try:
        app = _app(material)
        panel = app.scan_page
        _set_axes(panel)
        panel.scan_now()
        serial = panel.chi2.copy()
        panel.scheduler.value = "local"
        assert panel.scan_now()
        first = local_client(start=False)
        assert first is not None and "complete: 9 of 9" in panel.progress.value
        np.testing.assert_allclose(panel.chi2, serial, rtol=1e-12)
        other = _app(material).scan_page
        _set_axes(other)
        other.scheduler.value = "local"
        assert other.scan_now()
        assert local_client(start=False) is first
        np.testing.assert_allclose(other.chi2, serial, rtol=1e-12)
        assert panel._clients == {} and other._clients == {}
    finally:
        close_local_cluster()
    assert local_client(start=False) is None


@pytest.mark.slow
def test_opening_the_page_warms_the_cluster_every_scan_reuses(material):
    from diskexplorer.fitting.scan import close_local_cluster, local_client

    close_local_cluster()
    try:
        app = _app(material, warm=True)          # the page is opened here
        panel = app.scan_page
        assert panel._warmer is not None and panel._warmer.wait(120)
        warm = local_client(start=False)
        assert warm is not None and panel.progress.value.startswith("local dask cluster ready")
        assert not panel.on_shown()               # once only
        _set_axes(panel)
        panel.scheduler.value = "local"
        assert panel.scan_now() and "complete: 9 of 9" in panel.progress.value
        assert local_client(start=False) is warm
    finally:
        close_local_cluster()


_KERNEL_CODE = """
import os, time
from diskexplorer.app import explore
from diskexplorer.fitting.scan import local_client
app = explore()
app.figure_tabs.selected_index = app.PAGES["scan"]
t0 = time.time()
while local_client(start=False) is None and time.time() - t0 < 120:
    time.sleep(0.2)
print("WORKERS", sorted(local_client(start=False).run(os.getpid).values()))
"""


@pytest.mark.slow
@pytest.mark.parametrize("how", ["shutdown", "kill"])
def test_the_warm_cluster_ends_with_the_kernel(how):
    # A real kernel opens the scan page (the live app's threads warm the cluster), then is
    # shut down as voila does when a page closes, or killed: no worker process outlives it.
    import psutil
    from _processes import alive
    from jupyter_client.manager import start_new_kernel

    km, kc = start_new_kernel(kernel_name="python3")
    try:
        out = []
        reply = kc.execute_interactive(_KERNEL_CODE, timeout=240,
                                       output_hook=lambda m: out.append(m["content"].get("text", "")))
        assert reply["content"]["status"] == "ok", reply["content"]
        line = next(x for x in "".join(out).splitlines() if x.startswith("WORKERS"))
        workers = [psutil.Process(int(p)) for p in line.split("[")[1].rstrip("]").split(",")]
        assert len(workers) >= 1 and alive(workers) == workers
    finally:
        kc.stop_channels()
        if how == "shutdown":
            km.shutdown_kernel(now=False)
        else:
            km.shutdown_kernel(now=True)   # killed: no shutdown request, no atexit hooks
    end = time.time() + 30
    while alive(workers) and time.time() < end:
        time.sleep(0.25)
    assert not alive(workers), [p.pid for p in alive(workers)]
