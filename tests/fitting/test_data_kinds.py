"""One table of data kinds: the comparison judges its kinds, every list of kinds follows it.

The explorer's users of the table (χ² table, weight boxes) are checked in
tests/app/test_kind_words.py.
"""
import pytest

from diskexplorer.fitting import Comparison
from diskexplorer.fitting.data_kinds import DATA_KINDS, KIND_LABELS, KIND_NAMES, KIND_WORDS, WEIGHTED_KINDS
from diskexplorer.report import chi2_breakdown, format_chi2_table
from diskexplorer.sample import demo_scene, load_sample_data
from diskexplorer.testing import make_observations


@pytest.fixture(scope="module")
def comparisons():
    """Comparisons that between them judge every kind the code knows.

    The sample has V², closure phases and triple amplitudes, correlated fluxes and
    differential phases, photometry and a spectrum; the synthetic set adds normalised |V|
    (AMPTYP "absolute") and calibrated OI_FLUX in Jy.
    """
    data = load_sample_data()
    synthetic = make_observations(include_vis=True, include_flux=True)
    return [Comparison(data["observations"], data["photometry"], data["spectrum"]),
            Comparison(synthetic, data["photometry"], data["spectrum"])]


def test_the_table_names_exactly_the_kinds_comparisons_judge(comparisons):
    judged = [kind for c in comparisons for kind in c.kinds]
    assert set(judged) == set(DATA_KINDS)
    for c in comparisons:
        # each comparison lists its kinds in the table's (display) order
        assert c.kinds == [k for k in DATA_KINDS if k in c.kinds]


def test_every_view_of_the_table_comes_from_it():
    assert DATA_KINDS == tuple(KIND_WORDS)
    assert KIND_NAMES == {k: words.name for k, words in KIND_WORDS.items()}
    assert KIND_LABELS == {k: words.label for k, words in KIND_WORDS.items()}
    # the words users saw before the table existed
    assert (KIND_NAMES["vis2"], KIND_NAMES["visamp"], KIND_NAMES["flux"]) == ("V²", "|V|", "OI_FLUX")
    assert (KIND_LABELS["t3phi"], KIND_LABELS["corrflux"]) == ("closure phase (deg)", "correlated flux (Jy)")
    # triple amplitudes and OI_FLUX get no weight box; the others keep the table's order
    assert WEIGHTED_KINDS == ("vis2", "t3phi", "visamp", "corrflux", "diffphi", "photometry", "spectrum")


def test_the_reports_chi2_table_lists_the_kinds_in_the_tables_order(comparisons):
    for c in comparisons:
        result = c.compare(demo_scene())
        assert list(result.chi2) == c.kinds
        rows = chi2_breakdown(result)
        assert [r["kind"] for r in rows] == c.kinds + ["total"]
        text = format_chi2_table(rows).splitlines()
        # header, one line per kind, a rule, the total (then notes)
        assert [line.split()[0] for line in text[1:len(c.kinds) + 1]] == c.kinds
        assert text[len(c.kinds) + 2].startswith("total")
        summary = result.summary().splitlines()
        assert [line.split()[0] for line in summary[1:len(c.kinds) + 1]] == c.kinds
