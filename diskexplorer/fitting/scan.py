"""χ² grid scans over two or more parameters of a scene, on dask.distributed or in process.

A scan sets the scanned parameters (addressed by path, e.g. ``rings.0.t_in``) to every
point of a regular grid, keeps the rest of the scene fixed — or refines chosen parameters
locally at each point — and records the weighted total χ² and the χ² of every data kind
in an :class:`xarray.Dataset`.

A scan axis over a mass fraction (``rings.<k>.dust.<component>``) sets that fraction and
rescales the ring's other fractions proportionally, so that they still sum to 1
(:func:`~diskexplorer.fitting.paths.set_values`); the result says so in its attribute
``fraction_rule`` and in the axis coordinate's ``comment``.

Execution: the grid is cut into chunks; each task evaluates a whole chunk with one shared
:class:`~diskexplorer.fitting.Comparison`. The data travel to each worker once
(``client.scatter(..., broadcast=True)``) and the comparison built from them is cached on
the worker (:mod:`~diskexplorer.fitting.scan_worker`), so no grid point pickles the data.
The scattered data are kept on the cluster while the same client scans the same data
again (the app scans a grid in blocks of rows), and are released when other data come.
Workers read no files: everything they need (data, scene, registered dust species)
travels from the submitting process, so a remote worker needs only the same
diskexplorer version installed.

``scheduler="local"`` uses one :class:`distributed.LocalCluster` per process, started by
the first scan that asks for it and kept warm for every later one (:func:`local_client`);
it is closed when the process exits (or by :func:`close_local_cluster`).

Use from a widget
-----------------
``progress(done, total)``, ``on_chunk(start, chi2)`` and ``cancel()`` are called from the
thread running :func:`scan_grid`, after every finished chunk (``cancel`` also every
~0.1 s while waiting on a cluster). To keep a notebook responsive, run the scan in a :class:`threading.Thread`, let
``progress`` set a progress bar's value, and pass ``cancel=stop_event.is_set`` with a
:class:`threading.Event` set by a "Stop" button. A cancelled scan cancels its pending
tasks and returns the partial dataset (unevaluated points NaN, ``attrs["status"] ==
"cancelled"``).
"""
from __future__ import annotations

import atexit
import json
import math
import os
import re
import threading
import time
import uuid
import weakref
from pathlib import Path

import numpy as np
import xarray as xr

from ..errors import ParameterError
from .comparison import Comparison
from .paths import (canonical_path, fraction_path, fraction_ring, get_value, is_fraction_path, parameter_paths,
                    spec_for)
from ..dust.species import user_species
from .scan_worker import evaluate_chunk

__all__ = ["FRACTION_RULE", "scan_grid", "best_point", "confidence_levels", "write_scan", "axis_values", "safe_name",
           "local_client", "close_local_cluster"]

_POLL_S = 0.1  # how often a waiting scan polls cancel() and the futures

#: What a scan axis over a mass fraction does to the ring's other fractions (netCDF
#: attributes of the result, and the explorer's scan page).
FRACTION_RULE = ("a scan axis over a mass fraction (rings.<k>.dust.<component>) sets that fraction and "
                 "rescales the ring's other fractions proportionally, so that the ring's fractions sum to 1")


# ------------------------------------------------------------------------------ axes
def safe_name(path):
    """A variable-name-safe form of a parameter path: ``rings.0.t_in`` → ``rings_0_t_in``."""
    return re.sub(r"\W", "_", path)


