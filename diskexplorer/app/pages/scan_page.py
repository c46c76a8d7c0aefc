"""The χ² grid panel: scan two parameters, watch the Δχ² map fill in, click a cell to go there.

The scan runs one :func:`~diskexplorer.fitting.scan_grid` over the whole grid in a
background thread; each finished chunk of grid points is drawn at once (``on_chunk``), so
the map fills in while the scan goes on, and a cancel stops it after the chunks in flight.
In the kernel's process (``serial``) a chunk is one row. Scheduler: ``local`` is the
process's shared dask cluster on 127.0.0.1 (:func:`~diskexplorer.fitting.scan.local_client`),
started by the first scan (never when the app is built), reused by every later scan of the
session and closed with the kernel; ``serial`` evaluates in the kernel's process; a
``tcp://host:port`` address connects to a running scheduler (kept for later scans).
"""
from __future__ import annotations

import html

import bqplot as bq
import ipywidgets as w
import numpy as np
import traitlets as t

from ...errors import DiskExplorerError
from ...fitting.paths import get_value, is_fraction_path, parameter_paths, spec_for
from ..state.jobs import JobRunner
from .job_buttons import JobButtons, comparison_to_judge
from ..controls.param_control import unit_text
from ..figures.base import EMPTY, assign, axis, new_figure
from ..palette import DELTA_CHI2_SCHEME, INK, MUTED, OKABE_ITO

__all__ = ["ScanPage", "cell_edges", "default_range", "LEVEL_COLOURS"]

#: Colours of the 1σ, 2σ, 3σ contours (Okabe–Ito; readable on the dark-to-pale map).
LEVEL_COLOURS = (OKABE_ITO["sky_blue"], OKABE_ITO["bluish_green"], OKABE_ITO["reddish_purple"])
_LEVELS = (0.6827, 0.9545, 0.9973)
_LEVEL_NAMES = ("1σ", "2σ", "3σ")


def cell_edges(values, log=False):
    """Edges of the cells centred on grid ``values`` (n + 1 of them), in value units.

    Midpoints between neighbours (geometric midpoints on a log axis), extended by half a
    step at both ends, so each grid point sits in the middle of its cell.
    """
    v = np.asarray(values, float)
    if v.size == 1:
        return np.array([v[0] * 0.9, v[0] * 1.1]) if log else np.array([v[0] - 0.5, v[0] + 0.5])
    t = np.log10(v) if log else v
    mid = 0.5 * (t[1:] + t[:-1])
    edges = np.concatenate([[t[0] - (mid[0] - t[0])], mid, [t[-1] + (t[-1] - mid[-1])]])
    return 10.0 ** edges if log else edges


def default_range(path, value):
    """A sensible scan range (lo, hi, log) around ``value`` of parameter ``path``.

    Log-scaled parameters: value/1.2 … value×1.2; others: ±5 % of the declared slider
    range around the value (narrow: good data make deep, narrow χ² valleys). Both are clipped to the declared bounds widened to the value.
    """
    spec = spec_for(path)
    blo, bhi = min(spec.bounds[0], value), max(spec.bounds[1], value)
    if spec.scale == "log" and value > 0:
        lo, hi = value / 1.2, value * 1.2
        log = True
    else:
        half = 0.05 * (bhi - blo)
        lo, hi = value - half, value + half
        log = False
    lo, hi = max(lo, blo), min(hi, bhi)
    if not lo < hi:
        lo, hi = blo, bhi
    return float(lo), float(hi), log


class _GridMap(bq.GridHeatMap):
    """A grid heat map whose cell selection survives the trip back from the browser.

    The front end sends ``selected`` as a JSON list of [row, column] pairs; bqplot turns
    that into an object array which it then cannot serialise again (its echo check
    raises before any observer runs), so clicks would be lost. Integers it can send.
    """

    @t.validate("selected")
    def _valid_selected(self, proposal):
        value = proposal["value"]
        if value is None:
            return None
        return np.asarray(np.asarray(value).tolist(), dtype=np.int64).reshape(-1, 2)


