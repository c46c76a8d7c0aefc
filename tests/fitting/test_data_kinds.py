"""One table of data kinds: every place that names a kind takes its words from it."""
import numpy as np

from diskexplorer.app.figures.chi2_table import Chi2Table, summary_rows
from diskexplorer.app.pages.start_page import WEIGHT_KINDS
from diskexplorer.fitting import Comparison
from diskexplorer.fitting.data_kinds import DATA_KINDS, KIND_LABELS, KIND_NAMES, WEIGHTED_KINDS
from diskexplorer.report import chi2_breakdown, format_chi2_table
from diskexplorer.sample import demo_scene, load_sample_data


def test_the_table_covers_every_kind_a_comparison_judges():
    data = load_sample_data()
    result = Comparison(data["observations"], data["photometry"], data["spectrum"]).compare(demo_scene())
    assert set(result.chi2) <= set(DATA_KINDS)
    assert set(KIND_NAMES) == set(KIND_LABELS) == set(DATA_KINDS)
    assert set(WEIGHTED_KINDS) <= set(DATA_KINDS)
    # the χ² table shows each judged kind by its short name
    rows = summary_rows(result)
    assert [r[0] for r in rows[:-1]] == [KIND_NAMES[k] for k in result.chi2] and rows[-1][0] == "total"
    table = Chi2Table()
    table.update_model(result)
    for k in result.chi2:
        assert KIND_NAMES[k].replace("²", "") in table.widget.value.replace("²", "")
    # the report's rows keep the kind keys and its text table lists each
    text = format_chi2_table(chi2_breakdown(result))
    assert all(k in text for k in result.chi2)
    assert np.isfinite([r["chi2"] for r in chi2_breakdown(result)]).all()


def test_the_weight_boxes_use_the_tables_words():
    assert WEIGHT_KINDS == tuple((k, KIND_NAMES[k]) for k in WEIGHTED_KINDS)
    assert dict(WEIGHT_KINDS)["vis2"] == "V²" and dict(WEIGHT_KINDS)["diffphi"] == "differential phase"
