"""Write an :class:`~diskexplorer.data.observations.ObservationSet` as an OIFITS v2 file
(Duvert, Young & Hummel 2017, A&A 597, A8).

The flat points are regrouped into standard tables: one OI_WAVELENGTH per INSNAME (its
channels are the distinct wavelengths of that instrument's points, ascending), one
OI_ARRAY per ARRNAME, one OI_TARGET, and one data table per kind and
(INSNAME, ARRNAME, AMPTYP/PHITYP or CALSTAT/unit). Points that share file, target, MJD,
integration time, stations and (u, v) form one row; channels of a row without a point are
written as NaN with FLAG = T, so reading the file back returns exactly the points written.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr
from astropy.io import fits

from ..errors import DataError
from .observations import KIND_SPEC, KINDS, ObservationSet, make_array_table

__all__ = ["write_oifits"]

_OI_DATA = {
    "vis2": (("VIS2DATA", "VIS2ERR"), ("UCOORD", "VCOORD")),
    "vis": (("VISAMP", "VISAMPERR", "VISPHI", "VISPHIERR"), ("UCOORD", "VCOORD")),
    "t3": (("T3AMP", "T3AMPERR", "T3PHI", "T3PHIERR"), ("U1COORD", "V1COORD", "U2COORD", "V2COORD")),
    "flux": (("FLUXDATA", "FLUXERR"), ()),
}
_PHASE_COLS = {"VISPHI", "VISPHIERR", "T3PHI", "T3PHIERR"}
_UNKNOWN_ARRAY = "UNKNOWN"


def _collect(obj) -> tuple[dict[str, xr.Dataset], dict, dict]:
    if isinstance(obj, ObservationSet):
        return obj.datasets(), obj.targets, obj.arrays
    if isinstance(obj, xr.Dataset):
        kind = obj.attrs.get("kind") or next((k for k in KINDS if KIND_SPEC[k]["data"][0] in obj), None)
        if kind is None:
            raise DataError("write_oifits: cannot tell which observable this dataset holds")
        return {kind: obj}, {}, {}
    if isinstance(obj, Mapping):
        unknown = set(obj) - set(KINDS)
        if unknown:
            raise DataError(f"write_oifits: unknown kind(s) {sorted(unknown)}; expected {KINDS}")
        return {k: v for k, v in obj.items() if v is not None and v.sizes["point"]}, {}, {}
    raise DataError(f"write_oifits: expected an ObservationSet, a dataset or a mapping, got "
                    f"{type(obj).__name__}")


def write_oifits(path, observations, *, overwrite: bool = False, origin: str = "diskexplorer",
                 observer: str = "UNKNOWN", insmode: str = "UNKNOWN", object_name: str | None = None,
                 date: str | None = None) -> Path:
    """Write observations to an OIFITS v2 file.

    Parameters
    ----------
    path : str or os.PathLike
        Output file.
    observations : ObservationSet, xarray.Dataset or mapping of kind to Dataset
        What to write (any of V², visibilities, closure phases, fluxes).
    overwrite : bool
        Replace an existing file. Default False: an existing file is never touched.
    origin, observer, insmode : str
        Primary header keywords ORIGIN, OBSERVER, INSMODE.
    object_name : str, optional
        OBJECT keyword (default: the single target name, or "MULTIPLE").
    date : str, optional
        DATE keyword (default: now, UTC, ISO 8601).

    Returns
    -------
    pathlib.Path
        The file written (with CHECKSUM/DATASUM keywords).

    Raises
    ------
    FileExistsError
        If ``path`` exists and ``overwrite`` is False.
    DataError
        Nothing to write; a station index missing from its array table; two points in
        the same row and channel.

    Notes
    -----
    Wavelengths are stored as EFF_WAVE in metres in single precision (format E, as the
    standard prescribes); (u, v), data and MJD in double precision. TIME is written as
    zero (v2). For differential visibilities VISREFMAP is written from each point's
    reference channels (``ref_wavelength``); points without one, and cells without a point,
    get every channel of the row.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise FileExistsError(f"{path}: file exists; pass overwrite=True to replace it")
    datasets, target_info, array_tables = _collect(observations)
    datasets = {k: ds for k, ds in datasets.items() if ds.sizes["point"]}
    if not datasets:
        raise DataError(f"{path}: nothing to write (no points in any observable)")

    # Per-point columns as plain numpy arrays, with table keys resolved.
    cols = {k: {name: ds[name].values for name in ds.variables if ds[name].dims[:1] == ("point",)}
            for k, ds in datasets.items()}
    for k, c in cols.items():
        arr = c["arrname"].astype(object).copy()
        needs_array = np.ones(arr.size, bool) if k != "flux" else (c["calstat"] == "U")
        arr[(arr == "") & needs_array] = _UNKNOWN_ARRAY
        c["arrname"] = arr

    # Targets: IDs 1..N in order of first appearance.
    tnames = list(dict.fromkeys(t for c in cols.values() for t in c["target"]))
    tid = {name: i + 1 for i, name in enumerate(tnames)}

    # Wavelength tables per INSNAME (single precision: what EFF_WAVE holds).
    wave_tables = {}
    for ins in dict.fromkeys(i for c in cols.values() for i in c["insname"]):
        w = np.concatenate([c["wavelength"][c["insname"] == ins] for c in cols.values()])
        b = np.concatenate([c["bandwidth"][c["insname"] == ins] for c in cols.values()])
        if "ref_wavelength" in cols.get("vis", {}):
            # Reference channels belong to the table even where all their own points are gone.
            sel = cols["vis"]["insname"] == ins
            rw, rb = cols["vis"]["ref_wavelength"][sel].ravel(), cols["vis"]["ref_bandwidth"][sel].ravel()
            keep = np.isfinite(rw)
            w, b = np.concatenate([w, rw[keep]]), np.concatenate([b, rb[keep]])
        w32 = (w * 1e-6).astype(np.float32)
        uniq, first = np.unique(w32, return_index=True)
        wave_tables[ins] = (uniq, (b[first] * 1e-6).astype(np.float32))

    # Station tables per ARRNAME.
    arrays = {}
    for k, c in cols.items():
        for name in dict.fromkeys(c["arrname"]):
            if name == "":
                continue
            sel = c["arrname"] == name
            used = set()
            for s in range(KIND_SPEC[k]["nsta"]):
                used.update(c[f"sta_index{s + 1}"][sel].tolist())
            if k != "flux" and -1 in used:
                raise DataError(f"{path}: {k} points of array {name!r} lack station indices (-1)")
            used.discard(-1)
            arrays.setdefault(name, set()).update(used)
    array_hdus = []
    for name, used in arrays.items():
        tab = array_tables.get(name)
        if tab is None:
            idx = sorted(used) or [1]
            tab = make_array_table([f"S{i}" for i in idx], np.zeros((len(idx), 3)), sta_index=idx,
                                   diameter=0.0)
        missing = used - set(tab["sta_index"].values.tolist())
        if missing:
            raise DataError(f"{path}: station index(es) {sorted(missing)} used by the data are not in "
                            f"the station table of array {name!r}")
        array_hdus.append(_array_hdu(name, tab))

    data_hdus = []
    for k in KINDS:
        if k in cols:
            data_hdus.extend(_data_hdus(k, cols[k], tid, wave_tables, path))

    all_mjd = np.concatenate([c["mjd"] for c in cols.values()])
    prim = fits.PrimaryHDU()
    h = prim.header
    single = lambda values, default: values[0] if len(values) == 1 else default  # noqa: E731
    h["ORIGIN"] = origin
    h["DATE"] = date or _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")
    h["DATE-OBS"] = _date_obs(all_mjd)
    h["CONTENT"] = "OIFITS2"
    h["TELESCOP"] = single(list(arrays), "MULTIPLE")
    h["INSTRUME"] = single(list(wave_tables), "MULTIPLE")
    h["OBSERVER"] = observer
    h["OBJECT"] = object_name or single(tnames, "MULTIPLE")
    h["INSMODE"] = insmode
    hdul = fits.HDUList([prim, _target_hdu(tnames, target_info), *array_hdus,
                         *(_wave_hdu(ins, w, b) for ins, (w, b) in wave_tables.items()), *data_hdus])
    path.parent.mkdir(parents=True, exist_ok=True)
    hdul.writeto(path, overwrite=overwrite, checksum=True)
    return path


