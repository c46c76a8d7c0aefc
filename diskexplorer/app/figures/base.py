"""Shared figure plumbing: assigning only changed traits, axes, error bars, log scales."""
from __future__ import annotations

import bqplot as bq
import numpy as np

from ..palette import INK, MUTED

__all__ = ["tick_segments", "dot_segments", "group_rows", "row_dots", "row_ticks", "drawn_dots", "DOTS_CSS", "assign",
           "same", "new_figure", "error_segments", "swap_scale", "EMPTY", "finite_ends"]

#: An empty float array (marks start empty and are filled by the first update).
EMPTY = np.zeros(0)


def same(old, new):
    """Whether assigning ``new`` over ``old`` would change nothing (arrays: shape, dtype and values)."""
    if isinstance(old, np.ndarray) or isinstance(new, np.ndarray):
        a, b = np.asarray(old), np.asarray(new)
        if a.shape != b.shape or a.dtype != b.dtype:
            return False
        if a.dtype.kind in "fc" and b.dtype.kind in "fc":
            return bool(np.array_equal(a, b, equal_nan=True))
        return bool(np.array_equal(a, b))
    try:
        return bool(old == new)
    except Exception:  # noqa: BLE001 - incomparable values are "different"
        return False


def assign(widget, **traits):
    """Set ``traits`` on ``widget``, only those that differ, in one message.

    Returns
    -------
    bool
        Whether anything was sent.
    """
    if isinstance(widget, bq.Lines) and ("x" in traits or "y" in traits):
        traits.update(zip(("x", "y"), finite_ends(traits.get("x", widget.x), traits.get("y", widget.y))))
    changed = {k: v for k, v in traits.items() if not same(getattr(widget, k), v)}
    if changed:
        # An array trait notifies (and so syncs) only when the values differ
        # (np.array_equal), so an array of equal values but another dtype would stay
        # behind in the page: send those explicitly.
        silent = [k for k, v in changed.items() if isinstance(v, np.ndarray)
                  and isinstance(getattr(widget, k), np.ndarray) and _equal_values(getattr(widget, k), v)]
        with widget.hold_sync():
            for k, v in changed.items():
                setattr(widget, k, v)
        if silent:
            widget.send_state(silent)
    return bool(changed)