def axis_values(spec):
    """The grid values of one axis.

    Parameters
    ----------
    spec : array_like or tuple
        Either the values themselves (list or array, any order, ≥ 1 finite value), or a
        tuple ``(lo, hi, n)`` / ``(lo, hi, n, "log")`` / ``(lo, hi, n, "linear")``: n
        values from lo to hi inclusive, evenly spaced in the value or in its logarithm.
        Only a *tuple* whose third entry is an integer is read as a range.

    Returns
    -------
    ndarray of float

    Raises
    ------
    ParameterError
        Malformed specification (n < 1, non-positive log range, NaN values).
    """
    if isinstance(spec, tuple) and len(spec) in (3, 4) and isinstance(spec[2], (int, np.integer)) \
            and not isinstance(spec[2], bool):
        lo, hi, n = float(spec[0]), float(spec[1]), int(spec[2])
        scale = spec[3] if len(spec) == 4 else "linear"
        if n < 1:
            raise ParameterError(f"scan axis {spec!r}: n = {n}; expected ≥ 1 points")
        if scale == "log":
            if not (lo > 0 and hi > 0):
                raise ParameterError(f"scan axis {spec!r}: a log axis needs lo > 0 and hi > 0")
            values = np.geomspace(lo, hi, n)
        elif scale == "linear":
            values = np.linspace(lo, hi, n)
        else:
            raise ParameterError(f"scan axis {spec!r}: scale {scale!r}; expected 'log' or 'linear'")
    else:
        values = np.atleast_1d(np.asarray(spec, dtype=float))
        if values.ndim != 1 or values.size < 1:
            raise ParameterError(f"scan axis values must be a 1-D sequence, got shape {values.shape}")
    if not np.all(np.isfinite(values)):
        raise ParameterError(f"scan axis {spec!r}: values must be finite")
    return values


def _parse_axes(scene, axes):
    items = list(axes.items()) if hasattr(axes, "items") else list(axes)
    if not items:
        raise ParameterError("scan_grid: no axes given; expected {path: values or (lo, hi, n[, 'log'])}")
    paths, values = [], []
    for item in items:
        try:
            path, spec = item
        except (TypeError, ValueError):
            raise ParameterError(f"scan_grid: axis {item!r}; expected (path, values) pairs") from None
        path = canonical_path(scene, path)
        if path in paths:
            raise ParameterError(f"scan_grid: axis {path} given twice")
        vals = axis_values(spec)
        owner = spec_for(path)
        for v in vals:  # refuse values no scene could hold before any work is sent out
            if not owner.contains(v):
                raise ParameterError(f"scan axis {path} = {float(v)!r} {owner.unit}".rstrip()
                                     + f" is outside the allowed range {owner.describe_range()}")
        paths.append(path)
        values.append(vals)
    for path in paths:
        if is_fraction_path(path):
            k = fraction_ring(path)
            held = {p for p in paths if fraction_ring(p) == k}
            others = [key for key, _ in scene.rings[k].dust.fractions if fraction_path(k, key) not in held]
            if not others and len(held) == 1:
                raise ParameterError(f"scan axis {path}: ring {k}'s dust holds no other component to take up "
                                     "the rest when the fraction changes (the fractions of a ring sum to 1)")
    return paths, values


# ------------------------------------------------------------------------------ data
def _payload(data):
    """(comparison, payload dict) from a Comparison or a data dict."""
    if isinstance(data, Comparison):
        interf = data.observer.interferometric
        accuracy = interf.accuracy if interf is not None else 1
        payload = dict(observations=data.observations, photometry=data.photometry,
                       spectrum=data.spectrum, weights=dict(data.weights), accuracy=accuracy,
                       bandpass=data.bandpass)
        return data, payload
    if isinstance(data, dict):
        extra = set(data) - {"observations", "photometry", "spectrum", "weights", "accuracy", "paths",
                             "bandpass"}
        if extra:
            raise ParameterError(f"scan_grid: data has unknown key(s) {sorted(extra)}; expected "
                                 "observations, photometry, spectrum (and weights, accuracy, bandpass)")
        payload = dict(observations=data.get("observations"), photometry=data.get("photometry"),
                       spectrum=data.get("spectrum"), weights=dict(data.get("weights") or {}),
                       accuracy=data.get("accuracy", 1), bandpass=data.get("bandpass", True))
        comp = Comparison(payload["observations"], payload["photometry"], payload["spectrum"],
                          weights=payload["weights"], accuracy=payload["accuracy"],
                          bandpass=payload["bandpass"])
        return comp, payload
    raise ParameterError(f"scan_grid: data must be a Comparison or a dict(observations=..., "
                         f"photometry=..., spectrum=...), got {type(data).__name__}")


