"""The data kinds a comparison judges, with the words every table and box shows for them.

One table, :data:`KIND_WORDS`: :class:`~diskexplorer.fitting.Comparison` judges these kinds
(and refuses weights for any other), in this order, which the report's χ² table and
``ComparisonResult.summary`` keep (they list a result's kinds by key); the explorer's χ²
table shows their short names and the starting-point page has a weight box for each
weighted kind. The other names here are views of that table.
"""
from __future__ import annotations

from typing import NamedTuple

__all__ = ["KindWords", "KIND_WORDS", "DATA_KINDS", "KIND_NAMES", "KIND_LABELS", "WEIGHTED_KINDS"]


class KindWords(NamedTuple):
    """The words shown for one data kind, and whether the user sets its weight."""

    #: Short name: the rows of the explorer's χ² table and the weight boxes.
    name: str
    #: Description with its unit, for tables that explain the kind.
    label: str
    #: True if the starting-point page offers a box for the kind's weight in the total χ².
    weighted: bool = True


#: Every data kind a comparison can judge, in display order, with its words. Triple
#: amplitudes and OI_FLUX get no weight box: they keep weight 1 there (a starting-point
#: document may still set one).
KIND_WORDS = {
    "vis2": KindWords("V²", "squared visibility"),
    "t3phi": KindWords("closure phase", "closure phase (deg)"),
    "t3amp": KindWords("triple amplitude", "triple amplitude", weighted=False),
    "visamp": KindWords("|V|", "visibility amplitude"),
    "corrflux": KindWords("correlated flux", "correlated flux (Jy)"),
    "diffphi": KindWords("differential phase", "differential phase (deg)"),
    "photometry": KindWords("photometry", "photometry (Jy)"),
    "spectrum": KindWords("spectrum", "spectrum (Jy)"),
    "flux": KindWords("OI_FLUX", "OI_FLUX (Jy)", weighted=False),
}

#: Data kinds a comparison can judge, in display order.
#: ``visamp``: OI_VIS amplitudes with AMPTYP "absolute" (normalised |V|);
#: ``corrflux``: AMPTYP "correlated flux" (|V| F_ν, Jy); ``diffphi``: VISPHI with PHITYP
#: "differential" (degrees). Differential amplitudes and absolute VISPHI are drawn but not
#: judged (a pipeline's normalisation of the former is not recorded in the file, and the
#: latter carries the atmosphere's phase).
DATA_KINDS = tuple(KIND_WORDS)

#: Short name of each kind (χ² table rows, weight boxes).
KIND_NAMES = {k: words.name for k, words in KIND_WORDS.items()}

#: Description of each kind with its unit.
KIND_LABELS = {k: words.label for k, words in KIND_WORDS.items()}

#: Kinds whose weight in the total χ² the starting-point page offers, in display order.
WEIGHTED_KINDS = tuple(k for k, words in KIND_WORDS.items() if words.weighted)
