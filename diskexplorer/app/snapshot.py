"""A static picture of the explorer for the saved notebook.

A widget lives in its kernel: a notebook reopened without it can show only "Error
displaying widget: model not found" where the explorer was. So beside its widget view,
:meth:`Explorer._ipython_display_` writes a second output, an HTML picture of the model of
the moment (V² with the model curve, the SED, the χ² table, drawn with matplotlib), which
the explorer keeps up to date a few seconds after each change has settled
(:class:`Snapshot`) or at once on :meth:`Explorer.snapshot`. While the live explorer is in
the page its style sheet hides the picture (``_HIDE_CSS``, in the explorer's own CSS), so
the picture shows only where the live view is gone: a reopened notebook, an exported page.
"""
from __future__ import annotations

import base64
import html
import io
import time

import numpy as np

__all__ = ["Snapshot", "snapshot_png", "snapshot_html", "SNAPSHOT_CSS", "SNAPSHOT_DELAY"]

#: Seconds of quiet after the last recompute before the picture is redrawn: drawing takes
#: a few hundred ms of the kernel, which must not fall between the steps of a slider.
SNAPSHOT_DELAY = 3.0

#: In the live explorer's CSS: the picture stays hidden while the explorer it shows is live
#: in the same output area (JupyterLab, Notebook 7 and voila draw outputs in one).
SNAPSHOT_CSS = ".jp-OutputArea:has(.dx-root) .dx-snapshot { display: none; }"

_INK = "#1d2430"
_COMPONENTS = {"star": "#E69F00", "extended": "#999999", "total": "#000000", "data": "#D55E00"}
_RINGS = ("#0072B2", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442")


def snapshot_png(app, dpi=80):
    """PNG bytes of ``app``'s V² figure, SED and χ² table as they are now.

    Drawn from the explorer's last frame and data view (nothing is recomputed); matplotlib
    is imported here only.
    """
    import matplotlib
    from matplotlib.figure import Figure

    # The object API with the Agg canvas: no pyplot state, no interactive backend.
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    del matplotlib
    fig = Figure(figsize=(11.0, 3.6), layout="constrained")
    FigureCanvasAgg(fig)
    ax_v, ax_s, ax_t = fig.subplots(1, 3, width_ratios=(1.2, 1.0, 0.75))
    frame, view = app.frame, app.view
    _draw_vis2(ax_v, frame, view)
    _draw_sed(ax_s, frame, view)
    _draw_table(ax_t, frame)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def _draw_vis2(ax, frame, view):
    vis2 = getattr(view, "vis2", None) if view is not None else None
    if vis2 is not None and vis2["freq"].size:
        n = vis2["freq"].size
        take = slice(None, None, max(1, n // 3000))
        ax.scatter(vis2["freq"][take], vis2["value"][take], s=3, c=vis2["wavelength"][take], cmap="plasma",
                   alpha=0.6, linewidths=0)
    if frame is not None and frame.curve is not None:
        freq, curves, wls, pa = frame.curve
        for k, (row, wl) in enumerate(zip(np.atleast_2d(curves), np.atleast_1d(wls))):
            ax.plot(freq, row, color=_RINGS[k % len(_RINGS)], lw=1.4, label=f"{wl:.2f} µm, PA {pa:.0f}°")
        ax.legend(fontsize=7, loc="upper right")
    ax.set_xlabel("spatial frequency B/λ [Mλ]")
    ax.set_ylabel("V²")
    ax.set_ylim(0.0, 1.1)
    ax.set_title("squared visibility", fontsize=10)


def _draw_sed(ax, frame, view):
    from .state.model_views import SED_WAVELENGTHS

    if frame is not None and frame.sed:
        k = 0
        for name, flux in frame.sed.items():
            flux = np.where(np.asarray(flux, float) > 0, flux, np.nan)
            colour = _COMPONENTS.get(name)
            if colour is None:
                colour, k = _RINGS[k % len(_RINGS)], k + 1
            ax.plot(SED_WAVELENGTHS, flux, color=colour, lw=1.6 if name == "total" else 1.0, label=name)
        total = np.asarray(frame.sed.get("total", []), float)
        if np.isfinite(total).any() and np.nanmax(total) > 0:
            peak = np.nanmax(total)
            ax.set_ylim(peak * 1e-4, peak * 3.0)
    ph = getattr(view, "photometry", None) if view is not None else None
    if ph is not None and ph["wavelength"].size:
        ax.errorbar(ph["wavelength"].values, ph["flux"].values, yerr=np.nan_to_num(ph["flux_err"].values),
                    fmt="D", ms=4, color=_COMPONENTS["data"], label="photometry")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("λ [µm]")
    ax.set_ylabel("F_ν [Jy]")
    ax.set_title("SED", fontsize=10)
    ax.legend(fontsize=7, loc="lower left")


def _draw_table(ax, frame):
    from .figures.chi2_table import summary_rows

    ax.axis("off")
    result = frame.result if frame is not None else None
    if result is None:
        ax.text(0.0, 1.0, "no data loaded", va="top", fontsize=9, color=_INK)
        return
    lines = [f"{'data':<20}{'N':>7}{'χ²/N':>8}"]
    for label, n, _c, red, _w in summary_rows(result):
        lines.append(f"{label[:19]:<20}{n:>7,}{red:>8.3g}")
    ax.text(0.0, 1.0, "\n".join(lines), va="top", family="monospace", fontsize=8.5, color=_INK)
    ax.set_title("χ²", fontsize=10)


def snapshot_html(png, when=None):
    """The saved notebook's picture: ``png`` with a line saying what it is and how to go live."""
    when = time.strftime("%Y-%m-%d %H:%M", time.localtime(when)) if when else ""
    data = base64.b64encode(png).decode("ascii") if png else ""
    img = (f"<img alt='the explorer as it was: V², SED and χ²' src='data:image/png;base64,{data}' "
           "style='max-width:100%'>") if png else ""
    note = ("diskexplorer: a picture of the explorer as it was"
            + (f" ({html.escape(when)})" if when else "")
            + ". Run the cell to bring the live explorer back.")
    return f"<div class='dx-snapshot'><div style='font-size:12px;color:#6b7280'>{note}</div>{img}</div>"


class Snapshot:
    """The picture output of one displayed explorer, redrawn after its changes settle.

    Parameters
    ----------
    app : Explorer
    scheduler : object with ``call_later(delay, fn)`` and ``now()``
        The explorer's debounce scheduler (the kernel's loop, or a manual one in tests).
    """

    def __init__(self, app, scheduler, delay=SNAPSHOT_DELAY):
        self.app, self.scheduler, self.delay = app, scheduler, delay
        self.handle = None
        self._due = None
        self.drawn = 0

    def show(self):
        """Write the picture's output (a placeholder until the first drawing)."""
        from IPython.display import HTML, display

        self.handle = display(HTML(snapshot_html(b"")), display_id=True)
        self.changed()

    def changed(self):
        """The explorer changed: redraw once it has been quiet for ``delay`` s."""
        if self.handle is None:
            return
        first = self._due is None
        self._due = self.scheduler.now() + self.delay
        if first:
            self.scheduler.call_later(self.delay, self._maybe_draw)

    def _maybe_draw(self):
        wait = self._due - self.scheduler.now()
        if wait > 1e-3:
            self.scheduler.call_later(wait, self._maybe_draw)
            return
        self._due = None
        self.draw()

    def draw(self):
        """Redraw the picture now."""
        from IPython.display import HTML

        if self.handle is None:
            return
        self.handle.update(HTML(snapshot_html(snapshot_png(self.app), time.time())))
        self.drawn += 1
