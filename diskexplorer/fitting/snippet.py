"""A ready Python script that turns a starting-point document into a log-probability.

:func:`make_snippet` writes a script that reads the document with our core, loads the
data the document names (one explicit call per file, so the user can edit selections),
defines ``log_probability(x)`` of the free parameters and ``initial_walkers(n, seed)``,
a small ball around the current state inside the bounds. Any ensemble sampler that
takes a callable can use them; the script needs nothing beyond diskexplorer.

Free mass fractions: the script's vector holds each free fraction of a ring as a weight
w ≥ 0; ``log_probability`` maps the ring's weights to the fractions S·w/Σw (S: the part of
the ring's dust the free fractions share), so every vector it accepts is a valid mixture,
and adds the ring's Dirichlet prior, Σ (α_i − 1) ln(w_i/Σw) on 0 < Σw ≤ 1, under which
the fractions are Dirichlet(α) distributed (:mod:`~diskexplorer.fitting.vector`).
"""
from __future__ import annotations

import datetime as _dt
import os

from .start_import import read_start
from .vector import fraction_groups

__all__ = ["make_snippet"]


def _oifits_lines(entry):
    call = f"read_oifits(_data_path({entry['path']!r}), target={entry['target']!r})"
    lines = [f"    {call}"]
    if entry["bands"]:
        lines.append(f"    .select_band({', '.join(map(repr, entry['bands']))})")
    if entry["wavelength_range"]:
        lo, hi = entry["wavelength_range"]
        lines.append(f"    .select_wavelength({lo!r}, {hi!r})")
    if entry["instruments"]:
        lines.append(f"    .select_instrument({', '.join(map(repr, entry['instruments']))})")
    if entry["error_floor"]:
        kw = ", ".join(f"{k}={v!r}" for k, v in entry["error_floor"].items())
        lines.append(f"    .with_error_floor({kw})")
    return "(\n" + "\n".join(lines) + "\n)"


def _data_block(data):
    out = []
    if data.oifits:
        parts = [_oifits_lines(e) for e in data.oifits]
        if len(parts) == 1:
            out.append(f"observations = {parts[0]}")
        else:
            out.append("observations = ObservationSet.concat([")
            out += [f"    {p.replace(chr(10), chr(10) + '    ')}," for p in parts]
            out.append("])")
    else:
        out.append("observations = None  # the document names no OIFITS data")
    if data.photometry is not None:
        p = data.photometry
        out.append(f"photometry = read_photometry(_data_path({p['path']!r}), a_v={p['a_v']!r}, "
                   f"r_v={p['r_v']!r})")
    else:
        out.append("photometry = None  # the document names no photometry")
    if data.spectrum is not None:
        s = data.spectrum
        out.append(f"spectrum = read_spectrum(_data_path({s['path']!r}), a_v={s['a_v']!r}, r_v={s['r_v']!r})")
        if s["wavelength_range"]:
            lo, hi = s["wavelength_range"]
            out.append(f"spectrum = spectrum.sel(wavelength=slice({lo!r}, {hi!r}))  # µm")
    else:
        out.append("spectrum = None  # the document names no spectrum")
    return "\n".join(out)


def _bandpass_line(data):
    off = [e["path"] for e in data.oifits if not e.get("bandpass", True)]
    if not off:
        return "bandpass = True  # the model is averaged over each channel's EFF_BAND"
    # Keys are the files as read above (the points' file names), as Comparison matches them.
    return ("# the model is averaged over each channel's EFF_BAND, except in these files\n"
            f"bandpass = {{str(_data_path(p)): False for p in {off!r}}}")


def _free_table(start):
    if not start.free:
        return "#   (none: every parameter is fixed; log_probability takes an empty vector)"
    rows = []
    groups = fraction_groups(start.free)
    for k, f in enumerate(start.free):
        unit = f" {f.unit}" if f.unit else ""
        prior = f.prior.kind if f.prior.kind != "normal" else f"normal({f.prior.mean:g}, {f.prior.sigma:g})"
        if f.prior.kind == "dirichlet":
            prior = f"dirichlet(α = {f.prior.concentration:g}), a weight"
        rows.append(f"#   x[{k}]  {f.path:<26} = {f.value:<12.6g} bounds [{f.lo:g}, {f.hi:g}]{unit}, {prior}")
    for ring, idx in groups.items():
        share = sum(start.free[i].value for i in idx)
        listed = ", ".join(f"x[{i}]" for i in idx)
        rows.append(f"#   ring {ring}: fractions = {share:.6g} · w / Σw with w = ({listed}); "
                    "Dirichlet prior on them, 0 < Σw ≤ 1")
    return "\n".join(rows)


