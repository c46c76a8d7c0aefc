"""The figures' cheap marks: error bars, ticks and dots as NaN-split polylines, and the
grouping of points into one coloured path per wavelength."""
import numpy as np
import pytest

from diskexplorer.app.figures.base import (DOTS_CSS, dot_segments, drawn_dots, error_segments, group_rows, row_dots,
                                           row_ticks, tick_segments)
from diskexplorer.app.figures.interferometry import (MOST_COLOURS, wavelength_colours, wavelength_groups,
                                                     wavelength_position)


class _Mark:
    def __init__(self, x, y, colors):
        self.x, self.y, self.colors = x, y, colors


def test_dot_segments_are_zero_length_subpaths():
    xs, ys = dot_segments([1.0, 2.0], [3.0, 4.0])
    np.testing.assert_array_equal(xs[[0, 1, 3, 4]], [1.0, 1.0, 2.0, 2.0])
    np.testing.assert_array_equal(ys[[0, 1, 3, 4]], [3.0, 3.0, 4.0, 4.0])
    assert np.isnan(xs[2::3]).all() and np.isnan(ys[2::3]).all()
    # Zero-length subpaths are stroked only with round (or square) caps: SVG 1.1, 11.4.
    assert "stroke-linecap: round" in DOTS_CSS


def test_error_bars_and_ticks():
    ex, ey = error_segments([1.0], [0.5], [0.1])
    np.testing.assert_allclose(ey[:2], [0.4, 0.6])
    assert ex[0] == ex[1] == 1.0 and np.isnan(ex[2])
    tx, ty = tick_segments([1.0], [0.5], 0.2)
    np.testing.assert_allclose(tx[:2], [0.8, 1.2])
    assert ty[0] == ty[1] == 0.5


