"""The in-memory form of interferometric data: :class:`ObservationSet`.

Each observable kind (V², complex visibility, closure phase / triple product, flux) is one
:class:`xarray.Dataset` along a single flat dimension ``point``: one point is one
spectral channel of one row of one OIFITS data table. Flat points (rather than
rows × channels) let files with different wavelength tables, instruments and arrays sit
in one dataset, which is what the model evaluation and χ² need.

Layout (all kinds)
------------------
coordinates along ``point``:
    ``wavelength`` (µm, EFF_WAVE), ``bandwidth`` (µm, EFF_BAND), ``mjd`` (day),
    ``int_time`` (s), ``file`` (str), ``insname`` (str), ``arrname`` (str, "" if none),
    ``target`` (str), ``sta_index1`` … (int, OIFITS STA_INDEX; -1 if none)
data variables:
    ``flag`` (bool; always False unless the set was read with ``keep_flagged=True``)

per kind:
    ``vis2``  coords ``u``, ``v`` (m); variables ``vis2``, ``vis2_err``
    ``vis``   coords ``u``, ``v`` (m), ``amptyp``, ``phityp``; variables ``visamp``,
              ``visamp_err``, ``visphi``, ``visphi_err`` (phases in degrees); for
              differential data also ``ref_wavelength`` and ``ref_bandwidth`` (µm) along
              (``point``, ``ref``): the channels VISREFMAP names as the point's reference,
              NaN-padded (see :data:`REFERENCE_VARIABLES`)
    ``t3``    coords ``u1``, ``v1`` (baseline AB), ``u2``, ``v2`` (baseline BC) (m);
              variables ``t3amp``, ``t3amp_err``, ``t3phi``, ``t3phi_err`` (degrees)
    ``flux``  coords ``calstat``, ``flux_unit``; variables ``flux``, ``flux_err``
              (Jy when ``flux_unit == "Jy"``)

u points East and v North (OIFITS convention); (u, v) in metres, so the spatial frequency
is u / wavelength.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

import warnings

import numpy as np
import xarray as xr

from ..errors import DataError
from .bands import band_range

__all__ = ["ObservationSet", "KINDS", "KIND_SPEC", "REFERENCE_VARIABLES", "make_point_dataset",
           "baseline_lengths", "reference_from_map", "distinct_arrays"]

#: Observable kinds in a fixed order.
KINDS = ("vis2", "vis", "t3", "flux")

#: What each kind holds: its OIFITS table, data variables, (u, v) coordinates,
#: number of stations per point and kind-specific string coordinates.
KIND_SPEC = {
    "vis2": dict(table="OI_VIS2", data=("vis2", "vis2_err"), uv=("u", "v"), nsta=2, extra=()),
    "vis": dict(table="OI_VIS", data=("visamp", "visamp_err", "visphi", "visphi_err"),
                uv=("u", "v"), nsta=2, extra=("amptyp", "phityp")),
    "t3": dict(table="OI_T3", data=("t3amp", "t3amp_err", "t3phi", "t3phi_err"),
               uv=("u1", "v1", "u2", "v2"), nsta=3, extra=()),
    "flux": dict(table="OI_FLUX", data=("flux", "flux_err"), uv=(), nsta=1,
                 extra=("calstat", "flux_unit")),
}

_COMMON_FLOAT = ("wavelength", "bandwidth", "mjd", "int_time")
_COMMON_STR = ("file", "insname", "arrname", "target")
_UNITS = {
    "wavelength": "um", "bandwidth": "um", "mjd": "d", "int_time": "s",
    "u": "m", "v": "m", "u1": "m", "v1": "m", "u2": "m", "v2": "m",
    "visphi": "deg", "visphi_err": "deg", "t3phi": "deg", "t3phi_err": "deg",
    "ref_wavelength": "um", "ref_bandwidth": "um",
}
#: Variables of ``vis`` points along (``point``, ``ref``): the EFF_WAVE and EFF_BAND (µm)
#: of the channels of the same OIFITS row that VISREFMAP names as the point's reference
#: for a differential amplitude or phase, NaN-padded to the longest reference of the set.
#: Channels rather than indices, so the reference survives selections, flags and
#: concatenation of files with other wavelength tables.
REFERENCE_VARIABLES = ("ref_wavelength", "ref_bandwidth")

_DEFAULT_EXTRA = {"amptyp": "absolute", "phityp": "absolute", "calstat": "C", "flux_unit": "Jy"}


def _sta_names(kind):
    return tuple(f"sta_index{i + 1}" for i in range(KIND_SPEC[kind]["nsta"]))


def make_point_dataset(kind: str, columns: Mapping[str, np.ndarray]) -> xr.Dataset:
    """Build the dataset of one observable kind from flat per-point arrays.

    Parameters
    ----------
    kind : {"vis2", "vis", "t3", "flux"}
    columns : mapping of str to 1-D array
        Every coordinate and variable of the kind's layout (see module docstring), all of
        one length. Missing optional entries get defaults: ``flag`` False, station
        indices -1, ``amptyp``/``phityp`` "absolute", ``calstat`` "C", ``flux_unit`` "Jy".

    Returns
    -------
    xarray.Dataset
        Dimension ``point``; units in each variable's ``units`` attribute.
    """
    spec = KIND_SPEC[kind]
    n = len(np.asarray(columns[spec["data"][0]]))

    def get(name, default):
        if name in columns:
            arr = np.asarray(columns[name])
            if arr.shape != (n,):
                raise DataError(f"{kind}: column {name!r} has shape {arr.shape}, expected ({n},)")
            return arr
        return np.full(n, default)

    coords = {}
    for name in _COMMON_FLOAT + spec["uv"]:
        coords[name] = ("point", get(name, np.nan).astype(float))
    for name in _COMMON_STR + spec["extra"]:
        # Object arrays: one reference per point instead of a fixed-width copy of the
        # string, which keeps many-file sets small (a path × 10⁶ points would be ~100 MB).
        coords[name] = ("point", get(name, _DEFAULT_EXTRA.get(name, "")).astype(object))
    for name in _sta_names(kind):
        coords[name] = ("point", get(name, -1).astype(np.int32))
    data = {name: ("point", get(name, np.nan).astype(float)) for name in spec["data"]}
    data["flag"] = ("point", get("flag", False).astype(bool))
    if kind == "vis" and any(name in columns for name in REFERENCE_VARIABLES):
        ref = np.atleast_2d(np.asarray(columns.get("ref_wavelength"), float))
        if ref.shape[0] != n or ref.ndim != 2:
            raise DataError(f"vis: column 'ref_wavelength' has shape {ref.shape}, expected ({n}, m)")
        band = np.asarray(columns.get("ref_bandwidth", np.zeros(ref.shape)), float)
        if band.shape != ref.shape:
            raise DataError(f"vis: column 'ref_bandwidth' has shape {band.shape}, expected {ref.shape}")
        data["ref_wavelength"] = (("point", "ref"), ref)
        pad = ~np.isfinite(ref)
        if np.isfinite(band[pad]).any():   # readers pad both alike; copy only when they differ
            band = np.where(pad, np.nan, band)
        data["ref_bandwidth"] = (("point", "ref"), band)
    ds = xr.Dataset(data, coords=coords, attrs={"kind": kind, "oifits_table": spec["table"]})
    for name, unit in _UNITS.items():
        if name in ds.variables:
            ds[name].attrs["units"] = unit
    if kind == "flux":
        ds["flux"].attrs["units"] = ds["flux_err"].attrs["units"] = "see flux_unit"
    return ds


def baseline_lengths(ds: xr.Dataset) -> np.ndarray:
    """Projected baseline lengths of each point, m.

    Returns shape (n,) for V² and visibilities, (n, 3) for closure triangles (AB, BC, CA)
    and an empty (n, 0) array for fluxes.
    """
    if "u1" in ds.variables:
        u1, v1, u2, v2 = (ds[k].values for k in ("u1", "v1", "u2", "v2"))
        return np.stack([np.hypot(u1, v1), np.hypot(u2, v2), np.hypot(u1 + u2, v1 + v2)], axis=1)
    if "u" in ds.variables:
        return np.hypot(ds["u"].values, ds["v"].values)
    return np.zeros((ds.sizes["point"], 0))


def _take(ds: xr.Dataset, mask) -> xr.Dataset:
    return ds.isel(point=np.flatnonzero(np.asarray(mask, dtype=bool)))


def _as_tuple(names) -> tuple:
    if isinstance(names, str):
        return (names,)
    return tuple(names)


def distinct_arrays(held, new):
    """Add the station tables ``new`` to ``held`` (both ARRNAME → table), keeping different ones apart.

    Parameters
    ----------
    held : dict
        Tables kept so far; updated in place.
    new : dict
        Tables of another set or file.

    Returns
    -------
    dict
        ARRNAME of ``new`` → the name it has in ``held``: the same name, the name of an
        equal table already held, or a new name ``NAME~k`` when a table of that name with
        other stations is held already.
    """
    mapping = {}
    for name, tab in new.items():
        same = [n for n, t in held.items() if (n == name or n.startswith(f"{name}~")) and t.equals(tab)]
        if same:
            mapping[name] = same[0]
            continue
        alias, k = name, 1
        while alias in held:
            k += 1
            alias = f"{name}~{k}"
        held[alias] = tab
        mapping[name] = alias
    return mapping


class ObservationSet:
    """Interferometric data of any number of files, one dataset per observable kind.

    Parameters
    ----------
    vis2, vis, t3, flux : xarray.Dataset or None
        Point datasets (see :mod:`diskexplorer.data.observations` for the layout); None
        when the kind is absent.
    targets : dict, optional
        Target name → OI_TARGET fields (``raep0``, ``decep0`` in degrees, …).
    arrays : dict, optional
        Array name → station table (:class:`xarray.Dataset` along ``station``).
    files : sequence of str, optional
        Files the data came from.
    notes : sequence of str, optional
        Warnings raised while reading (lenient mode), kept for the record.

    Notes
    -----
    Sets are treated as immutable: every selection returns a new set and never modifies
    this one.
    """

    def __init__(self, vis2=None, vis=None, t3=None, flux=None, *, targets=None, arrays=None,
                 files=(), notes=()):
        self.vis2 = vis2
        self.vis = vis
        self.t3 = t3
        self.flux = flux
        self.targets = dict(targets or {})
        self.arrays = dict(arrays or {})
        self.files = tuple(files)
        self.notes = tuple(notes)

    # -- access -----------------------------------------------------------------------
    @property
    def kinds(self) -> tuple[str, ...]:
        """Observable kinds present (with at least one point)."""
        return tuple(k for k in KINDS if getattr(self, k) is not None and getattr(self, k).sizes["point"])

    def datasets(self) -> dict[str, xr.Dataset]:
        """The present datasets by kind."""
        return {k: getattr(self, k) for k in self.kinds}

    def n_points(self, kind: str | None = None):
        """Number of points of one kind, or a dict of all kinds when ``kind`` is None."""
        if kind is not None:
            ds = getattr(self, kind)
            return 0 if ds is None else int(ds.sizes["point"])
        return {k: self.n_points(k) for k in KINDS}

    @property
    def instruments(self) -> tuple[str, ...]:
        """Sorted INSNAMEs present."""
        return tuple(sorted({s for ds in self.datasets().values() for s in np.unique(ds["insname"].values)}))

    @property
    def target_names(self) -> tuple[str, ...]:
        """Sorted target names present in the data."""
        return tuple(sorted({s for ds in self.datasets().values() for s in np.unique(ds["target"].values)}))

    def _replace(self, **datasets) -> "ObservationSet":
        kw = {k: getattr(self, k) for k in KINDS}
        kw.update(datasets)
        return ObservationSet(**kw, targets=self.targets, arrays=self.arrays, files=self.files,
                              notes=self.notes)

    def _map(self, fn) -> "ObservationSet":
        return self._replace(**{k: fn(k, ds) for k, ds in self.datasets().items()})

    # -- selections -------------------------------------------------------------------
    def select_wavelength(self, wmin: float = 0.0, wmax: float = np.inf) -> "ObservationSet":
        """Keep points with ``wmin <= wavelength <= wmax`` (µm)."""
        return self._map(lambda k, ds: _take(ds, (ds["wavelength"] >= wmin) & (ds["wavelength"] <= wmax)))

    def select_band(self, *names: str) -> "ObservationSet":
        """Keep points inside any of the named interferometric bands.

        Parameters
        ----------
        *names : str
            Band names among J, H, K, L, M, N; ranges (µm) are those of
            :data:`diskexplorer.data.bands.INTERFEROMETRIC_BANDS`: J 1.10–1.40,
            H 1.45–1.85, K 1.95–2.55, L 2.80–4.20, M 4.40–5.30, N 7.50–13.50.
        """
        if not names:
            raise DataError("select_band needs at least one band name")
        ranges = [band_range(n) for n in names]

        def keep(k, ds):
            w = ds["wavelength"].values
            return _take(ds, np.logical_or.reduce([(w >= lo) & (w <= hi) for lo, hi in ranges]))

        return self._map(keep)

    def select_instrument(self, *names: str) -> "ObservationSet":
        """Keep points whose INSNAME is one of ``names`` (exact match after stripping)."""
        wanted = {n.strip() for n in names}
        return self._map(lambda k, ds: _take(ds, np.isin(ds["insname"].values, list(wanted))))

    def select_target(self, *names: str) -> "ObservationSet":
        """Keep points of the named targets (case-insensitive)."""
        wanted = {n.strip().lower() for n in names}
        return self._map(lambda k, ds: _take(
            ds, np.array([t.lower() in wanted for t in ds["target"].values], dtype=bool)))

    def select_baseline(self, bmin: float = 0.0, bmax: float = np.inf) -> "ObservationSet":
        """Keep points whose projected baseline(s) lie in [bmin, bmax] (m).

        A closure triangle is kept only when all three of its baselines lie in the range;
        flux points (no baseline) are kept unchanged.
        """
        def keep(k, ds):
            if k == "flux":
                return ds
            b = baseline_lengths(ds)
            ok = (b >= bmin) & (b <= bmax)
            return _take(ds, ok.all(axis=1) if ok.ndim == 2 else ok)

        return self._map(keep)

    def select_unflagged(self) -> "ObservationSet":
        """Drop points whose ``flag`` is set (only relevant after ``keep_flagged=True``)."""
        return self._map(lambda k, ds: _take(ds, ~ds["flag"].values))

    # -- errors -----------------------------------------------------------------------
    def with_error_floor(self, *, vis2_relative: float = 0.0, vis2_absolute: float = 0.0,
                         phase: float = 0.0, amplitude_relative: float = 0.0,
                         combine: str = "max") -> "ObservationSet":
        """Return a copy with error bars raised to a floor.

        Parameters
        ----------
        vis2_relative : float
            Floor on ``vis2_err`` as a fraction of ``|vis2|`` (0.05 = 5 %).
        vis2_absolute : float
            Absolute floor on ``vis2_err`` (V² units). The larger of the two floors applies.
        phase : float
            Absolute floor on ``t3phi_err`` and ``visphi_err``, degrees.
        amplitude_relative : float
            Floor on ``t3amp_err`` and ``visamp_err`` as a fraction of the amplitude.
        combine : {"max", "quadrature"}
            ``max``: err = max(err, floor); ``quadrature``: err = sqrt(err² + floor²).

        Returns
        -------
        ObservationSet
        """
        if combine not in ("max", "quadrature"):
            raise DataError(f"combine must be 'max' or 'quadrature', got {combine!r}")
        for name, val in (("vis2_relative", vis2_relative), ("vis2_absolute", vis2_absolute),
                          ("phase", phase), ("amplitude_relative", amplitude_relative)):
            if not np.isfinite(val) or val < 0:
                raise DataError(f"error floor {name} must be finite and >= 0, got {val!r}")

        def comb(err, floor):
            if combine == "max":
                # fmax: a NaN error (e.g. T3AMP not measured) stays NaN only if the floor is NaN too.
                return np.fmax(err, floor)
            return np.sqrt(err ** 2 + floor ** 2)

        def apply(k, ds):
            ds = ds.copy()
            if k == "vis2":
                floor = np.maximum(vis2_relative * np.abs(ds["vis2"].values), vis2_absolute)
                ds["vis2_err"].values = comb(ds["vis2_err"].values, floor)
            if k in ("t3", "vis"):
                amp, phi = ("t3amp", "t3phi") if k == "t3" else ("visamp", "visphi")
                ds[phi + "_err"].values = comb(ds[phi + "_err"].values, phase)
                ds[amp + "_err"].values = comb(ds[amp + "_err"].values,
                                               amplitude_relative * np.abs(ds[amp].values))
            return ds

        return self._map(apply)

    # -- combination ------------------------------------------------------------------
    @classmethod
    def concat(cls, sets: Iterable["ObservationSet"]) -> "ObservationSet":
        """Concatenate several sets into one (points appended in order).

        Target tables are merged (the first definition of a name wins). Station tables
        are kept apart: an array of a name already held with other stations (another
        configuration, another night) is given a name of its own (``NAME~2``, …) in
        the combined set, so its points keep their own stations and the combined set can
        be judged, filtered and written (:func:`distinct_arrays`).
        """
        sets = list(sets)
        if not sets:
            return cls()
        arrays = {}
        renamed = []
        for s in sets:
            mapping = distinct_arrays(arrays, s.arrays)
            moved = {k: v for k, v in mapping.items() if k != v}
            for old, new in moved.items():
                warnings.warn(f"array {old!r} of {', '.join(map(str, s.files)) or 'a set'} has other stations than "
                              f"the array of that name already held: kept apart as {new!r}", stacklevel=2)
            renamed.append(s._rename_arrays(mapping) if moved else s)
        sets = renamed
        out = {}
        for k in KINDS:
            parts = [getattr(s, k) for s in sets if getattr(s, k) is not None]
            parts = [p for p in parts if p.sizes["point"]]
            if k == "vis":
                parts = _common_reference(parts)
            out[k] = (xr.concat(parts, dim="point", data_vars="all", coords="all", compat="equals",
                                join="outer", combine_attrs="override") if len(parts) > 1
                      else (parts[0] if parts else None))
        targets, files, notes = {}, [], []
        for s in sets:
            for name, info in s.targets.items():
                targets.setdefault(name, info)
            files.extend(f for f in s.files if f not in files)
            notes.extend(s.notes)
        return cls(**out, targets=targets, arrays=arrays, files=files, notes=notes)

    def _rename_arrays(self, mapping):
        """A copy whose ARRNAMEs are renamed by ``mapping`` (points and station tables)."""
        def rename(k, ds):
            names = np.array([mapping.get(n, n) for n in np.asarray(ds["arrname"].values).astype(object)], dtype=object)
            if "arrname" in ds.coords:
                return ds.assign_coords(arrname=("point", names))
            return ds.assign(arrname=("point", names))

        out = self._map(rename)
        out.arrays = {mapping.get(n, n): tab for n, tab in self.arrays.items()}
        return out

    def __add__(self, other: "ObservationSet") -> "ObservationSet":
        if not isinstance(other, ObservationSet):
            return NotImplemented
        return ObservationSet.concat([self, other])

    # -- report -----------------------------------------------------------------------
    def summary(self) -> str:
        """A short human-readable description: files, kinds, instruments, ranges."""
        lines = [f"ObservationSet: {len(self.files)} file(s), targets: "
                 f"{', '.join(self.target_names) or '-'}"]
        for k in KINDS:
            ds = getattr(self, k)
            n = 0 if ds is None else ds.sizes["point"]
            if not n:
                lines.append(f"  {k:5s}: no points")
                continue
            w = ds["wavelength"].values
            line = (f"  {k:5s}: {n} points, instruments {', '.join(sorted(set(ds['insname'].values)))}; "
                    f"wavelength {np.nanmin(w):.4g}-{np.nanmax(w):.4g} um")
            b = baseline_lengths(ds)
            if b.size:
                line += f"; baselines {np.nanmin(b):.4g}-{np.nanmax(b):.4g} m"
            mjd = ds["mjd"].values
            if np.isfinite(mjd).any():
                line += f"; MJD {np.nanmin(mjd):.6g}-{np.nanmax(mjd):.6g}"
            if ds["flag"].values.any():
                line += f"; {int(ds['flag'].values.sum())} flagged"
            lines.append(line)
        if self.notes:
            lines.append(f"  {len(self.notes)} warning(s) while reading")
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.summary()

    # -- construction -----------------------------------------------------------------
    @classmethod
    def from_arrays(cls, *, vis2=None, vis=None, t3=None, flux=None, insname: str = "SIMULATED",
                    arrname: str = "SIMULATED", target: str = "SIMULATED", stations=None,
                    diameter: float = 1.0, frame: str = "GEOCENTRIC", target_info=None,
                    file: str = "") -> "ObservationSet":
        """Build a set from plain arrays (e.g. model values plus noise on a uv sampling).

        Parameters
        ----------
        vis2, vis, t3, flux : mapping of str to array_like, optional
            Columns of each kind, named as in the dataset layout (``u``, ``v``,
            ``wavelength``, ``vis2``, ``vis2_err``, ``mjd``, ``sta_index1``, …). Either all
            flat per-point arrays of one length, or *row × channel* form: data arrays of
            shape (nrow, nwave), ``wavelength`` and ``bandwidth`` of shape (nwave,), and
            every other column of shape (nrow,) or a scalar — it is broadcast to points.
            Units: wavelength and bandwidth µm, u/v m, mjd day, int_time s, phases degrees,
            flux Jy. ``bandwidth`` defaults to the channel spacing, ``mjd`` to 51544.5,
            station indices to (1, 2) / (1, 2, 3). Differential ``vis`` (``amptyp`` or
            ``phityp`` "differential") in row × channel form takes ``visrefmap``, bool of
            shape (nwave, nwave) or (nrow, nwave, nwave) as in
            :func:`reference_from_map` (default: every channel of the row); flat points
            take ``ref_wavelength``/``ref_bandwidth`` of shape (n, m) instead.
        insname, arrname, target : str
            Defaults for points that do not give their own.
        stations : mapping of str to (x, y, z), optional
            Station name → coordinates (m) of the array ``arrname``; station indices are
            1, 2, … in the given order.
        diameter : float
            Telescope diameter written to the array table, m.
        frame : {"GEOCENTRIC", "SKY"}
            OI_ARRAY coordinate frame of ``stations``.
        target_info : mapping, optional
            OI_TARGET fields of ``target`` (``raep0``, ``decep0`` in degrees, …).
        file : str
            Value of the ``file`` coordinate.

        Returns
        -------
        ObservationSet

        Examples
        --------
        >>> import numpy as np
        >>> obs = ObservationSet.from_arrays(vis2=dict(
        ...     u=[10.0, 20.0], v=[0.0, 5.0], wavelength=np.array([2.0, 2.2]),
        ...     vis2=np.full((2, 2), 0.8), vis2_err=np.full((2, 2), 0.02)))
        >>> obs.n_points("vis2")
        4
        """
        out = {}
        defaults = dict(insname=insname, arrname=arrname, target=target, file=file,
                        mjd=51544.5, int_time=0.0)
        for kind, cols in (("vis2", vis2), ("vis", vis), ("t3", t3), ("flux", flux)):
            if cols is None:
                continue
            spec = KIND_SPEC[kind]
            missing = [c for c in ("wavelength",) + spec["uv"] + spec["data"] if c not in cols]
            if missing:
                raise DataError(f"from_arrays: {kind} lacks column(s) {', '.join(missing)}")
            cols = dict(cols)
            refmap = cols.pop("visrefmap", None) if kind == "vis" else None
            ref = {k: cols.pop(k) for k in REFERENCE_VARIABLES if kind == "vis" and k in cols}
            flat = _flatten_columns(kind, cols)
            n = len(flat[spec["data"][0]])
            if kind == "vis":
                flat.update(ref or _reference_columns(cols, refmap))
            for name, val in defaults.items():
                flat.setdefault(name, np.full(n, val, dtype=object if isinstance(val, str) else float))
            if kind != "flux":
                for i, name in enumerate(_sta_names(kind)):
                    flat.setdefault(name, np.full(n, i + 1))
            out[kind] = make_point_dataset(kind, flat)
        arrays = {}
        if stations is not None:
            names = list(stations)
            xyz = np.array([stations[s] for s in names], dtype=float).reshape(len(names), 3)
            arrays[arrname] = make_array_table(names, xyz, diameter=diameter, frame=frame)
        targets = {target: dict(target_info or {})}
        return cls(**out, targets=targets, arrays=arrays, files=(file,) if file else ())


def reference_from_map(visrefmap, wavelength, bandwidth, rows, channels):
    """The reference channels of points from an OIFITS VISREFMAP.

    Parameters
    ----------
    visrefmap : ndarray of bool, shape (nrow, nwave, nwave)
        VISREFMAP of one OI_VIS table as numpy reads it: ``visrefmap[r, i, j]`` is True
        when channel j is part of the reference of channel i in row r (the FITS cell
        (j + 1, i + 1) of TDIM = (NWAVE, NWAVE)). Maps of the usual kinds (all channels,
        all others) are symmetric, so the order of the two indices does not matter for them.
    wavelength, bandwidth : ndarray, shape (nwave,)
        EFF_WAVE and EFF_BAND of the table's channels, µm.
    rows, channels : ndarray of int, shape (n,)
        Row and channel of each point.

    Returns
    -------
    ref_wavelength, ref_bandwidth : ndarray, shape (n, m)
        The reference channels of each point, NaN-padded; m is the longest reference.
    """
    refmap = np.asarray(visrefmap, bool)[np.asarray(rows), np.asarray(channels)]
    # Most points share a handful of map rows (all channels, all others): sort each
    # distinct row once. Packed bits make the rows short keys for np.unique.
    packed = np.packbits(refmap, axis=1)
    if packed.size:
        keys = packed.view(np.dtype((np.void, packed.shape[1]))).ravel()
        _, first, which = np.unique(keys, return_index=True, return_inverse=True)
        refmap, which = refmap[first], which.ravel()
    else:
        which = np.arange(refmap.shape[0])
    count = refmap.sum(axis=1)
    m = int(count.max()) if count.size else 0
    # Stable sort of "not in the reference" puts each point's reference channels first, in order.
    order = np.argsort(~refmap, axis=1, kind="stable")[:, :m][which]
    count = count[which]
    pad = np.arange(m)[None, :] >= count[:, None]
    wl = np.where(pad, np.nan, np.asarray(wavelength, float)[order])
    bw = np.where(pad, np.nan, np.asarray(bandwidth, float)[order])
    return wl, bw


def _common_reference(parts):
    """Give every vis part the reference variables with one ``ref`` length (NaN-padded)."""
    if not any("ref_wavelength" in p for p in parts):
        return parts
    m = max(p.sizes.get("ref", 0) for p in parts)
    out = []
    for p in parts:
        have = p.sizes.get("ref", 0) if "ref_wavelength" in p else 0
        if "ref_wavelength" in p and have == m:
            out.append(p)
            continue
        grids = {}
        for name in REFERENCE_VARIABLES:
            grid = np.full((p.sizes["point"], m), np.nan)
            if name in p:
                grid[:, :have] = p[name].values
            grids[name] = (("point", "ref"), grid, {"units": "um"})
        out.append(p.drop_vars([n for n in REFERENCE_VARIABLES if n in p]).assign(grids))
    return out


def make_array_table(sta_names, staxyz, *, tel_names=None, sta_index=None, diameter=1.0,
                     fov=None, fovtype="RADIUS", frame="GEOCENTRIC", arrayxyz=(0.0, 0.0, 0.0)):
    """Build a station table (the content of one OI_ARRAY).

    Parameters
    ----------
    sta_names : sequence of str
    staxyz : array_like, shape (n, 3)
        Station coordinates, m, relative to the array centre (``arrayxyz``, m).
    tel_names : sequence of str, optional
        Telescope names (default: the station names).
    sta_index : sequence of int, optional
        OIFITS station indices (default 1 … n).
    diameter : float or array_like
        Telescope diameters, m.
    fov : float or array_like, optional
        Field of view, arcsec (default NaN: unknown).
    fovtype : {"FWHM", "RADIUS"}
    frame : {"GEOCENTRIC", "SKY"}

    Returns
    -------
    xarray.Dataset
        Dimension ``station`` (coordinate ``sta_index``), variables ``tel_name``,
        ``sta_name``, ``diameter`` (m), ``staxyz`` (station, xyz; m), ``fov`` (arcsec),
        ``fovtype``; attributes ``frame``, ``arrayx``, ``arrayy``, ``arrayz`` (m).
    """
    n = len(sta_names)
    idx = np.arange(1, n + 1) if sta_index is None else np.asarray(sta_index, dtype=np.int32)
    return xr.Dataset(
        {
            "tel_name": ("station", np.array(list(tel_names or sta_names), dtype=object)),
            "sta_name": ("station", np.array(list(sta_names), dtype=object)),
            "diameter": ("station", np.broadcast_to(np.asarray(diameter, dtype=float), (n,)).copy(),
                         {"units": "m"}),
            "staxyz": (("station", "xyz"), np.asarray(staxyz, dtype=float).reshape(n, 3), {"units": "m"}),
            "fov": ("station", np.broadcast_to(np.asarray(np.nan if fov is None else fov, dtype=float),
                                               (n,)).copy(), {"units": "arcsec"}),
            "fovtype": ("station", np.full(n, fovtype, dtype=object)),
        },
        coords={"sta_index": ("station", idx.astype(np.int32))},
        attrs={"frame": frame, "arrayx": float(arrayxyz[0]), "arrayy": float(arrayxyz[1]),
               "arrayz": float(arrayxyz[2])},
    )


__all__.append("make_array_table")

_CHANNEL_COLUMNS = ("wavelength", "bandwidth")


def _reference_columns(cols, refmap):
    """``ref_*`` columns of row × channel vis input that is differential (else none)."""
    kinds = {str(np.asarray(cols.get(k, "absolute")).ravel()[0]).lower() for k in ("amptyp", "phityp")}
    data = np.asarray(cols["visamp"])
    if "differential" not in kinds and refmap is None:
        return {}
    if data.ndim != 2:
        raise DataError("from_arrays: differential vis needs row × channel columns (or ref_wavelength per point)")
    nrow, nwave = data.shape
    wave = np.asarray(cols["wavelength"], float)
    band = np.asarray(cols["bandwidth"], float) if "bandwidth" in cols else (
        np.abs(np.gradient(wave)) if wave.size > 1 else np.zeros(nwave))
    refmap = np.ones((nwave, nwave), bool) if refmap is None else np.asarray(refmap, bool)
    if refmap.shape == (nwave, nwave):
        refmap = np.broadcast_to(refmap, (nrow, nwave, nwave))
    if refmap.shape != (nrow, nwave, nwave):
        raise DataError(f"from_arrays: vis column 'visrefmap' has shape {refmap.shape}, expected "
                        f"{(nwave, nwave)} or {(nrow, nwave, nwave)}")
    rows, chans = np.divmod(np.arange(nrow * nwave), nwave)
    wl, bw = reference_from_map(refmap, wave, band, rows, chans)
    return {"ref_wavelength": wl, "ref_bandwidth": bw}


def _flatten_columns(kind, cols):
    """Broadcast row × channel columns to flat per-point arrays (see from_arrays)."""
    spec = KIND_SPEC[kind]
    arrs = {k: np.asarray(v) for k, v in cols.items()}
    data_ndims = {arrs[d].ndim for d in spec["data"] if d in arrs}
    if data_ndims == {1} or data_ndims == {0}:
        n = arrs[spec["data"][0]].size
        flat = {k: np.broadcast_to(v, (n,)).copy() if v.ndim == 0 else v.ravel() for k, v in arrs.items()}
        if "bandwidth" not in flat:
            flat["bandwidth"] = np.zeros(n)
        return flat
    if data_ndims != {2}:
        raise DataError(f"from_arrays: {kind} data arrays must be all 1-D (points) or all 2-D "
                        f"(rows, channels), got dimensions {sorted(data_ndims)}")
    nrow, nwave = arrs[spec["data"][0]].shape
    wave = arrs["wavelength"]
    if wave.ndim == 1 and "bandwidth" not in arrs:
        arrs["bandwidth"] = np.abs(np.gradient(wave)) if wave.size > 1 else np.zeros(nwave)
    flat = {}
    for k, v in arrs.items():
        if v.ndim == 0:
            v = np.broadcast_to(v, (nrow, nwave))
        elif v.ndim == 1:
            if k in _CHANNEL_COLUMNS:
                if v.shape != (nwave,):
                    raise DataError(f"from_arrays: {kind} column {k!r} has shape {v.shape}, expected ({nwave},)")
                v = np.broadcast_to(v[None, :], (nrow, nwave))
            else:
                if v.shape != (nrow,):
                    raise DataError(f"from_arrays: {kind} column {k!r} has shape {v.shape}, expected ({nrow},)")
                v = np.broadcast_to(v[:, None], (nrow, nwave))
        elif v.shape != (nrow, nwave):
            raise DataError(f"from_arrays: {kind} column {k!r} has shape {v.shape}, expected {(nrow, nwave)}")
        flat[k] = np.ascontiguousarray(v).ravel()
    return flat