# Comparison -> (weights, token): hashing the demo data takes ~20 ms, paid once per
# comparison rather than once per scan (the app scans with the same comparison again).
_TOKENS = weakref.WeakKeyDictionary()


def _token_of(data, payload):
    if not isinstance(data, Comparison):
        return _token(payload)
    # The worker's cached comparison is found by this token: it must change with anything
    # that changes χ² besides the data (weights, the channel-bandpass choice).
    weights = (sorted(payload["weights"].items()), repr(payload.get("bandpass", True)))
    known = _TOKENS.get(data)
    if known is not None and known[0] == weights:
        return known[1]
    token = _token(payload)
    _TOKENS[data] = (weights, token)
    return token


def _token(payload):
    """A content token of the data, so a persistent cluster reuses its cached comparison."""
    try:
        from dask.base import tokenize

        return "scan-data-" + tokenize(payload)
    except Exception:  # objects dask cannot hash deterministically: a fresh token is still correct
        return "scan-data-" + uuid.uuid4().hex


def _scene_repr(scene, free):
    """The scene as a JSON string (the starting-point document when it can be built)."""
    try:
        from .start_document import export_start

        return json.dumps(export_start(scene, free=free)["scene"], default=str)
    except Exception:  # e.g. dust the document cannot describe: fall back to the plain values
        return json.dumps({p: get_value(scene, p) for p in parameter_paths(scene)}
                          | {"ring_names": [r.name for r in scene.rings]}, default=str)


# ------------------------------------------------------------------------------ execution
_LOCAL = {"cluster": None, "client": None}
_LOCAL_LOCK = threading.Lock()


def local_client(n_workers=None, start=True):
    """The client of this process's shared local dask cluster, started on first use.

    One :class:`distributed.LocalCluster` on 127.0.0.1 (single-threaded worker processes,
    one per core or ``n_workers``) serves every ``scheduler="local"`` scan of the process,
    so only the first scan pays its start-up (2–10 s on a busy 2-core machine). It is
    closed when the process ends (an ``atexit`` hook: a notebook kernel's shutdown) or by
    :func:`close_local_cluster`.

    Parameters
    ----------
    n_workers : int, optional
        Workers of the cluster when it is started; ignored when it is already running.
    start : bool
        Start the cluster if none is running (default); with False, answer None instead.

    Returns
    -------
    distributed.Client or None
    """
    with _LOCAL_LOCK:
        client = _LOCAL["client"]
        if client is not None and client.status == "running":
            return client
        if not start:
            return None
        _close_local()
        # Deferred: distributed costs ~1 s to import; serial scans never pay it.
        from distributed import Client, LocalCluster

        # Spawned worker processes, one single-threaded worker per core: the engine is
        # numpy-bound and the GIL would serialise threads. Loopback only.
        cluster = LocalCluster(n_workers=n_workers or os.cpu_count() or 1, threads_per_worker=1,
                               processes=True, host="127.0.0.1", dashboard_address="127.0.0.1:0")
        _LOCAL["cluster"], _LOCAL["client"] = cluster, Client(cluster)
        return _LOCAL["client"]


def _close_local():
    client, cluster = _LOCAL["client"], _LOCAL["cluster"]
    _LOCAL["client"] = _LOCAL["cluster"] = None
    for obj in (client, cluster):
        if obj is not None:
            try:
                obj.close()
            except Exception:  # noqa: BLE001 - closing at exit is best effort
                pass


def close_local_cluster():
    """Shut down the shared local cluster of :func:`local_client`, if one is running."""
    with _LOCAL_LOCK:
        _close_local()


atexit.register(close_local_cluster)


def _open_client(scheduler, n_workers):
    """(client, owned objects to close) for a scheduler specification."""
    from distributed import Client

    if isinstance(scheduler, Client):
        return scheduler, []
    if isinstance(scheduler, str) and scheduler == "local":
        return local_client(n_workers), []
    if isinstance(scheduler, str) and "://" in scheduler:
        client = Client(scheduler, timeout="10s")
        return client, [client]
    if hasattr(scheduler, "scheduler_address"):  # a cluster object (LocalCluster, ...)
        client = Client(scheduler)
        return client, [client]
    raise ParameterError(f"scan_grid: scheduler {scheduler!r}; expected None or 'serial', 'local', an "
                         "address such as 'tcp://127.0.0.1:8786', a distributed.Client or a cluster")


