"""The report's CSV writer and its figures on large tables.

The CSV writer formats whole columns at once for speed; Python's own :mod:`csv` module,
writing the same cells one by one, is the reference for the text it must produce.
"""
import csv
import io

import numpy as np

from diskexplorer.report import figures as report_figures
from diskexplorer.report.tables import _cell, write_csv


def reference_text(columns):
    buf = io.StringIO(newline="")
    writer = csv.writer(buf)
    writer.writerow(list(columns))
    for row in zip(*(np.asarray(c) for c in columns.values())):
        writer.writerow([_cell(x) for x in row])
    return buf.getvalue()


def test_csv_text_is_what_the_csv_module_writes(tmp_path):
    rng = np.random.default_rng(5)
    n = 2000
    values = rng.normal(0.0, 1.0, n) * 10.0 ** rng.integers(-12, 12, n)
    values[::13] = np.nan
    values[::29] = np.inf
    columns = {
        "kind,with comma": np.full(n, "vis2", dtype=object),
        "value": values,
        "flagged": rng.random(n) < 0.3,
        "sta_index": rng.integers(1, 7, n),
        "insname": np.array(['SIM "A"', "SIM,B", "plain", None, 1.5, True][:6] * (n // 6 + 1), dtype=object)[:n],
        "float32": rng.normal(size=n).astype(np.float32),
    }
    path = tmp_path / "table.csv"
    write_csv(path, columns)
    assert path.read_bytes().decode("utf-8") == reference_text(columns)


def test_an_empty_table_has_its_header_only(tmp_path):
    path = tmp_path / "empty.csv"
    columns = {"a": np.zeros(0), "b": np.zeros(0, dtype=object)}
    write_csv(path, columns)
    assert path.read_bytes().decode("utf-8") == reference_text(columns)


def test_a_large_table_is_thinned_for_its_figure_and_the_figure_says_so(monkeypatch):
    plt = report_figures._pyplot()
    monkeypatch.setattr(report_figures, "MAX_FIGURE_POINTS", 500)
    n = 1234
    rng = np.random.default_rng(6)
    cols = {"data": rng.random(n), "error": np.full(n, 0.01), "model": rng.random(n)}
    fig, ax = plt.subplots()
    try:
        report_figures._data_points(ax, np.arange(n, dtype=float), cols, np.linspace(1.0, 2.0, n))
        bars, data, model = ax.collections
        assert len(data.get_offsets()) == len(model.get_offsets()) == len(bars.get_segments()) == 500
        x = data.get_offsets()[:, 0]
        assert x[0] == 0.0 and x[-1] == n - 1     # evenly spaced over the whole table
        assert any("500 of 1,234 points shown" in t.get_text() for t in ax.texts)
        # each error bar spans data ± error at its point
        first = bars.get_segments()[0]
        np.testing.assert_allclose(first, [[0.0, cols["data"][0] - 0.01], [0.0, cols["data"][0] + 0.01]])
    finally:
        plt.close(fig)
