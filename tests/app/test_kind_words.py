"""The explorer shows the data kinds in the words of the one table (fitting/data_kinds.py)."""
import html
import re

from diskexplorer.app.figures.chi2_table import Chi2Table, summary_rows
from diskexplorer.app.pages.start_page import WEIGHT_KINDS
from diskexplorer.fitting import ComparisonResult
from diskexplorer.fitting.data_kinds import DATA_KINDS, KIND_NAMES, WEIGHTED_KINDS


def result_of_every_kind():
    """A ComparisonResult that judged every kind of the table (χ² = 2 of 4 points each)."""
    return ComparisonResult(prediction=None, model={}, residuals={}, chi2={k: 2.0 for k in DATA_KINDS},
                            npoints={k: 4 for k in DATA_KINDS}, weights={k: 1.0 for k in DATA_KINDS})


def first_cells(table_html):
    """The first cell of every body row of the χ² table's HTML, unescaped."""
    return [html.unescape(c) for c in re.findall(r"<tr style='[^']*'><td>(.*?)</td>", table_html)]


def test_the_chi2_table_rows_name_each_kind_by_the_tables_short_name():
    result = result_of_every_kind()
    expected = [KIND_NAMES[k] for k in DATA_KINDS] + ["total"]
    assert [row[0] for row in summary_rows(result)] == expected
    table = Chi2Table()
    table.update_model(result)
    assert first_cells(table.widget.value) == expected
    # a pin's χ²/N is found by the same words: every row, the total too, shows the live
    # model's χ²/N and the pin's (a missed word would show "–" in the pin's column)
    table.update_pins([("pin 1", "#000000", result)])
    assert table.widget.value.count("<td>0.5</td>") == 2 * len(expected)


def test_the_weight_boxes_are_the_weighted_kinds_described_by_the_tables_short_names(app):
    boxes = app.start_page.weights
    assert list(boxes) == list(WEIGHTED_KINDS)
    assert [box.description for box in boxes.values()] == [KIND_NAMES[k] for k in WEIGHTED_KINDS]
    assert WEIGHT_KINDS == tuple((k, KIND_NAMES[k]) for k in WEIGHTED_KINDS)
    # the words the page showed before the table existed
    assert boxes["vis2"].description == "V²" and boxes["diffphi"].description == "differential phase"