def _address(client):
    try:
        return str(client.scheduler.address)
    except Exception:
        return "unknown"


def _n_workers(client):
    try:
        return max(1, len(client.scheduler_info().get("workers", {})))
    except Exception:
        return 1


def scan_grid(scene, data, axes, *, refine_free=None, refine_max_nfev=10, scheduler=None,
              n_workers=None, chunk_size=None, progress=None, cancel=None, on_chunk=None):
    """χ² of a scene over a regular grid of parameters.

    Parameters
    ----------
    scene : Scene
        The current state: the scanned parameters are replaced at each grid point, every
        other parameter stays as it is (or starts the refinement). Not modified.
    data : Comparison or dict
        A :class:`~diskexplorer.fitting.Comparison` or ``dict(observations=...,
        photometry=..., spectrum=...)`` (optionally ``weights``, ``accuracy``), e.g. the
        result of :func:`~diskexplorer.sample.load_sample_data`.
    axes : mapping of str to spec, or sequence of (str, spec)
        Parameter path (``rings.0.r_in``, ``rings[inner].t_in``, ``geometry.inclination``)
        → values (list/array) or ``(lo, hi, n[, "log"])`` (see :func:`axis_values`), in the
        parameter's declared unit. Usually two or more axes; the first is the slowest
        dimension of the result.
    refine_free : sequence of str, optional
        Paths refined by :func:`~diskexplorer.fitting.refine` at every grid point (a
        profile-likelihood-like map); must not overlap the axes.
    refine_max_nfev : int
        Model evaluations per refinement (small: a scan multiplies it by the grid size).
    scheduler : None, "serial", "local", str, distributed.Client or cluster
        None or ``"serial"``: evaluate in this process without dask. ``"local"``: the
        process's shared LocalCluster on 127.0.0.1 (:func:`local_client`; started by the
        first such scan, kept for later ones). An address (``"tcp://127.0.0.1:8786"``):
        connect to an existing scheduler for this scan. A Client or cluster object: use
        it (left open).
    n_workers : int, optional
        Workers of the shared LocalCluster when this scan starts it.
    chunk_size : int, optional
        Grid points per task; default about eight tasks per worker, at most 256 points
        (fewer, longer tasks amortise overhead; more tasks balance load and make
        progress and cancellation finer).
    progress : callable, optional
        ``progress(done, total)`` in grid points, after each finished chunk.
    cancel : callable, optional
        ``cancel() -> bool``; when True, pending tasks are cancelled and the partial
        result is returned.
    on_chunk : callable, optional
        ``on_chunk(start, chi2)`` after each finished chunk, before ``progress``:
        ``chi2`` (n, 1 + number of kinds) holds the total then the per-kind χ² of the
        grid points ``start … start + n − 1`` in C order of the grid (the last axis
        fastest) — to draw a map while the scan goes on. Chunks finish in any order on
        a cluster.

    Returns
    -------
    xarray.Dataset
        Coordinates: one per axis, named :func:`safe_name` of the path (attrs ``path``,
        ``units``, ``long_name``). Variables: ``chi2`` (weighted total), ``chi2_<kind>`` per
        data kind, and with refinement ``refined_<name>`` per refined parameter. NaN marks
        points the model refuses (r_in ≥ r_out …) or that were cancelled. Attributes
        (netCDF-safe): ``scene`` (JSON), ``axes`` and ``free_parameters`` (JSON lists of
        paths), ``npoints`` (JSON dict per kind at the input scene), ``npoints_total``,
        ``weights`` (JSON), ``status`` ("complete" or "cancelled"), ``n_evaluated``,
        ``scheduler``, ``elapsed_s``; with a mass-fraction axis also ``fraction_rule``
        (:data:`FRACTION_RULE`), repeated as that coordinate's ``comment``.

    Raises
    ------
    SeedError
        Unknown parameter paths.
    ParameterError
        Malformed axes, axis values outside a parameter's valid range, unusable data.

    Notes
    -----
    χ² = Σ_k w_k Σ_i ((data − model)/σ)², as in :meth:`Comparison.compare`. Grid point
    (i, j, …) is evaluated exactly as ``Comparison.compare(set_values(scene, {...}))``, so
    serial and distributed scans agree to rounding (≲ 1e-15 relative: numpy's vectorised
    reductions may round differently in another process).

    Examples
    --------
    >>> ds = scan_grid(scene, data, {"rings.0.r_in": (0.2, 0.5, 20, "log"),
    ...                              "rings.0.t_in": (1200, 1800, 15)})      # doctest: +SKIP
    >>> best_point(ds)                                                        # doctest: +SKIP
    """
    t0 = time.perf_counter()
    paths, values = _parse_axes(scene, axes)
    refine_free = [canonical_path(scene, p) for p in (refine_free or ())]
    overlap = set(refine_free) & set(paths)
    if overlap:
        raise ParameterError(f"scan_grid: {sorted(overlap)} are both scanned and refined")
    comparison, payload = _payload(data)
    reference = comparison.compare(scene)  # also proves the data are usable before work is sent
    kinds = list(reference.chi2)
    shape = tuple(v.size for v in values)
    total = int(np.prod(shape))
    mesh = np.meshgrid(*values, indexing="ij")
    points = np.stack([m.ravel() for m in mesh], axis=1)
    chi2 = np.full((total, 1 + len(kinds)), np.nan)
    refined = np.full((total, len(refine_free)), np.nan)
    token = _token_of(data, payload)

    serial = scheduler is None or (isinstance(scheduler, str) and scheduler == "serial")
    client, owned = (None, []) if serial else _open_client(scheduler, n_workers)
    try:
        where = "serial" if serial else _address(client)
        workers = 1 if serial else _n_workers(client)
        if chunk_size is None:
            chunk_size = min(256, max(1, math.ceil(total / (8 * workers))))
        chunk_size = int(chunk_size)
        if chunk_size < 1:
            raise ParameterError(f"scan_grid: chunk_size = {chunk_size}; expected ≥ 1")
        starts = list(range(0, total, chunk_size))
        args = (paths, kinds, refine_free, int(refine_max_nfev))

        def report(done, start, result):
            if on_chunk is not None:
                on_chunk(start, result[0].copy())
            if progress is not None:
                progress(done, total)

        if serial:
            status, done = _run_serial(comparison, token, scene, points, starts, chunk_size, args,
                                       chi2, refined, report, cancel)
        else:
            status, done = _run_dask(client, payload, token, scene, points, starts, chunk_size, args,
                                     chi2, refined, report, cancel)
    finally:
        for obj in owned:
            obj.close()

    coords = {}
    for path, vals in zip(paths, values):
        spec = spec_for(path)
        coord_attrs = {"path": path, "units": spec.unit, "long_name": spec.description}
        if is_fraction_path(path):
            coord_attrs["comment"] = FRACTION_RULE
        coords[safe_name(path)] = xr.Variable(safe_name(path), vals, attrs=coord_attrs)
    dims = [safe_name(p) for p in paths]
    data_vars = {"chi2": (dims, chi2[:, 0].reshape(shape), {"long_name": "weighted total chi-squared"})}
    for k, kind in enumerate(kinds):
        data_vars[f"chi2_{kind}"] = (dims, chi2[:, 1 + k].reshape(shape),
                                     {"long_name": f"chi-squared of {kind}",
                                      "weight": float(reference.weights.get(kind, 1.0))})
    for k, path in enumerate(refine_free):
        spec = spec_for(path)
        data_vars[f"refined_{safe_name(path)}"] = (dims, refined[:, k].reshape(shape), {
            "path": path, "units": spec.unit, "long_name": f"refined {spec.description}"})
    attrs = {
        "title": "chi-squared grid scan (diskexplorer)",
        "scene": _scene_repr(scene, paths + refine_free),
        "axes": json.dumps(paths),
        "free_parameters": json.dumps(paths + refine_free),
        "refined_parameters": json.dumps(refine_free),
        "refine_max_nfev": int(refine_max_nfev) if refine_free else 0,
        "npoints": json.dumps(reference.npoints),
        "npoints_total": int(reference.n_total),
        "weights": json.dumps(reference.weights),
        "chi2_at_scene": float(reference.total),
        "status": status,
        "n_evaluated": int(done),
        "scheduler": where,
        "elapsed_s": float(time.perf_counter() - t0),
    }
    if any(is_fraction_path(p) for p in paths):
        attrs["fraction_rule"] = FRACTION_RULE
    return xr.Dataset(data_vars, coords=coords, attrs=attrs)


