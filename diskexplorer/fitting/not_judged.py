"""Which loaded points the comparison cannot judge, and why: said, never silent.

A model predicts absolute fluxes in Jy, normalised visibilities, correlated fluxes in Jy
and phases differential across channels. Points of another nature are left out of χ²,
and every consumer (the explorer's data tab and χ² table, ``diskexplorer evaluate``, the
report's tables) shows the reasons this module gives:

* OI_FLUX that is not calibrated (CALSTAT other than 'C') or whose unit is not a flux
  density (counts, ADU …: the reader keeps those in their own unit): judging it as Jy
  would add an arbitrary χ² (OIFITS v2, Duvert et al. 2017, A&A 597, A8, defines
  CALSTAT 'C' calibrated and 'U' uncalibrated);
* OI_VIS amplitudes whose AMPTYP is neither 'absolute' nor 'correlated flux' (e.g.
  'differential', whose normalisation a pipeline does not record, or none given), and
  correlated fluxes whose unit is not a flux density (the reader marks their AMPTYP
  ``"correlated flux [unit]"``);
* OI_VIS phases whose PHITYP is not 'differential' (an absolute VISPHI carries the
  atmosphere's phase).
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["LeftOut", "not_judged", "judged_flux", "describe_left_out", "select_target"]


@dataclass(frozen=True)
class LeftOut:
    """A group of points the comparison leaves out of χ².

    Attributes
    ----------
    table : str
        OIFITS table ("OI_FLUX", "OI_VIS amplitudes", "OI_VIS phases").
    file : str
        File name ("" when the points do not name one).
    n : int
        Number of points.
    reason : str
        Why, in the words shown to the user.
    """

    table: str
    file: str
    n: int
    reason: str

    def __str__(self):
        where = f"{self.file}: " if self.file else ""
        return f"{where}{self.n:,} {self.table} point{'s' if self.n != 1 else ''}: {self.reason}"


def _strings(ds, name, default):
    # Plain Python strings: their repr is what the messages quote.
    if name in ds.coords or name in ds:
        # A table holds a handful of distinct values: convert those, not every point's.
        codes, distinct = pd.factorize(np.asarray(ds[name].values).ravel(), use_na_sentinel=False)
        return np.asarray([str(x) for x in distinct], dtype=object)[codes]
    return np.full(ds.sizes.get("point", 0), default, dtype=object)


def judged_flux(flux):
    """Boolean mask of the OI_FLUX points judged as Jy (calibrated, in Jy)."""
    if flux is None:
        return np.zeros(0, dtype=bool)
    calstat = np.array([c.strip().upper() for c in _strings(flux, "calstat", "C")], dtype=object)
    unit = _strings(flux, "flux_unit", "Jy")
    return np.asarray((calstat == "C") & (unit == "Jy"), dtype=bool)


def _group(ds, mask, table, signature, reason_of):
    """Groups of the masked points by file and ``signature`` (the values the reason reads).

    The reason is worded once per group, from its first point: a large table of one kind
    costs one dictionary pass, not one message per point.
    """
    files = _strings(ds, "file", "")
    counts, first = {}, {}
    for k in np.flatnonzero(mask):
        key = (files[k], signature[k])
        counts[key] = counts.get(key, 0) + 1
        first.setdefault(key, k)
    return [LeftOut(table, Path(file).name if file else "", n, reason_of(first[(file, sig)]))
            for (file, sig), n in counts.items()]


def not_judged(observations):
    """The groups of interferometric points of ``observations`` left out of χ², with reasons.

    Parameters
    ----------
    observations : ObservationSet or None

    Returns
    -------
    list of LeftOut
        By table, file and reason (empty when every point is judged).
    """
    if observations is None:
        return []
    out = []
    # Points read with keep_flagged: the file says they are bad, so they are never judged.
    for kind, table in (("vis2", "OI_VIS2"), ("vis", "OI_VIS"), ("t3", "OI_T3"), ("flux", "OI_FLUX")):
        ds = getattr(observations, kind, None)
        if ds is not None and ds.sizes.get("point", 0) and "flag" in ds:
            flagged = np.asarray(ds["flag"].values, bool)
            if flagged.any():
                out += _group(ds, flagged, table, np.full(flagged.size, "", dtype=object),
                              lambda k: "flagged in the file (FLAG true): not judged")
    flux = getattr(observations, "flux", None)
    if flux is not None and flux.sizes.get("point", 0):
        calstat = np.array([c.strip().upper() for c in _strings(flux, "calstat", "C")], dtype=object)
        unit = _strings(flux, "flux_unit", "Jy")

        def flux_reason(k):
            parts = []
            if calstat[k] != "C":
                parts.append(f"uncalibrated: CALSTAT {calstat[k]!r}")
            if unit[k] != "Jy":
                parts.append(f"unit {unit[k] or 'none'!r} is not a flux density")
            return "; ".join(parts) + ": not compared in Jy"

        out += _group(flux, ~judged_flux(flux), "OI_FLUX", calstat + "|" + unit, flux_reason)
    vis = getattr(observations, "vis", None)
    if vis is not None and vis.sizes.get("point", 0):
        amptyp = _strings(vis, "amptyp", "")
        phityp = _strings(vis, "phityp", "")
        amp_ok = np.array([a in ("absolute", "correlated flux") for a in amptyp], dtype=bool)
        has_amp = np.isfinite(np.asarray(vis["visamp"].values, float)) if "visamp" in vis else np.zeros(amp_ok.size, bool)
        def amp_reason(k):
            if amptyp[k].startswith("correlated flux ["):
                return f"correlated fluxes in {amptyp[k][17:-1]!r}, not a flux density: not compared in Jy"
            return f"AMPTYP {amptyp[k] or 'none'!r}: neither 'absolute' nor 'correlated flux'"

        out += _group(vis, has_amp & ~amp_ok, "OI_VIS amplitudes", amptyp, amp_reason)
        has_phi = np.isfinite(np.asarray(vis["visphi"].values, float)) if "visphi" in vis else np.zeros(amp_ok.size, bool)
        out += _group(vis, has_phi & np.array([p != "differential" for p in phityp], dtype=bool), "OI_VIS phases",
                      phityp, lambda k: f"PHITYP {phityp[k] or 'none'!r}: only differential phases are judged")
    return out


def describe_left_out(left_out):
    """One line per group (empty list for none)."""
    return [str(x) for x in left_out]


def select_target(observations, wanted=None):
    """Keep one target's points: the one asked for, else the science target, else the largest.

    Returns
    -------
    (ObservationSet or None, str or None, str, list of LeftOut)
        The selected points, the target, why it was chosen ("" for a lone target) and a
        group per other target whose points are not judged.
    """
    from ..data.targets import choose_target, target_points

    name, why = choose_target(observations, wanted)
    targets = target_points(observations)
    if name is None or len(targets) < 2:
        return observations, name, why, []
    others = [LeftOut("interferometric", "", t["points"],
                      f"target {t['name']!r}" + (f" (CATEGORY {t['category']!r})" if t["category"] else "")
                      + f": only {name!r} is judged ({why})") for t in targets if t["name"] != name]
    return observations.select_target(name), name, why, others