def _date_obs(mjd) -> str:
    mjd = np.asarray(mjd, dtype=float)
    mjd = mjd[np.isfinite(mjd)]
    if not mjd.size:
        return "2000-01-01"
    # Plain calendar arithmetic: astropy Time warns ("dubious year") for the MJD = 0 that
    # some files carry, and a date is all DATE-OBS needs.
    return (_dt.datetime(1858, 11, 17) + _dt.timedelta(days=float(mjd.min()))).strftime("%Y-%m-%d")


def _target_hdu(tnames, info):
    def field(name, key, default):
        v = info.get(name, {}).get(key, default)
        return default if v is None else v

    n = len(tnames)
    spec = [("TARGET_ID", "I", None, np.arange(1, n + 1)),
            ("TARGET", "32A", None, np.array(tnames, dtype="U32"))]
    for key, fmt, unit, default in (("RAEP0", "D", "deg", 0.0), ("DECEP0", "D", "deg", 0.0),
                                    ("EQUINOX", "E", "yr", 2000.0), ("RA_ERR", "D", "deg", 0.0),
                                    ("DEC_ERR", "D", "deg", 0.0), ("SYSVEL", "D", "m/s", 0.0),
                                    ("VELTYP", "8A", None, "UNKNOWN"), ("VELDEF", "8A", None, "OPTICAL"),
                                    ("PMRA", "D", "deg/yr", 0.0), ("PMDEC", "D", "deg/yr", 0.0),
                                    ("PMRA_ERR", "D", "deg/yr", 0.0), ("PMDEC_ERR", "D", "deg/yr", 0.0),
                                    ("PARALLAX", "E", "deg", 0.0), ("PARA_ERR", "E", "deg", 0.0),
                                    ("SPECTYP", "32A", None, "UNKNOWN")):
        vals = [field(t, key.lower(), default) for t in tnames]
        spec.append((key, fmt, unit, np.array(vals, dtype=object if "A" in fmt else float)))
    if any("category" in info.get(t, {}) for t in tnames):
        spec.append(("CATEGORY", "3A", None, np.array([field(t, "category", "SCI") for t in tnames])))
    hdu = fits.BinTableHDU.from_columns(
        [fits.Column(name=n_, format=f, unit=u_, array=a if "A" not in f else np.array(a, dtype=str))
         for n_, f, u_, a in spec], name="OI_TARGET")
    hdu.header["OI_REVN"] = 2
    return hdu