def make_snippet(doc_path):
    """Python source of a script that builds ``log_probability(x)`` from a starting point.

    Parameters
    ----------
    doc_path : str or os.PathLike
        A starting-point document (checked with :func:`read_start` now, so the script
        is generated only for documents that load).

    Returns
    -------
    str
        The script. Run as ``python script.py [document.json]`` (the document path
        defaults to ``doc_path``, made absolute); importing it defines ``start``,
        ``comparison``, ``log_probability(x)`` and ``initial_walkers(n, seed)``.

    Raises
    ------
    SeedError
        If the document does not load.

    Notes
    -----
    ln p(x) = Σ ln prior_i(x_i) − χ²(x)/2 (weighted total χ² of all data kinds), −inf
    outside the bounds or where the model refuses x (e.g. r_in ≥ r_out). A ring's free
    mass fractions enter as weights with one Dirichlet prior (module docstring).
    """
    start = read_start(doc_path)
    path = os.path.abspath(os.fspath(doc_path))
    stamp = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat().replace("+00:00", "Z")
    weights = dict(start.data.weights)
    return f'''#!/usr/bin/env python
"""Log-probability of the free parameters of a diskexplorer starting point.

Generated {stamp} from {os.path.basename(path)}.
Usage: python this_script.py [starting_point.json]
"""
import sys

import numpy as np

from diskexplorer.data import ObservationSet, read_oifits, read_photometry, read_spectrum
from diskexplorer.errors import ParameterError
from diskexplorer.fitting import Comparison, log_prior, read_start, scene_from_vector

START_FILE = {path!r}
if __name__ == "__main__" and len(sys.argv) > 1:
    START_FILE = sys.argv[1]

start = read_start(START_FILE)
scene = start.scene          # the model state; fixed parameters stay as they are here
free = start.free            # the parameter vector x, in declared units:
{_free_table(start)}


def _data_path(path):
    """Data paths in the document are relative to the document's folder."""
    return start.data.resolve(path, start.base_dir)


# --- the data the starting point was judged against -------------------------------------
{_data_block(start.data)}
{_bandpass_line(start.data)}
comparison = Comparison(observations, photometry, spectrum, weights={weights!r},
                        accuracy={start.accuracy!r}, bandpass=bandpass)


def log_probability(x):
    """ln prior(x) − χ²(x)/2; −inf outside the bounds or where the model refuses x.

    Free mass fractions are weights: scene_from_vector makes each ring's fractions
    S·w/Σw (a valid mixture) and log_prior adds the ring's Dirichlet prior.
    """
    lp = log_prior(free, x)
    if not np.isfinite(lp):
        return -np.inf
    try:
        trial = scene_from_vector(scene, free, x)
    except ParameterError:  # e.g. r_in >= r_out
        return -np.inf
    chi2 = comparison.compare(trial).total
    return lp - 0.5 * chi2 if np.isfinite(chi2) else -np.inf


def initial_walkers(n, seed=None):
    """n starting positions in a small ball around the current state, inside the bounds."""
    return start.initial_walkers(n, seed=seed)


if __name__ == "__main__":
    x0 = start.vector()
    print("free parameters:", ", ".join(start.paths) or "none")
    print("log_probability at the starting point:", log_probability(x0))
    walkers = initial_walkers(max(2 * len(free) + 2, 8), seed=1)
    print("initial walkers:", walkers.shape)
    # Hand log_probability and walkers to any ensemble sampler that takes a callable.
    # For example with the optional package emcee (not needed by diskexplorer):
    #     import emcee
    #     sampler = emcee.EnsembleSampler(len(walkers), len(free), log_probability)
    #     sampler.run_mcmc(walkers, 2000, progress=True)
'''
