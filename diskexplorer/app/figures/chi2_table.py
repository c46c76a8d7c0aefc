"""The χ² summary: per data set and total, for the live model and each pin."""
from __future__ import annotations

import html

import ipywidgets as w
import numpy as np

from ...fitting.data_kinds import KIND_NAMES
from ..palette import INK, MUTED, WARNING

__all__ = ["Chi2Table", "summary_rows"]


def summary_rows(result):
    """(label, N, χ², χ²/N, weight) rows of a ComparisonResult, then the total."""
    rows = []
    for k, c in result.chi2.items():
        n = result.npoints[k]
        rows.append((KIND_NAMES.get(k, k), n, c, c / n if n else np.nan, result.weights.get(k, 1.0)))
    n = result.n_total
    rows.append(("total", n, result.total, result.total / n if n else np.nan, None))
    return rows


def _fmt(x):
    return "–" if x is None or not np.isfinite(x) else f"{x:,.3g}" if abs(x) < 1e4 else f"{x:,.0f}"


class Chi2Table:
    """An HTML table: data set, N, χ², χ²/N and weight of the live model, χ²/N of each pin."""

    def __init__(self):
        self.widget = w.HTML(layout={"width": "100%"})
        self.widget.add_class("dx-chi2")
        self.live = None
        self.pins = []

    def render(self):
        """Rebuild the table's HTML from :attr:`live` and :attr:`pins`."""
        if self.live is None:
            self.widget.value = f"<div style='color:{MUTED}'>no data loaded: no χ²</div>"
            return
        rows = summary_rows(self.live)
        pin_rows = [(name, colour, {r[0]: r for r in summary_rows(res)}) for name, colour, res in self.pins]
        head = "".join(f"<th style='color:{c}'>{html.escape(n)}<br>χ²/N</th>" for n, c, _ in pin_rows)
        body, left_out = [], []
        for label, n, c, red, weight in rows:
            bold = "font-weight:600;border-top:1px solid #ccc" if label == "total" else ""
            # A weight-0 kind is listed greyed, its weight cell says so, and a note under
            # the table names it: its χ² is not in the total.
            faded = f";color:{MUTED}" if weight == 0 else ""
            if weight == 0:
                left_out.append(label)
            w_cell = "" if weight is None else ("0 (not in total)" if weight == 0 else f"{weight:g}")
            pins = "".join(f"<td>{_fmt(pr.get(label, (0, 0, 0, np.nan))[3])}</td>" for _, _, pr in pin_rows)
            body.append(f"<tr style='{bold}{faded}'><td>{label}</td><td>{n:,}</td><td>{_fmt(c)}</td>"
                        f"<td>{_fmt(red)}</td><td>{w_cell}</td>{pins}</tr>")
        note = (f"<div style='color:{MUTED};font-size:11px'>weight 0, left out of the total: "
                f"{html.escape(', '.join(left_out))}</div>" if left_out else "")
        # Points no kind judges (uncalibrated OI_FLUX, unknown AMPTYP …) are named, never dropped silently.
        note += "".join(f"<div class='dx-not-judged' style='color:{WARNING};font-size:11px'>not judged: "
                        f"{html.escape(str(x))}</div>" for x in getattr(self.live, "left_out", ()))
        # Numbers right-aligned with room between columns: a large χ² must never run
        # into its neighbours.
        self.widget.value = (
            "<style>.dx-chi2-table td, .dx-chi2-table th {padding: 1px 0 1px 12px; text-align: right}"
            " .dx-chi2-table td:first-child, .dx-chi2-table th:first-child {padding-left: 0; text-align: left}"
            "</style>"
            f"<table class='dx-chi2-table' style='border-collapse:collapse;font-size:12px;color:{INK}'>"
            f"<tr><th style='text-align:left'>data</th><th>N</th><th>χ²</th><th>χ²/N</th><th>weight</th>{head}</tr>"
            + "".join(body) + "</table>" + note)

    def update_model(self, result):
        """Show the live ComparisonResult (or None)."""
        self.live = result
        self.render()

    def update_pins(self, pins):
        """Show pins: list of (name, colour, ComparisonResult)."""
        self.pins = [p for p in pins if p[2] is not None]
        self.render()