class _AxisBox:
    """Path, range, number of points and log toggle of one scan axis."""

    def __init__(self, label, on_path):
        self.label = label
        self.path = w.Dropdown(description=label, layout={"width": "230px"}, style={"description_width": "18px"})
        self.lo = w.FloatText(description="from", layout={"width": "130px"}, style={"description_width": "34px"})
        self.hi = w.FloatText(description="to", layout={"width": "118px"}, style={"description_width": "20px"})
        self.n = w.BoundedIntText(value=9, min=2, max=80, description="n", layout={"width": "88px"},
                                  style={"description_width": "14px"})
        self.log = w.Checkbox(value=False, description="log", indent=False, layout={"width": "52px"})
        self.path.observe(lambda ch: on_path(self), "value")
        self.box = w.HBox([self.path, self.lo, self.hi, self.n, self.log], layout={"align_items": "center"})

    def spec(self):
        """(lo, hi, n, scale) as :func:`~diskexplorer.fitting.axis_values` reads it."""
        return (float(self.lo.value), float(self.hi.value), int(self.n.value), "log" if self.log.value else "linear")


class ScanPage(w.VBox):
    """Two-parameter χ² grid scan with a live Δχ² map.

    Parameters
    ----------
    state : ExplorerState
    comparison : callable
        Returns the :class:`~diskexplorer.fitting.Comparison` of the loaded (filtered) data.
    runner : {"thread", "sync"}
        Background thread (the app) or at once (tests).
    warm : bool, optional
        Start the process's shared local dask cluster in the background when the page is
        first shown (:meth:`on_shown`), so that the first scan does not wait for it.
        Default: with the ``"thread"`` runner (the live app), not in tests.

    Attributes
    ----------
    heat : bqplot.GridHeatMap
        The map: rows are the y parameter, columns the x parameter; colour log₁₀(1 + Δχ²).
    chi2 : ndarray or None
        Total χ² on the grid, (n_y, n_x); NaN where not (yet) evaluated or refused.
    axes : tuple or None
        (y path, y values, x path, x values) of the last scan.
    datasets : list of xarray.Dataset
        The result of the last scan (one dataset once it has ended, partial if cancelled).
    draws : int
        Chunks drawn during the last scan.
    """

    def __init__(self, state, comparison=None, runner="thread", warm=None):
        self.state = state
        self._comparison = comparison or (lambda: None)
        self.runner = JobRunner(runner)
        self.warm = (runner == "thread") if warm is None else bool(warm)
        self._warmer = None
        self.chi2 = None
        self.axes = None
        self.datasets = []
        self.draws = 0
        self._clients = {}  # address -> distributed.Client, kept for later scans
        self._paths = []
        self.x_axis = _AxisBox("x", self._on_path)
        self.y_axis = _AxisBox("y", self._on_path)
        self.scheduler = w.Combobox(value="local", options=["local", "serial"], ensure_option=False,
                                    placeholder="local, serial or tcp://host:port", description="run on",
                                    layout={"width": "260px"}, style={"description_width": "48px"})
        self.scheduler.add_class("dx-scan-scheduler")
        self.job_buttons = JobButtons(state, "start scan", self.start, self.cancel, progress_class="dx-scan-progress")
        self.start_button = self.job_buttons.start_button
        self.cancel_button = self.job_buttons.cancel_button
        self.progress = self.job_buttons.progress
        self.centre_button = w.Button(description="around the model", tooltip="ranges around the current values",
                                      layout={"width": "140px"})
        self.centre_button.on_click(lambda b: self.centre())

        # the map
        self.sx, self.sy = bq.LinearScale(min=0.0, max=1.0), bq.LinearScale(min=0.0, max=1.0)
        self.colour = bq.ColorScale(colors=list(DELTA_CHI2_SCHEME), min=0.0, max=1.0)
        self.heat = _GridMap(row=np.arange(3.0), column=np.arange(3.0), color=np.full((2, 2), np.nan),
                                   scales={"row": self.sy, "column": self.sx, "color": self.colour},
                                   null_color="#ecebe6", stroke="#ffffff", interactions={"click": "select"},
                                   selected_style={"stroke": INK, "stroke-width": "2px"}, visible=False)
        xy = {"x": self.sx, "y": self.sy}
        self.contours = bq.Lines(x=EMPTY, y=EMPTY, scales=xy, stroke_width=1.6)
        self.best = bq.Scatter(x=[0.0], y=[0.0], scales=xy, marker="cross", default_size=90,
                               colors=[OKABE_ITO["orange"]], stroke=INK, visible=False)
        self.ax_x = axis(self.sx, "x")
        self.ax_y = axis(self.sy, "y", "vertical")
        self.figure = new_figure("Δχ² map", [self.heat, self.contours, self.best],
                                 [self.ax_x, self.ax_y,
                                  bq.ColorAxis(scale=self.colour, label="log₁₀(1 + Δχ²)", side="right", label_offset="40px")],
                                 "dx-fig-scan", height="460px")
        self.figure.fig_margin = {"top": 34, "bottom": 52, "left": 70, "right": 96}
        # At most 600 px, narrower in a narrow output (its row wraps: scan-panel CSS).
        self.figure.layout.width, self.figure.layout.flex = "auto", "0 1 600px"
        self.heat.observe(self._on_select, "selected")
        self.levels = w.HTML()
        self.best_html = w.HTML()
        self.levels.add_class("dx-scan-levels")
        # Shown while an axis is a mass fraction: what the scan does to the ring's others.
        self.fraction_note = w.HTML(layout={"display": "none"})
        self.fraction_note.add_class("dx-scan-fraction-note")
        self.sync_paths()

        controls = w.VBox([w.HTML("<div class='dx-section-title'>χ² over a grid of two parameters</div>"),
                           self.x_axis.box, self.y_axis.box,
                           self.fraction_note,
                           w.HBox([self.scheduler, self.centre_button, self.start_button, self.cancel_button],
                                  layout={"align_items": "center"}),
                           self.progress])
        side = w.VBox([w.HTML("<div class='dx-section-title'>best grid point</div>"), self.best_html,
                       w.HTML("<div class='dx-section-title'>Δχ² levels</div>"), self.levels,
                       w.HTML(f"<div style='font-size:11px;color:{MUTED};margin-top:8px'>click a cell to set the "
                              "model to that grid point</div>")],
                      layout={"width": "300px", "padding": "0 0 0 10px"})
        super().__init__([controls, w.HBox([self.figure, side])])
        self.add_class("dx-scan-panel")

    # ------------------------------------------------------------------ axes
    def sync_paths(self):
        """Offer the parameter paths of the current scene (after rings were added or removed)."""
        paths = parameter_paths(self.state.scene)
        if paths == self._paths:
            return
        self._paths = paths
        old = (self.x_axis.path.value, self.y_axis.path.value)
        defaults = [p for p in ("rings.0.r_in", "rings.0.t_in") if p in paths] or paths[:2]
        defaults = (defaults + [p for p in paths if p not in defaults])[:2]
        for box, keep, default in ((self.x_axis, old[0], defaults[0]), (self.y_axis, old[1], defaults[-1])):
            box.path.options = paths
            box.path.value = keep if keep in paths else default
        self._update_fraction_note()

    def centre(self):
        """Reset both ranges to the default ranges around the model's current values."""
        for box in (self.x_axis, self.y_axis):
            self._on_path(box)

    def _update_fraction_note(self):
        fractions = [b.path.value for b in (self.x_axis, self.y_axis) if is_fraction_path(b.path.value)]
        if not fractions:
            self.fraction_note.layout.display = "none"
            return
        self.fraction_note.value = (f"<div style='font-size:11px;color:{MUTED}'>{html.escape(', '.join(fractions))}: "
                                    "the ring's other mass fractions are rescaled proportionally, so that its "
                                    "fractions sum to 1</div>")
        self.fraction_note.layout.display = None

    def _on_path(self, box):
        if hasattr(self, "fraction_note"):
            self._update_fraction_note()
        if box.path.value is None:
            return
        lo, hi, log = default_range(box.path.value, get_value(self.state.scene, box.path.value))
        box.lo.value, box.hi.value, box.log.value = lo, hi, log

    # ------------------------------------------------------------------ running
    def on_shown(self):
        """The page came on screen: start the shared local cluster in the background (once).

        Only with ``warm`` and "local" chosen; the cluster is the process's
        (:func:`~diskexplorer.fitting.scan.local_client`): every scan reuses it and it
        closes when the kernel's process ends. A scan started meanwhile waits for the same
        cluster instead of starting another.

        Returns
        -------
        bool
            Whether a start was begun now.
        """
        if not self.warm or (self.scheduler.value or "").strip() != "local":
            return False
        if self._warmer is not None or self._local_running():
            return False
        self._warmer = JobRunner("thread")
        if not self.runner.busy:
            self.progress.value = "starting a local dask cluster in the background …"

        def work():
            from ...fitting.scan import local_client

            return len(local_client().scheduler_info().get("workers", {}))

        self._warmer.run(work, self._warmed, name="diskexplorer-cluster-start")
        return True

    def _warmed(self, n_workers, error):
        text = "" if error is not None else f"local dask cluster ready ({n_workers} workers)"
        if error is not None:
            self._warmer = None   # a later showing (or the scan itself) tries again
            self.state.show_message(f"local dask cluster did not start: {error}")
        if not self.runner.busy and self.progress.value.startswith("starting a local dask cluster in"):
            self.progress.value = text

    def _client(self, where):
        """A dask client for ``where`` ("local" or an address), kept for later scans."""
        if where == "local":
            from ...fitting.scan import local_client

            return local_client()  # one single-threaded worker per core
        if where not in self._clients:
            # Deferred: dask.distributed costs ~1 s to import; the app must not pay it
            # until a scan is started.
            from distributed import Client

            self._clients[where] = Client(where, timeout="10s")
        return self._clients[where]

    def close(self):
        """Close the clients of scheduler addresses (the shared local cluster closes at exit)."""
        for c in self._clients.values():
            try:
                c.close()
            except Exception:  # noqa: BLE001 - closing is best effort
                pass
        self._clients.clear()

    def start(self, wait=False):
        """Start a scan of the two chosen parameters around the live scene (in the background unless ``wait``).

        Returns
        -------
        bool
            Whether the scan was started (False with a message on bad input).
        """
        from ...fitting.scan import axis_values

        if self.runner.busy:
            return False
        px, py = self.x_axis.path.value, self.y_axis.path.value
        if px == py:
            self.state.show_message("scan: choose two different parameters")
            return False
        comparison = comparison_to_judge(self.state, self._comparison(), "scan: load data first")
        if comparison is None:
            return False
        try:
            xs = axis_values(self.x_axis.spec())
            ys = axis_values(self.y_axis.spec())
            for path, vals in ((px, xs), (py, ys)):
                spec = spec_for(path)
                bad = [v for v in vals if not spec.contains(v)]
                if bad:
                    raise DiskExplorerError(f"{path} = {bad[0]:g} is outside the allowed range {spec.describe_range()}")
        except DiskExplorerError as exc:
            self.state.show_message(f"scan not started: {exc}")
            return False
        where = (self.scheduler.value or "local").strip()
        if not (where in ("local", "serial") or "://" in where):
            self.state.show_message(f"scan: run on {where!r}? expected local, serial or an address such as tcp://127.0.0.1:8786")
            return False
        scene = self.state.scene
        self.axes = (py, ys, px, xs)
        self.chi2 = np.full((ys.size, xs.size), np.nan)
        self.datasets = []
        self.draws = self._done = 0
        self._scene = scene
        self._prepare_map()
        self.job_buttons.started("starting a local dask cluster …" if where == "local" and not self._local_running()
                                 else "scanning …")
        runner = self.runner
        total = xs.size * ys.size

        def on_chunk(start, values):
            runner.post(lambda: self._add_chunk(start, values[:, 0], total))

        def work():
            from ...fitting.scan import scan_grid

            scheduler = "serial" if where == "serial" else self._client(where)
            # In process, one row per chunk: the map fills row by row and a cancel stops
            # between rows. On a cluster scan_grid sizes chunks to keep every worker busy.
            return scan_grid(scene, comparison, [(py, ys), (px, xs)], scheduler=scheduler,
                             chunk_size=xs.size if where == "serial" else None,
                             cancel=runner.cancelled, on_chunk=on_chunk)

        return runner.run(work, self._finish, name="diskexplorer-scan", wait=wait)

    def scan_now(self):
        """Run a scan synchronously, whatever the runner (tests, scripts)."""
        return self.start(wait=True)

    def cancel(self):
        """Stop the running scan after the points in flight; the map keeps what was done."""
        self.runner.cancel()
        self.job_buttons.cancelling()

    @staticmethod
    def _local_running():
        from ...fitting.scan import local_client

        return local_client(start=False) is not None

    def _finish(self, ds, error):
        if not self.job_buttons.ended(error, "scan", progress="scan failed"):
            return
        self.datasets = [ds]
        self._update_map()  # now with χ²/N from the result's point count
        n = int(np.isfinite(self.chi2).sum()) if self.chi2 is not None else 0
        state = "cancelled" if self.runner.cancel_event.is_set() else "complete"
        self.progress.value = f"{state}: {n} of {self.chi2.size} points"

    # ------------------------------------------------------------------ drawing
    def _prepare_map(self):
        py, ys, px, xs = self.axes
        logx, logy = self.x_axis.log.value, self.y_axis.log.value
        with self.figure.hold_sync():
            for key, log, ax in (("x", logx, self.ax_x), ("y", logy, self.ax_y)):
                old = ax.scale
                if isinstance(old, bq.LogScale) != log:
                    new = bq.LogScale() if log else bq.LinearScale()
                    if key == "x":
                        self.sx = new
                    else:
                        self.sy = new
                    ax.scale = new
            self.heat.scales = {"row": self.sy, "column": self.sx, "color": self.colour}
            self.contours.scales = {"x": self.sx, "y": self.sy}
            self.best.scales = {"x": self.sx, "y": self.sy}
            ex, ey = cell_edges(xs, logx), cell_edges(ys, logy)
            assign(self.sx, min=float(ex[0]), max=float(ex[-1]))
            assign(self.sy, min=float(ey[0]), max=float(ey[-1]))
            for ax, path in ((self.ax_x, px), (self.ax_y, py)):
                unit = unit_text(spec_for(path).unit)
                assign(ax, label=f"{path} [{unit}]" if unit else path)
            assign(self.heat, selected=None, visible=False)
            assign(self.contours, x=EMPTY, y=EMPTY)
            assign(self.best, visible=False)
            self.figure.title = f"Δχ² map: {py} against {px}"
        self.levels.value = ""
        self.best_html.value = f"<span style='color:{MUTED}'>scanning …</span>"

    def _add_chunk(self, start, values, total):
        """Draw the χ² of grid points ``start …`` (C order: rows are y) as they arrive."""
        self.chi2.flat[start:start + len(values)] = values
        self.draws += 1
        self._done += len(values)
        self.progress.value = f"{self._done} of {total} points"
        self._update_map()

    def _update_map(self):
        """Draw the rows evaluated so far (the y range stays that of the whole grid)."""
        from ...fitting.scan import confidence_levels

        py, ys, px, xs = self.axes
        chi2 = self.chi2
        filled = np.flatnonzero(np.any(np.isfinite(chi2), axis=1))
        if filled.size == 0:
            return
        top = int(filled.max()) + 1
        part = chi2[:top]
        # bqplot squeezes a one-row colour array to 1-D, which its grid heat map refuses:
        # the map appears from the second row on (the best point is shown from the first).
        draw = top >= 2
        cmin = float(np.nanmin(part))
        delta = part - cmin
        shown = np.log10(1.0 + delta)
        worst = float(np.nanmax(shown)) if np.any(np.isfinite(shown)) else 1.0
        # Unevaluated or refused points (NaN) are drawn as the worst colour: bqplot's grid
        # heat map has no transparent cells for NaN.
        shown = np.where(np.isfinite(shown), shown, worst)
        ey = cell_edges(ys, self.y_axis.log.value)[:top + 1]
        ex = cell_edges(xs, self.x_axis.log.value)
        i, j = np.unravel_index(np.nanargmin(part), part.shape)
        levels = confidence_levels(None, 2, levels=_LEVELS)
        with self.figure.hold_sync():
            assign(self.colour, min=0.0, max=max(worst, 1e-6))
            if draw:
                # colour first: bqplot checks row/column lengths against the colour array's shape
                assign(self.heat, color=shown, row=ey, column=ex, visible=True)
            assign(self.best, x=[float(xs[j])], y=[float(ys[i])], visible=True)
            cx, cy, cols = self._contours(xs, ys[:top], delta, list(levels.values())) if draw else (None,) * 3
            if cx is None:
                assign(self.contours, x=EMPTY, y=EMPTY)
            else:
                assign(self.contours, x=cx, y=cy, colors=cols)
        n_total = self._n_points()
        red = f" (χ²/N {part[i, j] / n_total:.3g})" if n_total else ""
        self.best_html.value = (
            f"<table style='font-size:12px;color:{INK}'>"
            f"<tr><td>{html.escape(px)}</td><td><b>{xs[j]:.5g}</b> {html.escape(unit_text(spec_for(px).unit))}</td></tr>"
            f"<tr><td>{html.escape(py)}</td><td><b>{ys[i]:.5g}</b> {html.escape(unit_text(spec_for(py).unit))}</td></tr>"
            f"<tr><td>χ²</td><td><b>{part[i, j]:,.6g}</b>{red}</td></tr></table>")
        rows = []
        for (level, dchi), name, colour in zip(levels.items(), _LEVEL_NAMES, LEVEL_COLOURS):
            inside = int(np.sum(delta <= dchi))
            rows.append(f"<tr><td><span style='display:inline-block;width:16px;border-top:2px solid {colour};"
                        f"vertical-align:middle'></span> {name}</td><td>{100 * level:.2f} %</td>"
                        f"<td>Δχ² ≤ <b>{dchi:.2f}</b></td><td>{inside} cell{'s' if inside != 1 else ''}</td></tr>")
        self.levels.value = (f"<table style='font-size:12px;color:{INK}'>{''.join(rows)}</table>"
                             f"<div style='font-size:11px;color:{MUTED}'>joint regions of the 2 scanned parameters, "
                             "other parameters fixed; valid for well-scaled Gaussian errors</div>")

    def _n_points(self):
        try:
            return int(self.datasets[0].attrs.get("npoints_total", 0))
        except (IndexError, TypeError, ValueError):
            return 0

    def _contours(self, xs, ys, delta, levels):
        """Contour polylines of Δχ² at ``levels`` (padded 2-D arrays and colours), or Nones."""
        if ys.size < 2 or xs.size < 2:
            return None, None, None
        try:
            import contourpy
        except ImportError:  # contours are a nicety; the levels are still listed
            return None, None, None
        logx, logy = self.x_axis.log.value, self.y_axis.log.value
        gx = np.log10(xs) if logx else xs
        gy = np.log10(ys) if logy else ys
        z = np.where(np.isfinite(delta), delta, np.nanmax(delta) if np.any(np.isfinite(delta)) else 0.0)
        gen = contourpy.contour_generator(gx, gy, z)
        lines, cols = [], []
        for k, level in enumerate(levels):
            for seg in gen.lines(level):
                if len(seg) < 2:
                    continue
                x = 10.0 ** seg[:, 0] if logx else seg[:, 0]
                y = 10.0 ** seg[:, 1] if logy else seg[:, 1]
                lines.append((x, y))
                cols.append(LEVEL_COLOURS[k])
        if not lines:
            return None, None, None
        width = max(len(x) for x, _ in lines)
        cx = np.full((len(lines), width), np.nan)
        cy = np.full((len(lines), width), np.nan)
        for r, (x, y) in enumerate(lines):
            cx[r, :len(x)] = x
            cy[r, :len(y)] = y
        return cx, cy, cols

    # ------------------------------------------------------------------ clicking
    def _on_select(self, change):
        sel = change["new"]
        if sel is None or len(sel) == 0 or self.axes is None:
            return
        row, col = (int(v) for v in np.asarray(sel)[-1])
        self.go_to(row, col)

    def go_to(self, row, col):
        """Set the model's two scanned parameters to grid point (row, col) of the last scan.

        Returns
        -------
        bool
            Whether the scene changed (a refused point leaves a message and no change).
        """
        py, ys, px, xs = self.axes
        if not (0 <= row < ys.size and 0 <= col < xs.size):
            return False
        try:
            self.state.set_parameters({py: float(ys[row]), px: float(xs[col])})
        except DiskExplorerError as exc:
            self.state.show_message(f"grid point not applied: {exc}")
            return False
        chi = self.chi2[row, col]
        self.state.show_message(f"model set to the grid point {px} = {xs[col]:.5g}, {py} = {ys[row]:.5g}"
                       + (f" (χ² {chi:,.6g})" if np.isfinite(chi) else ""))
        return True