def _array_hdu(name, tab):
    n = tab.sizes["station"]
    fovtype = [str(v) if str(v) in ("FWHM", "RADIUS") else "RADIUS" for v in tab["fovtype"].values]
    hdu = fits.BinTableHDU.from_columns([
        fits.Column(name="TEL_NAME", format="16A", array=np.array([str(v) for v in tab["tel_name"].values])),
        fits.Column(name="STA_NAME", format="16A", array=np.array([str(v) for v in tab["sta_name"].values])),
        fits.Column(name="STA_INDEX", format="I", array=tab["sta_index"].values.astype(np.int16)),
        fits.Column(name="DIAMETER", format="E", unit="m", array=tab["diameter"].values.astype(np.float32)),
        fits.Column(name="STAXYZ", format="3D", unit="m", array=tab["staxyz"].values.reshape(n, 3)),
        fits.Column(name="FOV", format="D", unit="arcsec", array=tab["fov"].values.astype(float)),
        fits.Column(name="FOVTYPE", format="6A", array=np.array(fovtype)),
    ], name="OI_ARRAY")
    h = hdu.header
    h["OI_REVN"] = 2
    h["ARRNAME"] = name
    h["FRAME"] = str(tab.attrs.get("frame", "GEOCENTRIC"))
    for key in ("ARRAYX", "ARRAYY", "ARRAYZ"):
        h[key] = (float(tab.attrs.get(key.lower(), 0.0)), "[m]")
    return hdu


def _wave_hdu(ins, w, b):
    hdu = fits.BinTableHDU.from_columns([
        fits.Column(name="EFF_WAVE", format="E", unit="m", array=w),
        fits.Column(name="EFF_BAND", format="E", unit="m", array=b)], name="OI_WAVELENGTH")
    hdu.header["OI_REVN"] = 2
    hdu.header["INSNAME"] = ins
    return hdu