def test_group_rows_hold_each_point_once_in_its_group():
    rng = np.random.default_rng(3)
    group = np.r_[np.zeros(40, int), rng.integers(1, 4, 30)]
    index, row_group = group_rows(group, 5)
    width = -(-group.size // 5)
    assert index.shape[1] == width
    # every point once, in a row of its own group; padding only at the end of a group's last row
    assert sorted(index[index >= 0]) == list(range(group.size))
    assert all((group[index[k][index[k] >= 0]] == row_group[k]).all() for k in range(index.shape[0]))
    assert (index < 0).sum() < width * (np.unique(group).size)
    assert group_rows(np.zeros(0, int), 3)[0].shape == (0, 1)


def test_row_dots_and_ticks_round_trip():
    rng = np.random.default_rng(4)
    x, y = rng.random(50), rng.random(50)
    group = rng.integers(0, 4, 50)
    index, row_group = group_rows(group, 4, width=7)
    xs, ys = row_dots(x, y, index)
    assert xs.shape == (index.shape[0], 21)
    colours = ["#000001", "#000002", "#000003", "#000004"]
    dx, dy, dc = drawn_dots(_Mark(xs, ys, [colours[g] for g in row_group]))
    assert sorted(zip(dx, dy, dc)) == sorted(zip(x, y, [colours[g] for g in group]))
    tx, ty = row_ticks(x, y, index, 0.01)
    keep = index >= 0
    np.testing.assert_allclose(tx[:, 0::3][keep], x[index[keep]] - 0.01)
    np.testing.assert_allclose(ty[:, 1::3][keep], y[index[keep]])
    assert np.isnan(tx[:, 0::3][~keep]).all()
    assert drawn_dots(_Mark(np.zeros(0), np.zeros(0), ["#000000"]))[0].size == 0


def test_wavelength_groups_one_per_wavelength():
    wl = np.array([2.2, 3.5, 2.2, 10.0, 3.5])
    group, colours = wavelength_groups(wl, 2.0, 12.0)
    assert len(colours) == 3
    # every point in its own wavelength's colour of the key
    assert [colours[g] for g in group] == wavelength_colours(wl, 2.0, 12.0)


def test_wavelength_groups_bin_many_wavelengths():
    wl = np.linspace(1.5, 13.0, 500)
    group, colours = wavelength_groups(wl, 1.5, 13.0)
    assert len(colours) == MOST_COLOURS == group.max() + 1
    # each bin's colour is the key at the bin's centre; a point's place lies within its bin
    f = wavelength_position(wl, 1.5, 13.0)
    used = np.unique(np.clip((f * MOST_COLOURS).astype(int), 0, MOST_COLOURS - 1))
    assert np.all(np.abs(f - (used[group] + 0.5) / MOST_COLOURS) <= 0.5 / MOST_COLOURS + 1e-12)
    # only occupied bins become paths
    group, colours = wavelength_groups(np.r_[np.full(100, 2.0), np.linspace(12.0, 12.9, 100)], 2.0, 13.0, most=8)
    assert len(colours) == np.unique(group).size <= 8


@pytest.mark.parametrize("n", [0, 1])
def test_wavelength_groups_small(n):
    group, colours = wavelength_groups(np.full(n, 3.0), 3.0, 3.0)
    assert group.size == n and len(colours) == n


def test_finite_ends_draw_the_same_and_end_every_row_on_a_point():
    from diskexplorer.app.figures.base import finite_ends

    nan = np.nan
    # Trailing breaks move to the front: the polyline is the same, its last point is finite.
    x, y = finite_ends(np.array([1.0, 2.0, nan, 3.0, 4.0, nan]), np.array([5.0, 6.0, nan, 7.0, 8.0, nan]))
    np.testing.assert_array_equal(x, [nan, 1.0, 2.0, nan, 3.0, 4.0])
    np.testing.assert_array_equal(y, [nan, 5.0, 6.0, nan, 7.0, 8.0])
    # A shared x with rows of y that end differently: x becomes one row per y row.
    x, y = finite_ends(np.array([1.0, 2.0, 3.0]), np.array([[1.0, 2.0, 3.0], [1.0, nan, nan], [nan, nan, nan]]))
    assert x.shape == y.shape == (3, 3)
    np.testing.assert_array_equal(x[1], [2.0, 3.0, 1.0])
    np.testing.assert_array_equal(y[1], [nan, nan, 1.0])
    # A row with nothing to draw ends on a lone point (no stroke); nothing finite anywhere empties.
    assert np.isfinite(y[2]).sum() == 1 and np.isfinite(x[2, -1]) and np.isfinite(y[2, -1])
    assert finite_ends(np.array([nan]), np.array([nan]))[0].size == 0
    # Rows that already end on a point are passed through unchanged (no copy sent).
    a = np.array([1.0, 2.0])
    assert finite_ends(a, a)[0] is not None and np.shares_memory(finite_ends(a, a)[0], a)


def test_every_drawn_line_ends_on_a_finite_point(app):
    """What the page would log as errors: NaN at a row's end (bqplot's label transform), rows
    of NaN only (``d="null"``), and log scales of the figures without a domain."""
    import bqplot as bq

    from explorer_helpers import settle

    app.render_hidden = True
    for name in app.PAGE_ORDER:
        app.figure_tabs.selected_index = app.PAGES[name]
        settle(app)
    app.ring_deck.cards[1].enabled.value = False      # a component of zero flux: a row of NaN
    settle(app)
    figures = list(app.figures.values())
    assert len(figures) >= 8
    for fig in figures:
        for widget in vars(fig).values():
            if not isinstance(widget, bq.Figure):
                continue
            for mark in widget.marks:
                if not isinstance(mark, bq.Lines) or np.asarray(mark.y).size == 0:
                    continue
                xs, ys = np.broadcast_arrays(np.atleast_2d(mark.x), np.atleast_2d(mark.y))
                assert (np.isfinite(xs[:, -1]) & np.isfinite(ys[:, -1])).all(), (widget.title, mark.labels)
    profiles = app.figures["profiles"]
    for part in profiles.parts.values():
        assert part["ax"].scale.min > 0 and part["ax"].scale.max > part["ax"].scale.min