def _store(chi2, refined, start, result):
    c, r = result
    chi2[start:start + len(c)] = c
    refined[start:start + len(r)] = r


def _run_serial(comparison, token, scene, points, starts, chunk_size, args, chi2, refined, report, cancel):
    paths, kinds, refine_free, nfev = args
    done = 0
    for start in starts:
        if cancel is not None and cancel():
            return "cancelled", done
        chunk = points[start:start + chunk_size]
        # The comparison is handed over directly; the token only keys the process cache.
        result = evaluate_chunk(comparison, token, scene, paths, chunk, kinds, refine_free, nfev)
        _store(chi2, refined, start, result)
        done += len(chunk)
        report(done, start, result)
    return "complete", done


# (client id, data token) -> [client, futures of data and species, species token]: the
# data a client scattered last, kept for its next scan of the same data.
_SHIPPED = {}
_SHIPPED_LOCK = threading.Lock()


def _shipped(client, payload, token):
    """Futures of (data, species) on ``client``'s workers, scattered once per data and species."""
    species = user_species()
    try:
        from dask.base import tokenize

        species_token = tokenize(species)
    except Exception:  # noqa: BLE001 - an unhashable species: ship it afresh
        species_token = uuid.uuid4().hex
    with _SHIPPED_LOCK:
        for key, (other, futures, _) in list(_SHIPPED.items()):
            if other.status != "running":  # a closed client's futures are gone with it
                del _SHIPPED[key]
        entry = _SHIPPED.get(id(client))
        if (entry is not None and entry[0] is client and entry[2] == (token, species_token)
                and all(f.status == "finished" for f in entry[1])):  # not lost with a worker
            return entry[1]
        if entry is not None:
            try:
                entry[0].cancel(list(entry[1]))
            except Exception:  # noqa: BLE001 - releasing old data is best effort
                pass
        # One copy of data and the registered dust species per worker; tasks refer to them
        # by future. Workers are other processes: without the species, a ring made of one
        # would not resolve there.
        futures = tuple(client.scatter([payload, species], broadcast=True, hash=False))
        _SHIPPED[id(client)] = (client, futures, (token, species_token))
        return futures