def finite_ends(x, y):
    """``x``, ``y`` of a Lines mark redrawn identically, with every row ending on a finite point.

    bqplot places each row's curve label at the row's last point (even when no label is
    shown) and d3 maps NaN to ``undefined``: a row ending in NaN sets
    ``transform="translate(undefined,undefined)"``, which the browser logs as an error at
    every redraw, and a row of NaN only draws ``d="null"``. A NaN break draws the same at a
    row's start as at its end, so trailing non-finite points move to the front. A row with
    no finite point ends on one finite point of another row: a lone point draws no stroke
    with butt caps (the figures whose lines have round caps, ``dx-dots``, never have such
    rows). With no finite point at all the mark is emptied.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    if x.size == 0 or y.size == 0:
        return x, y
    xs, ys = np.atleast_2d(x), np.atleast_2d(y)
    if xs.shape[-1] != ys.shape[-1]:
        return x, y      # not a shape bqplot draws: leave it to bqplot's own checks
    try:
        ok = np.isfinite(xs) & np.isfinite(ys)      # broadcasts a shared x against rows of y
    except ValueError:
        return x, y      # rows of x that do not match those of y: not a shape bqplot draws
    if ok[:, -1].all():
        return x, y
    if not ok.any():
        return EMPTY, EMPTY
    rows = ok.shape[0]
    xs = np.array(np.broadcast_to(xs, ok.shape))
    ys = np.array(np.broadcast_to(ys, ok.shape))
    n = ok.shape[1]
    last = n - 1 - np.argmax(ok[:, ::-1], axis=1)      # the last finite point of each row
    k0, j0 = np.argwhere(ok)[0]
    for k in range(rows):
        if not ok[k].any():
            xs[k], ys[k] = np.nan, np.nan
            xs[k, -1], ys[k, -1] = xs[k0, j0], ys[k0, j0]
        elif last[k] < n - 1:
            xs[k] = np.roll(xs[k], n - 1 - last[k])
            ys[k] = np.roll(ys[k], n - 1 - last[k])
    if x.ndim == 1 and y.ndim == 1:
        return xs[0], ys[0]
    return xs, ys


def _equal_values(a, b):
    try:
        return bool(np.array_equal(a, b))
    except (TypeError, ValueError):
        return False


def new_figure(title, marks, axes, css_class, height="290px", legend=False, dots=False):
    """A bqplot Figure in the explorer's look, tagged with ``css_class`` for tests.

    ``dots``: the figure draws points as :func:`dot_segments` (tagged ``dx-dots``, round caps).
    """
    fig = bq.Figure(marks=marks, axes=axes, title=title, animation_duration=0,
                    fig_margin={"top": 34, "bottom": 48, "left": 62, "right": 18},
                    legend_location="top-right", legend_text={"font-size": "11px"},
                    title_style={"font-size": "13px", "fill": INK, "font-weight": "600"},
                    layout={"width": "100%", "height": height, "min_width": "300px"})
    fig.add_class(css_class)
    if dots:
        fig.add_class("dx-dots")
    return fig


def axis(scale, label, orientation="horizontal", **kw):
    """An axis with the label style of the explorer (labels carry the unit).

    bqplot 0.13 orients an axis by its ``side``: "bottom" for horizontal, "left" (or
    "right") for vertical.
    """
    kw.setdefault("side", "bottom" if orientation == "horizontal" else "left")
    return bq.Axis(scale=scale, label=label, label_color=MUTED,
                   grid_color="#e6e4de", grid_lines="solid", tick_style={"font-size": "10px"},
                   label_offset="36px" if orientation == "horizontal" else "46px", **kw)


def error_segments(x, y, err):
    """One polyline drawing vertical error bars: (x, y−e)–(x, y+e) segments split by NaN.

    One path instead of one line per point keeps thousands of error bars cheap in the
    browser (bqplot breaks a line at NaN).
    """
    x, y, err = (np.asarray(a, float) for a in (x, y, err))
    n = x.size
    xs = np.empty(3 * n)
    ys = np.empty(3 * n)
    xs[0::3] = xs[1::3] = x
    xs[2::3] = np.nan
    ys[0::3] = y - err
    ys[1::3] = y + err
    ys[2::3] = np.nan
    return xs, ys


def tick_segments(x, y, half_width):
    """One polyline of short horizontal ticks centred on (x, y), split by NaN.

    The model at thousands of data points is drawn as one SVG path rather than one circle
    per point: a slider step then redraws one element, not thousands.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    n = x.size
    xs = np.empty(3 * n)
    ys = np.empty(3 * n)
    xs[0::3] = x - half_width
    xs[1::3] = x + half_width
    xs[2::3] = np.nan
    ys[0::3] = ys[1::3] = y
    ys[2::3] = np.nan
    return xs, ys


