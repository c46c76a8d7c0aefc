"""The data kinds a comparison judges, with the words every table and box shows for them.

One table: the explorer's χ² table and weight boxes, the starting-point page, the report's
tables and :class:`~diskexplorer.fitting.Comparison` all read their kinds and words here.
"""
from __future__ import annotations

__all__ = ["DATA_KINDS", "KIND_NAMES", "KIND_LABELS", "WEIGHTED_KINDS"]

# kind: (short name for tables and boxes, description with its unit)
_KINDS = {
    "vis2": ("V²", "squared visibility"),
    "t3phi": ("closure phase", "closure phase (deg)"),
    "t3amp": ("triple amplitude", "triple amplitude"),
    "visamp": ("|V|", "visibility amplitude"),
    "corrflux": ("correlated flux", "correlated flux (Jy)"),
    "diffphi": ("differential phase", "differential phase (deg)"),
    "photometry": ("photometry", "photometry (Jy)"),
    "spectrum": ("spectrum", "spectrum (Jy)"),
    "flux": ("OI_FLUX", "OI_FLUX (Jy)"),
}

#: Data kinds a comparison can judge, in display order.
#: ``visamp``: OI_VIS amplitudes with AMPTYP "absolute" (normalised |V|);
#: ``corrflux``: AMPTYP "correlated flux" (|V| F_ν, Jy); ``diffphi``: VISPHI with PHITYP
#: "differential" (degrees). Differential amplitudes and absolute VISPHI are drawn but not
#: judged (a pipeline's normalisation of the former is not recorded in the file, and the
#: latter carries the atmosphere's phase).
DATA_KINDS = tuple(_KINDS)

#: Short name of each kind (χ² table rows, weight boxes).
KIND_NAMES = {k: short for k, (short, _) in _KINDS.items()}

#: Description of each kind with its unit (report tables).
KIND_LABELS = {k: label for k, (_, label) in _KINDS.items()}

#: Kinds whose weight in the total χ² the starting-point page offers. Triple amplitudes
#: and OI_FLUX keep weight 1 there (a document may still set them).
WEIGHTED_KINDS = tuple(k for k in DATA_KINDS if k not in ("t3amp", "flux"))