def _run_dask(client, payload, token, scene, points, starts, chunk_size, args, chi2, refined,
              report, cancel):
    from distributed import wait

    paths, kinds, refine_free, nfev = args
    done = 0
    data_f, species_f = _shipped(client, payload, token)
    run = uuid.uuid4().hex[:8]
    pending = {}
    for n, start in enumerate(starts):
        chunk = points[start:start + chunk_size]
        fut = client.submit(evaluate_chunk, data_f, token, scene, paths, chunk, kinds, refine_free,
                            nfev, species_f, key=f"scan-chunk-{run}-{n}", pure=False)
        pending[fut] = (start, len(chunk))
    status = "complete"
    try:
        while pending:
            if cancel is not None and cancel():
                status = "cancelled"
                break
            # Wakes as soon as a chunk is done (a fixed sleep here cost up to 0.1 s per
            # chunk); the timeout only bounds how long a cancel waits.
            try:
                wait(list(pending), timeout=_POLL_S, return_when="FIRST_COMPLETED")
            except TimeoutError:
                pass
            for fut in [f for f in pending if f.done()]:
                start, n = pending.pop(fut)
                result = fut.result()  # re-raises a task's error here
                _store(chi2, refined, start, result)
                done += n
                report(done, start, result)
    finally:
        if pending:
            client.cancel(list(pending))
    return status, done


