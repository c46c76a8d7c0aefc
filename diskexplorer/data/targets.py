"""The targets of a data set, and which one a model of one disk is judged against.

Calibrated night files often hold the calibrators beside the science target. A model of
one disk is compared with one target at a time: the one asked for, else the science
target if OI_TARGET says which (CATEGORY 'SCI' against 'CAL', OIFITS v2, Duvert et al.
2017, A&A 597, A8), else the target with most points.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import DataError

__all__ = ["target_points", "choose_target"]


def target_points(observations):
    """The targets with data: list of dict ``name``, ``category`` ("SCI", "CAL" or ""), ``points``.

    Most points first; ``points`` counts every point of every table.
    """
    if observations is None:
        return []
    counts = {}
    for ds in observations.datasets().values():
        # Counted by hashing (a sort of every point's name costs ~0.1 s on a wide night file).
        for name, k in pd.Series(np.asarray(ds["target"].values).ravel()).value_counts(sort=False).items():
            counts[str(name)] = counts.get(str(name), 0) + int(k)
    info = {name.lower(): i for name, i in (observations.targets or {}).items()}
    out = [{"name": name, "category": str(info.get(name.lower(), {}).get("category", "") or "").strip().upper(),
            "points": n} for name, n in counts.items()]
    return sorted(out, key=lambda t: (-t["points"], t["name"]))


def choose_target(observations, wanted=None):
    """The target to judge, and why.

    Parameters
    ----------
    observations : ObservationSet or None
    wanted : str, optional
        A target name (case-insensitive); None or "" chooses automatically.

    Returns
    -------
    (str or None, str)
        The target (None without data) and the reason in words ("" for a single target).

    Raises
    ------
    DataError
        ``wanted`` is not among the targets (they are listed).
    """
    targets = target_points(observations)
    if not targets:
        return None, ""
    if wanted:
        for t in targets:
            if t["name"].lower() == str(wanted).strip().lower():
                return t["name"], "chosen"
        raise DataError(f"target {wanted!r} is not in the data; targets: "
                        + ", ".join(f"{t['name']} ({t['points']} points)" for t in targets))
    if len(targets) == 1:
        return targets[0]["name"], ""
    science = [t for t in targets if t["category"] == "SCI"]
    if science:
        return science[0]["name"], "the science target (OI_TARGET CATEGORY 'SCI')"
    return targets[0]["name"], "the target with most points"