def _data_hdus(kind, c, tid, wave_tables, path):
    spec = KIND_SPEC[kind]
    oi_data, oi_uv = _OI_DATA[kind]
    nsta = spec["nsta"]
    sta_names = [f"sta_index{s + 1}" for s in range(nsta)]
    table_keys = ["insname", "arrname"] + list(spec["extra"])
    frame = {k: c[k] for k in table_keys}
    if kind == "flux":
        frame["has_sta"] = c["sta_index1"] >= 0
    tables = pd.DataFrame(frame).groupby(list(frame), sort=False, dropna=False).indices
    hdus = []
    for key, idx in tables.items():
        key = dict(zip(frame, key if isinstance(key, tuple) else (key,)))
        idx = np.sort(idx)
        ins = key["insname"]
        w32, _ = wave_tables[ins]
        nw = w32.size
        chan = np.searchsorted(w32, (c["wavelength"][idx] * 1e-6).astype(np.float32))
        row_cols = ["file", "target", "mjd", "int_time"] + sta_names + list(spec["uv"])
        row_id = pd.DataFrame({k: c[k][idx] for k in row_cols}).groupby(
            row_cols, sort=False, dropna=False).ngroup().to_numpy()
        nrow = int(row_id.max()) + 1
        cell = row_id * nw + chan
        if np.unique(cell).size != cell.size:
            raise DataError(f"{path}: two {kind} points share one row and channel "
                            f"(instrument {ins!r}); they cannot be written to one OIFITS table")
        _, first = np.unique(row_id, return_index=True)
        rows = idx[first]  # one representative point per row, in row order
        columns = [fits.Column(name="TARGET_ID", format="I",
                               array=np.array([tid[t] for t in c["target"][rows]], dtype=np.int16))]
        if kind != "flux":
            columns.append(fits.Column(name="TIME", format="D", unit="s", array=np.zeros(nrow)))
        columns += [fits.Column(name="MJD", format="D", unit="day", array=c["mjd"][rows]),
                    fits.Column(name="INT_TIME", format="D", unit="s", array=c["int_time"][rows])]
        flux_unit = key.get("flux_unit") or None
        for oi_name, our in zip(oi_data, spec["data"]):
            grid = np.full((nrow, nw), np.nan)
            grid[row_id, chan] = c[our][idx]
            unit = "deg" if oi_name in _PHASE_COLS else (flux_unit if kind == "flux" else None)
            if kind == "vis" and oi_name in ("VISAMP", "VISAMPERR") and key["amptyp"] == "correlated flux":
                unit = "Jy"
            columns.append(fits.Column(name=oi_name, format=f"{nw}D", unit=unit, array=grid))
        for oi_name, our in zip(oi_uv, spec["uv"]):
            columns.append(fits.Column(name=oi_name, format="D", unit="m", array=c[our][rows]))
        if kind != "flux" or key["has_sta"]:
            sta = np.stack([c[s][rows] for s in sta_names], axis=1).astype(np.int16)
            columns.append(fits.Column(name="STA_INDEX", format=f"{nsta}I" if nsta > 1 else "I",
                                       array=sta if nsta > 1 else sta[:, 0]))
        flag = np.ones((nrow, nw), bool)
        flag[row_id, chan] = c["flag"][idx]
        columns.append(fits.Column(name="FLAG", format=f"{nw}L", array=flag))
        if kind == "vis" and "differential" in (key["amptyp"], key["phityp"]):
            columns.append(fits.Column(name="VISREFMAP", format=f"{nw * nw}L", dim=f"({nw},{nw})",
                                       array=_visrefmap(c, idx, row_id, chan, nrow, w32)))
        hdu = fits.BinTableHDU.from_columns(columns, name=spec["table"])
        h = hdu.header
        h["OI_REVN"] = 1 if kind == "flux" else 2
        h["DATE-OBS"] = _date_obs(c["mjd"][idx])
        h["INSNAME"] = ins
        if key["arrname"]:
            h["ARRNAME"] = key["arrname"]
        if kind == "vis":
            h["AMPTYP"] = key["amptyp"]
            h["PHITYP"] = key["phityp"]
        if kind == "flux":
            h["CALSTAT"] = key["calstat"]
        hdus.append(hdu)
    return hdus


def _visrefmap(c, idx, row_id, chan, nrow, w32):
    """VISREFMAP (nrow, nwave, nwave) of one table from the points' reference channels."""
    nw = w32.size
    refmap = np.ones((nrow, nw, nw), bool)
    if "ref_wavelength" not in c:
        return refmap
    ref = c["ref_wavelength"][idx]
    named = np.isfinite(ref).any(axis=1)
    refmap[row_id[named], chan[named]] = False
    p, j = np.nonzero(np.isfinite(ref))
    ref_chan = np.searchsorted(w32, (ref[p, j] * 1e-6).astype(np.float32))
    refmap[row_id[p], chan[p], ref_chan] = True
    return refmap