# ------------------------------------------------------------------------------ results
def best_point(ds):
    """The grid point of least total χ².

    Parameters
    ----------
    ds : xarray.Dataset
        A result of :func:`scan_grid`.

    Returns
    -------
    dict
        Parameter path → value at the minimum (scanned axes, and refined parameters if
        any), plus ``"chi2"`` (the total) and ``"chi2_<kind>"`` per kind.

    Raises
    ------
    ParameterError
        If every point is NaN.
    """
    chi2 = ds["chi2"].values
    if not np.any(np.isfinite(chi2)):
        raise ParameterError("best_point: the scan holds no finite chi2 value")
    index = np.unravel_index(np.nanargmin(chi2), chi2.shape)
    at = dict(zip(ds["chi2"].dims, index))
    out = {}
    for dim in ds["chi2"].dims:
        out[ds[dim].attrs.get("path", dim)] = float(ds[dim].values[at[dim]])
    for name, var in ds.data_vars.items():
        if name.startswith("refined_"):
            out[var.attrs.get("path", name)] = float(var.isel(at).values)
    out["chi2"] = float(chi2[index])
    for name in ds.data_vars:
        if name.startswith("chi2_"):
            out[name] = float(ds[name].isel(at).values)
    return out


def confidence_levels(ds, n_free, levels=(0.6827, 0.9545, 0.9973), absolute=False):
    """Δχ² thresholds of joint confidence regions for ``n_free`` parameters.

    Parameters
    ----------
    ds : xarray.Dataset or None
        A scan result; used only for its minimum χ² when ``absolute``.
    n_free : int
        Number of parameters of interest (degrees of freedom of Δχ²), usually the number
        of scanned axes.
    levels : sequence of float
        Confidence levels in (0, 1) (default 1σ, 2σ, 3σ of a Gaussian).
    absolute : bool
        Return χ²_min + Δχ² instead of Δχ² (contour levels for a map).

    Returns
    -------
    dict of float to float
        level → Δχ² = ``scipy.stats.chi2.ppf(level, n_free)`` (or χ²_min + Δχ²).

    Notes
    -----
    Valid when the errors are Gaussian and correctly scaled (reduced χ² near 1 at the
    minimum) and the model is near-linear over the region; for n_free = 1, 2: 1σ is
    Δχ² = 1.00 and 2.30. With badly scaled errors, rescale χ² by χ²_min/ν first.
    """
    from scipy.stats import chi2 as chi2_dist

    if not (isinstance(n_free, (int, np.integer)) and n_free >= 1):
        raise ParameterError(f"confidence_levels: n_free = {n_free!r}; expected an integer ≥ 1")
    offset = 0.0
    if absolute:
        offset = float(np.nanmin(ds["chi2"].values))
    out = {}
    for level in levels:
        if not 0.0 < level < 1.0:
            raise ParameterError(f"confidence_levels: level {level!r}; expected 0 < level < 1")
        out[float(level)] = float(chi2_dist.ppf(level, n_free)) + offset
    return out


def write_scan(ds, path, overwrite=False):
    """Write a scan result to netCDF (``.nc``) or zarr (``.zarr``).

    Parameters
    ----------
    ds : xarray.Dataset
        A result of :func:`scan_grid`.
    path : str or path-like
        Target file (netCDF, any suffix but ``.zarr``) or directory (zarr, ``.zarr``).
    overwrite : bool
        Replace an existing file or store; default refuse.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    FileExistsError
        ``path`` exists and ``overwrite`` is False.
    ImportError
        zarr requested but not installed.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise FileExistsError(f"{path} exists; pass overwrite=True to replace it")
    if path.suffix == ".zarr":
        try:
            import zarr  # noqa: F401  (only to give a clear message when it is missing)
        except ImportError:
            raise ImportError(f"writing {path}: the zarr package is not installed; use a .nc path "
                              "(netCDF) or install zarr") from None
        ds.to_zarr(path, mode="w")
    else:
        if path.exists():
            path.unlink()  # netCDF4 refuses to clobber some open-mode combinations
        ds.to_netcdf(path, engine="netcdf4")
    return path