def dot_segments(x, y):
    """One polyline of dots at (x, y): zero-length segments split by NaN.

    A zero-length segment is stroked as a dot of the line's width when the line caps are
    round (SVG 1.1, 11.4 'stroke-linecap'; the explorer's figures set them, :data:`DOTS_CSS`).
    Thousands of points are then one SVG path instead of one element each: a circle per
    point costs Chromium seconds to draw and restyle (bqplot runs a transition per element).
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    n = x.size
    xs = np.empty(3 * n)
    ys = np.empty(3 * n)
    xs[0::3] = xs[1::3] = x
    xs[2::3] = np.nan
    ys[0::3] = ys[1::3] = y
    ys[2::3] = np.nan
    return xs, ys


def drawn_dots(mark):
    """The points a mark of :func:`dot_segments` rows draws, in row order.

    Returns
    -------
    x, y : ndarray
        The dots' positions (data units); padding and NaN breaks left out.
    colours : list of str
        Each dot's colour (its row's, cycling through the mark's colours as bqplot does).
    """
    x = np.atleast_2d(np.asarray(mark.x, float))
    y = np.atleast_2d(np.asarray(mark.y, float))
    if x.size == 0:
        return np.zeros(0), np.zeros(0), []
    x = np.broadcast_to(x, y.shape) if x.shape != y.shape else x
    xs, ys, cs = [], [], []
    for k in range(y.shape[0]):
        # Each dot is a finite pair between NaN breaks, wherever the row's breaks begin
        # (finite_ends may have moved trailing breaks to the front).
        keep = np.isfinite(x[k]) & np.isfinite(y[k])
        px, py = x[k][keep][0::2], y[k][keep][0::2]
        xs.append(px)
        ys.append(py)
        cs += [mark.colors[k % len(mark.colors)]] * int(px.size)
    return np.concatenate(xs), np.concatenate(ys), cs


#: Round line caps on every line of the figures tagged ``dx-dots``: their data points are
#: zero-length segments (:func:`dot_segments`); ticks and curves gain half a stroke width
#: at each end.
DOTS_CSS = ".dx-dots svg path.line { stroke-linecap: round; }"


def group_rows(group, n_groups, width=None):
    """Arrange points into rows of one group each, at most ``width`` points per row.

    A mark coloured by group draws one row per SVG path (bqplot colours rows). Rows of a
    common width keep the arrays rectangular; splitting large groups over several rows
    keeps the NaN padding (which the page still walks point by point) small.

    Parameters
    ----------
    group : array of int
        Group of each point, 0 … ``n_groups`` − 1.
    width : int, optional
        Points per row (default: the mean number of points per group, at least 1).

    Returns
    -------
    index : ndarray of int, shape (n_rows, width)
        The points of each row (positions in ``group``), −1 for padding.
    row_group : ndarray of int
        The group of each row.
    """
    group = np.asarray(group, int).ravel()
    n = group.size
    n_groups = max(int(n_groups), 1)
    if n == 0:
        return np.full((0, 1), -1), np.zeros(0, int)
    width = int(width) if width else max(1, -(-n // n_groups))
    counts = np.bincount(group, minlength=n_groups)
    rows_per = -(-counts // width)
    order = np.argsort(group, kind="stable")
    rank = np.arange(n) - np.repeat(np.cumsum(counts) - counts, counts)
    row = np.repeat(np.cumsum(rows_per) - rows_per, counts) + rank // width
    index = np.full((int(rows_per.sum()), width), -1)
    index[row, rank % width] = order
    return index, np.repeat(np.arange(n_groups), rows_per)


def _rows(segments, x, y, index, *args):
    """``segments`` of the points ``index`` names, one polyline per row (padding: NaN)."""
    index = np.asarray(index)
    pad = index < 0
    take = np.where(pad, 0, index)
    gx = np.where(pad, np.nan, np.asarray(x, float)[take])
    gy = np.where(pad, np.nan, np.asarray(y, float)[take])
    xs, ys = segments(gx.ravel(), gy.ravel(), *args)
    return xs.reshape(index.shape[0], -1), ys.reshape(index.shape[0], -1)


def row_dots(x, y, index):
    """Dot polylines (:func:`dot_segments`) of the rows of :func:`group_rows`."""
    return _rows(dot_segments, x, y, index)


def row_ticks(x, y, index, half_width):
    """Tick polylines (:func:`tick_segments`) of the rows of :func:`group_rows`."""
    return _rows(tick_segments, x, y, index, half_width)


def swap_scale(figure, axis_obj, key, log, **scale_kw):
    """Give every mark of ``figure`` (and ``axis_obj``) a log or linear scale under ``key``.

    bqplot's scale type is its class, so a log toggle replaces the scale object.
    """
    old = axis_obj.scale
    if isinstance(old, bq.LogScale) == bool(log):
        return old
    kw = {k: getattr(old, k) for k in ("reverse",) if hasattr(old, k)}
    kw.update(scale_kw)
    new = bq.LogScale(**kw) if log else bq.LinearScale(**kw)
    with figure.hold_sync():
        for mark in figure.marks:
            if mark.scales.get(key) is old:
                mark.scales = {**mark.scales, key: new}
        axis_obj.scale = new
    return new
