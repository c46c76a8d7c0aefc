"""χ² and residual tables of an evaluation, and their CSV files."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["residual_tables", "chi2_breakdown", "format_chi2_table", "write_residual_tables", "write_csv"]


def _mlambda(u, v, wavelength):
    """Spatial frequency B/λ in Mλ (10⁶ wavelengths) of baselines (u, v) in m at λ in µm."""
    # B [m] / (λ [µm] 1e-6) / 1e6 = B / λ[µm]: the factors cancel.
    return np.hypot(u, v) / wavelength


def _coord(ds, name, default=""):
    if name in ds.coords or name in ds:
        return np.asarray(ds[name].values)
    return np.full(ds.sizes.get("point", 0), default, dtype=object)


# OI_VIS kinds: data column, the coordinate that selects their points, and its value.
_VIS_KINDS = {"visamp": ("visamp", "amptyp", "absolute"), "corrflux": ("visamp", "amptyp", "correlated flux"),
              "diffphi": ("visphi", "phityp", "differential")}


def residual_tables(comparison, result):
    """The data, model and residuals of every data kind as column tables.

    Parameters
    ----------
    comparison : Comparison
        The data, as bound by :class:`~diskexplorer.fitting.Comparison`.
    result : ComparisonResult
        From ``comparison.compare(scene)``.

    Returns
    -------
    dict
        Kind → dict of column name → 1-d array, one row per data point in the order of
        the comparison. Column names carry their units: ``wavelength_um``,
        ``spatial_frequency_Mlambda`` (B/λ in 10⁶ wavelengths; for closure phases the
        longest baseline of the triangle), ``u_m``, ``v_m``, ``data``, ``error``,
        ``model``, ``residual`` ((data − model)/error, closure phases by chord length, see diskexplorer.fitting.comparison.phase_residual;
        upper limits contribute only where the model exceeds them). Data are in V²,
        degrees (``t3phi``, ``diffphi``), visibility amplitude (``visamp``) or Jy
        (``corrflux``, ``photometry``, ``spectrum``, ``flux``); the OI_VIS kinds hold only
        the points of their AMPTYP / PHITYP, with their station indices; the SED kinds add
        one ``model_<component>`` column per component (Jy).
    """
    obs = comparison.observations
    tables = {}
    for kind in result.residuals:
        cols = {}
        if kind == "vis2":
            ds = obs.vis2
            u, v, lam = ds["u"].values, ds["v"].values, ds["wavelength"].values
            cols.update(instrument=_coord(ds, "insname"), mjd=_coord(ds, "mjd", np.nan), u_m=u, v_m=v,
                        wavelength_um=lam, spatial_frequency_Mlambda=_mlambda(u, v, lam),
                        data=ds["vis2"].values, error=ds["vis2_err"].values)
        elif kind in ("t3phi", "t3amp"):
            ds = obs.t3
            u1, v1, u2, v2 = (ds[n].values for n in ("u1", "v1", "u2", "v2"))
            lam = ds["wavelength"].values
            longest = np.max(np.stack([np.hypot(u1, v1), np.hypot(u2, v2), np.hypot(u1 + u2, v1 + v2)]), axis=0)
            cols.update(instrument=_coord(ds, "insname"), mjd=_coord(ds, "mjd", np.nan), u1_m=u1, v1_m=v1,
                        u2_m=u2, v2_m=v2, wavelength_um=lam, spatial_frequency_Mlambda=longest / lam,
                        data=ds[kind].values, error=ds[f"{kind}_err"].values)
        elif kind in _VIS_KINDS:
            ds = obs.vis
            # Only the points of this kind's AMPTYP / PHITYP (the others are NaN in the result).
            column, typ, value = _VIS_KINDS[kind]
            keep = np.asarray(ds[typ].values).astype(str) == value
            u, v, lam = ds["u"].values[keep], ds["v"].values[keep], ds["wavelength"].values[keep]
            cols.update(instrument=_coord(ds, "insname")[keep], mjd=_coord(ds, "mjd", np.nan)[keep],
                        sta_index1=_coord(ds, "sta_index1", -1)[keep], sta_index2=_coord(ds, "sta_index2", -1)[keep],
                        u_m=u, v_m=v, wavelength_um=lam, spatial_frequency_Mlambda=_mlambda(u, v, lam),
                        data=ds[column].values[keep], error=ds[f"{column}_err"].values[keep])
        else:
            ds = {"photometry": comparison.photometry, "spectrum": comparison.spectrum,
                  "flux": getattr(obs, "flux", None)}[kind]
            flux = ds["flux"].values
            err = ds["flux_err"].values if "flux_err" in ds else np.full(flux.shape, np.nan)
            if kind == "spectrum":
                # The error χ² used: samples without one get the comparison's 5 % default.
                err = np.where(np.isfinite(err) & (err > 0), err, 0.05 * np.abs(flux))
            if kind == "photometry":
                cols["band"] = _coord(ds, "band")
            if kind == "flux":
                cols["instrument"] = _coord(ds, "insname")
            cols.update(wavelength_um=ds["wavelength"].values, data=flux, error=err)
            if kind == "photometry":
                cols["upper_limit"] = ds["upper_limit"].values.astype(bool)
        keep = slice(None) if kind not in _VIS_KINDS else keep
        cols["model"] = np.asarray(result.model[kind], float)[keep]
        cols["residual"] = np.asarray(result.residuals[kind], float)[keep]
        comps = {"photometry": result.sed, "spectrum": result.spectrum}.get(kind) or {}
        for name, values in comps.items():
            if name != "total":
                cols[f"model_{name}"] = np.asarray(values, float)
        tables[kind] = cols
    return tables


def chi2_breakdown(result, tables=None):
    """χ² per data kind, per instrument within each kind, and in total.

    Parameters
    ----------
    result : ComparisonResult
    tables : dict, optional
        From :func:`residual_tables`; needed for the per-instrument rows.

    Returns
    -------
    list of dict
        Keys ``kind``, ``subset`` (instrument name, ``"all"`` or ``""`` for the total),
        ``n``, ``chi2``, ``reduced`` (χ²/N) and ``weight`` (in the total).
    """
    rows = []
    for kind, chi2 in result.chi2.items():
        n = result.npoints[kind]
        w = result.weights.get(kind, 1.0)
        rows.append(dict(kind=kind, subset="all", n=n, chi2=chi2, reduced=chi2 / n if n else math.nan, weight=w))
        table = (tables or {}).get(kind, {})
        inst = table.get("instrument")
        if inst is not None and len(set(inst)) > 1:
            r = np.asarray(table["residual"], float)
            for name in sorted(set(inst)):
                sel = (inst == name) & np.isfinite(r)
                c = float(np.sum(r[sel] ** 2))
                k = int(sel.sum())
                rows.append(dict(kind=kind, subset=str(name), n=k, chi2=c, reduced=c / k if k else math.nan,
                                 weight=w))
    n = result.n_total
    rows.append(dict(kind="total", subset="", n=n, chi2=result.total,
                     reduced=result.total / n if n else math.nan, weight=math.nan))
    return rows


def _number(x, decimals):
    """A table cell: fixed-point with ``decimals``, scientific when that would be long or read 0."""
    if x is None or not math.isfinite(x):
        return "—"
    if x != 0 and (abs(x) >= 1e7 or abs(x) < 10.0 ** -decimals):
        return f"{x:.4e}"
    return f"{x:.{decimals}f}"


def format_chi2_table(rows):
    """The χ² rows of :func:`chi2_breakdown` as an aligned text table.

    Column widths follow the content, so large χ² never run into the next column (values
    of 10⁷ and more are written in scientific notation). A kind with no usable point
    (N = 0) shows "—" instead of χ² and χ²/N; kinds of weight 0 are listed but left out
    of the total, and a note under the table says so.

    Parameters
    ----------
    rows : list of dict
        From :func:`chi2_breakdown`.

    Returns
    -------
    str
    """
    header = ("data", "subset", "N", "chi2", "chi2/N", "weight")
    right = (False, False, True, True, True, True)
    body, rules, notes = [], [], []
    for r in rows:
        total = r["kind"] == "total"
        label = r["kind"] if r["subset"] in ("all", "") else ""
        subset = "" if r["subset"] in ("all", "") else str(r["subset"])
        n = int(r["n"])
        weight = r["weight"]
        w_text = "" if weight is None or (isinstance(weight, float) and math.isnan(weight)) else f"{weight:g}"
        chi2 = r["chi2"] if n else None
        body.append((label, subset, str(n), _number(chi2, 2), _number(r["reduced"] if n else None, 3), w_text))
        if total:
            rules.append(len(body) - 1)
        elif label:
            if not n:
                notes.append(f"{r['kind']}: no usable data point (N = 0)")
            elif weight == 0:
                notes.append(f"{r['kind']} has weight 0: listed, but not in the total")
    widths = [max(len(h), *(len(row[k]) for row in body)) for k, h in enumerate(header)]

    def line(cells):
        return "  ".join(c.rjust(w) if r else c.ljust(w) for c, w, r in zip(cells, widths, right)).rstrip()

    lines = [line(header)]
    for k, row in enumerate(body):
        if k in rules:
            lines.append("-" * len(line(header)))
        lines.append(line(row))
    if notes:
        lines.append("")
        lines.extend(f"note: {n}" for n in notes)
    return "\n".join(lines)


def write_csv(path, columns):
    """Write columns (name → 1-d array) to ``path`` as CSV; NaN as an empty cell, floats to 8 digits.

    Cells are formatted column by column (a wide night file's residual tables hold
    millions of cells; a cell-by-cell writer took seconds); the text is what
    :mod:`csv` writes: minimal quoting, rows ended by CR LF.
    """
    names = list(columns)
    texts = [_column_text(np.asarray(columns[n])) for n in names]
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write(",".join(_quote(n) for n in names) + "\r\n")
        for lo in range(0, len(texts[0]) if texts else 0, 65536):
            fh.write("".join(",".join(row) + "\r\n" for row in zip(*(t[lo:lo + 65536] for t in texts))))


def _column_text(a):
    """The cells of one column as quoted CSV text."""
    a = np.ravel(a)
    if a.dtype.kind == "b":
        return np.where(a, "true", "false").tolist()
    if a.dtype.kind == "f":
        text = list(map("{:.8g}".format, a.tolist()))
        for i in np.flatnonzero(~np.isfinite(a)).tolist():
            text[i] = ""
        return text
    if a.dtype.kind in "iu":
        return list(map(str, a.tolist()))
    # Names and other objects: a column holds a few distinct values; format each once.
    cells = {}
    out = []
    for x in a.tolist():
        key = (type(x), x)   # True == 1 == 1.0 as keys; their cells differ
        try:
            text = cells[key]
        except KeyError:
            text = cells[key] = _quote(_cell(x))
        except TypeError:   # an unhashable object
            text = _quote(_cell(x))
        out.append(text)
    return out


def _quote(text):
    """``text`` as one CSV field (quoted only where :mod:`csv`'s minimal quoting would)."""
    if any(ch in text for ch in ',"\r\n'):
        return '"' + text.replace('"', '""') + '"'
    return text


def _cell(x):
    if isinstance(x, (bool, np.bool_)):
        return "true" if x else "false"
    if isinstance(x, (float, np.floating)):
        return "" if not np.isfinite(x) else f"{float(x):.8g}"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    return str(x)


def write_residual_tables(tables, paths):
    """Write each kind's table (:func:`residual_tables`) to ``paths[kind]`` as CSV."""
    for kind, cols in tables.items():
        write_csv(paths[kind], cols)
    return [paths[k] for k in tables]
