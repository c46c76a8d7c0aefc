"""The part of a χ² grid scan that runs on a worker: evaluate a chunk of grid points.

Kept in its own small module so that dask workers (spawned processes) import the task
function by reference and nothing else from the scan machinery. The data are shipped once
per worker (scattered with ``broadcast=True``) and the :class:`Comparison` built from them
is cached here, in a worker-local module global keyed by a token, so every chunk of a scan
— and later scans of the same data on a persistent cluster — reuse one evaluator.

Worker processes started by dask (a ``LocalCluster`` or ``dask worker``) get
``MALLOC_TRIM_THRESHOLD_=65536`` in their environment (distributed's
``nanny.pre-spawn-environ``). Setting any malloc threshold switches off glibc's dynamic
mmap threshold, so every temporary array above 128 kB is mmapped, page-faulted and
unmapped again: measured here, that made a worker's χ² of one grid point 1.4× slower
than the same call in the submitting process (2.4 ms against 1.6 ms on the demo data).
:func:`tune_allocator` restores fixed thresholds large enough for the engine's
temporaries, once per process, before a chunk is evaluated.
"""
from __future__ import annotations

import ctypes
import ctypes.util
import os
import sys
import threading
from collections import OrderedDict

import numpy as np

from ..errors import ParameterError

__all__ = ["comparison_for", "evaluate_chunk", "clear_cache", "tune_allocator"]

# token -> Comparison. A Comparison holds ~20 MB of cached kernels for the demo data,
# so only a few are kept per process.
_COMPARISONS: "OrderedDict[str, object]" = OrderedDict()
_MAX_CACHED = 4
_LOCK = threading.Lock()  # workers may run several threads; build each comparison once


_TUNED = None  # None: not tried yet; afterwards whether the thresholds were set
# glibc mallopt parameters (malloc.h); thresholds in bytes. 64 MB covers the engine's
# largest temporaries (a wavelength × frequency transform of the demo data is ~20 MB).
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_MMAP_THRESHOLD = 64 << 20
_TRIM_THRESHOLD = 128 << 20


def tune_allocator(force=False):
    """Undo the small malloc thresholds dask gives its worker processes (glibc only).

    Acts only when ``MALLOC_TRIM_THRESHOLD_`` is set in this process's environment (the
    variable that switched glibc's adaptive thresholds off), or when ``force``; once per
    process.

    Returns
    -------
    bool
        Whether the thresholds are set (False elsewhere than Linux/glibc, or not needed).
    """
    global _TUNED
    if _TUNED is not None and not force:
        return _TUNED
    _TUNED = False
    if not (force or "MALLOC_TRIM_THRESHOLD_" in os.environ) or not sys.platform.startswith("linux"):
        return _TUNED
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):  # musl or another libc without mallopt
        return _TUNED
    _TUNED = bool(mallopt(_M_MMAP_THRESHOLD, _MMAP_THRESHOLD)) and bool(mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD))
    return _TUNED


def clear_cache():
    """Forget every cached comparison of this process."""
    with _LOCK:
        _COMPARISONS.clear()


def comparison_for(token, payload):
    """The cached :class:`~diskexplorer.fitting.Comparison` for ``token`` (built on first use).

    Parameters
    ----------
    token : str
        Identifies the data and weights; equal tokens must mean equal data.
    payload : dict or Comparison
        ``observations``, ``photometry``, ``spectrum``, ``weights`` and ``accuracy``, or a
        ready comparison (serial runs pass it directly).
    """
    with _LOCK:
        comp = _COMPARISONS.get(token)
        if comp is not None:
            _COMPARISONS.move_to_end(token)
            return comp
        from .comparison import Comparison  # deferred: workers import the engine only when needed

        if isinstance(payload, Comparison):
            comp = payload
        else:
            comp = Comparison(payload.get("observations"), payload.get("photometry"),
                              payload.get("spectrum"), weights=payload.get("weights"),
                              accuracy=payload.get("accuracy", 1), bandpass=payload.get("bandpass", True))
        _COMPARISONS[token] = comp
        while len(_COMPARISONS) > _MAX_CACHED:
            _COMPARISONS.popitem(last=False)
        return comp


def evaluate_chunk(payload, token, scene, paths, values, kinds, refine_free=(), refine_max_nfev=10,
                   species=None):
    """χ² of many grid points with one shared comparison.

    Parameters
    ----------
    payload : dict or Comparison
        The data (see :func:`comparison_for`); on a cluster a scattered future that dask
        resolves to the worker's in-memory copy.
    token : str
        Cache key of the data.
    scene : Scene
        The scene whose other parameters stay fixed (or start the refinement).
    paths : sequence of str
        Canonical parameter paths of the scanned axes.
    values : ndarray, shape (n_points, n_axes)
        Parameter values of each grid point, in declared units.
    kinds : sequence of str
        Data kinds whose χ² is returned, in column order.
    refine_free : sequence of str
        Paths refined at each grid point (empty: no refinement).
    refine_max_nfev : int
        Model evaluations allowed per refinement.
    species : dict, optional
        Dust species registered in the submitting process (``dust.user_species()``), which
        a worker process does not otherwise know; installed here before evaluating.

    Returns
    -------
    chi2 : ndarray, shape (n_points, 1 + len(kinds))
        Weighted total χ², then χ² per kind; NaN where the model refuses the point
        (e.g. r_in ≥ r_out).
    refined : ndarray, shape (n_points, len(refine_free))
        Refined values of the free parameters (NaN without refinement or for refused points).
    """
    from .paths import set_values

    tune_allocator()
    if species:
        from ..dust.species import install_species

        install_species(species)
    comp = comparison_for(token, payload)
    values = np.asarray(values, dtype=float)
    kinds = list(kinds)
    refine_free = list(refine_free or ())
    chi2 = np.full((values.shape[0], 1 + len(kinds)), np.nan)
    refined = np.full((values.shape[0], len(refine_free)), np.nan)
    for i, row in enumerate(values):
        try:
            trial = set_values(scene, dict(zip(paths, row)))
            if refine_free:
                from .refine import refine

                res = refine(trial, comp, free=refine_free, max_nfev=refine_max_nfev)
                trial = res.scene
                refined[i] = [p.value for p in res.parameters]
        except ParameterError:
            # A combination the model refuses (r_in ≥ r_out, ...) is a hole in the map, not
            # a failure of the scan.
            continue
        result = comp.compare(trial)
        chi2[i, 0] = result.total
        chi2[i, 1:] = [result.chi2.get(k, np.nan) for k in kinds]
    return chi2, refined
