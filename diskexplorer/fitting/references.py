"""Which model samples each differential phase refers to.

An OI_VIS point with a differential phase carries its reference channels (from VISREFMAP,
see :func:`diskexplorer.data.observations.reference_from_map`): wavelengths and widths on
the point's own (u, v). The model's reference is the coherent sum over those channels
(:func:`diskexplorer.fitting.comparison.differential_phase`). This module finds, once per
data set, which samples make up each point's reference:

* a reference channel that is itself a vis point of the same row (same u, v, λ, Δλ) reuses
  that point's model value; only the others become extra samples;
* points that share a row and a reference pattern (every point of a row with a map of
  "all channels") share one reference, summed once.

Wide instruments make this the heaviest step of reading a file (200 channels each naming
200 reference channels give 40 000 entries per row), so the work is done on small integer
codes: a reference *pattern* (the list of channels, the same for most rows of a table),
a *row* (distinct u, v) and a *channel* (distinct λ, Δλ), never on the n × m entries as
rows of floats.
"""
from __future__ import annotations

import numpy as np
from scipy import sparse

__all__ = ["ReferenceSets", "reference_sets"]


class ReferenceSets:
    """The reference of every vis point, as a sparse sum over model samples.

    Attributes
    ----------
    extra : tuple of ndarray (u, v, wavelength, bandwidth)
        Samples that are not vis points: m, m, µm, µm (bandwidth 0: monochromatic).
    matrix : scipy.sparse.csr_matrix, shape (k, n + s)
        One row per distinct reference; columns are the n vis points followed by the s
        extra samples; a 1 where a sample is part of the reference (a channel named twice
        counts twice, as a sum over the map would).
    of_point : ndarray of int, shape (n,)
        The row of ``matrix`` each vis point refers to (a row without entries: no reference).
    """

    def __init__(self, extra, matrix, of_point):
        self.extra = extra
        self.matrix = matrix
        self.of_point = of_point


def _codes(values):
    """Integer codes of equal values (first-seen order is not kept: sorted order)."""
    _, inverse = np.unique(values, return_inverse=True)
    return inverse.ravel()


#: Rows handled at once: the temporary (rows × channels) arrays stay a few MB.
_CHUNK = 8192


def _pattern_codes(rows_of, n, m):
    """A code per row of (wl, bw), equal exactly when the two rows are equal.

    ``rows_of(index)`` gives (wl, bw, have) of the rows ``index`` (a slice or an index
    array); rows are produced a chunk at a time, never all at once. Rows are first told
    apart by a random projection of their bits, then every row is checked against its
    group's first row; if a projection ever merged two different rows, the exact (slower)
    grouping by the rows' bytes is used instead.

    Returns
    -------
    codes : ndarray of int, shape (n,)
    first : ndarray of int
        The first row of each code.
    """
    if n == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    rng = np.random.default_rng(20261204)
    weights = rng.integers(1, 2**62, size=(2, m), dtype=np.int64)
    finger = np.empty(n, dtype=np.int64)
    for lo in range(0, n, _CHUNK):
        wl, bw, _ = rows_of(slice(lo, lo + _CHUNK))
        # On the values' bits, in integers: wrap-around sums are exact in any order, so
        # equal rows always get equal fingerprints (a floating-point product may round
        # two equal rows differently, depending on where they sit in memory).
        finger[lo:lo + _CHUNK] = wl.view(np.int64) @ weights[0] + bw.view(np.int64) @ weights[1]
    _, first, codes = np.unique(finger, return_index=True, return_inverse=True)
    codes = codes.ravel()
    rep_wl, rep_bw, _ = rows_of(first)
    for lo in range(0, n, _CHUNK):
        wl, bw, _ = rows_of(slice(lo, lo + _CHUNK))
        rep = codes[lo:lo + _CHUNK]
        if not (np.array_equal(wl, rep_wl[rep]) and np.array_equal(bw, rep_bw[rep])):
            seen = {}
            for k in range(0, n, _CHUNK):
                wl, bw, _ = rows_of(slice(k, k + _CHUNK))
                for i in range(wl.shape[0]):
                    codes[k + i] = seen.setdefault(wl[i].tobytes() + bw[i].tobytes(), len(seen))
            first = np.unique(codes, return_index=True)[1]
            break
    return codes.astype(np.int64), first


def reference_sets(u, v, wavelength, bandwidth, ref_wavelength, ref_bandwidth, *, differential=None,
                   banded=None):
    """The reference samples of differential phases.

    Parameters
    ----------
    u, v : ndarray, shape (n,)
        (u, v) of the vis points, m.
    wavelength, bandwidth : ndarray, shape (n,)
        The points' channels as the model samples them, µm (bandwidth 0: monochromatic).
    ref_wavelength, ref_bandwidth : ndarray, shape (n, m)
        Each point's reference channels, µm; NaN (wavelength) where a point has fewer than
        m, or none. A reference channel's width is used where it is finite and > 0 (and
        the point is ``banded``); elsewhere the reference is sampled monochromatically.
    differential : ndarray of bool, shape (n,), optional
        Which points have a differential phase (default all); the others get no reference.
    banded : ndarray of bool, shape (n,), optional
        Which points' references are averaged over their channels (default all): a file's
        bandpass choice holds for its reference channels too.

    Returns
    -------
    ReferenceSets or None
        None when no point has a reference.
    """
    n = np.size(u)
    differential = None if differential is None or np.all(differential) else np.asarray(differential, bool)
    banded = None if banded is None or np.all(banded) else np.asarray(banded, bool)

    def rows_of(index):
        """(wl, bw, have) of some points: padding as 0 (no channel has λ = 0, so padding
        never looks like a channel; comparisons with NaN are False, so no NaN needs
        replacing first), bandwidth 0 where the reference is monochromatic."""
        ref = ref_wavelength[index]
        have = np.isfinite(ref)
        if differential is not None:
            have &= differential[index][:, None]
        width = ref_bandwidth[index]
        use_bw = have & (width > 0)
        if banded is not None:
            use_bw &= banded[index][:, None]
        return np.where(have, ref, 0.0), np.where(use_bw, width, 0.0), have

    pattern, first = _pattern_codes(rows_of, n, np.shape(ref_wavelength)[1])
    # The channels of each pattern (entries in the order the map names them).
    p_wl, p_bw, p_have = rows_of(first)
    if not p_have.any():
        return None
    p_len = p_have.sum(axis=1)
    p_start = np.concatenate([[0], np.cumsum(p_len)[:-1]])
    entry_wl, entry_bw = p_wl[p_have], p_bw[p_have]
    # One code per distinct channel (λ, Δλ), over the points' own and the references'.
    channel = _codes(np.concatenate([wavelength, entry_wl]) + 1j * np.concatenate([bandwidth, entry_bw]))
    n_channels = int(channel.max()) + 1
    point_channel, entry_channel = channel[:n], channel[n:]
    row = _codes(np.asarray(u, float) + 1j * np.asarray(v, float))
    # Distinct references: a row and a pattern (every point of a row with the same map).
    combos, first_point, of_point = np.unique(row * (int(pattern.max()) + 1) + pattern,
                                              return_index=True, return_inverse=True)
    of_point = of_point.ravel()
    c_row, c_pattern = row[first_point], pattern[first_point]
    lens = p_len[c_pattern]
    total = int(lens.sum())
    combo_of_entry = np.repeat(np.arange(combos.size), lens)
    offset = np.arange(total) - np.repeat(np.cumsum(lens) - lens, lens)
    e_channel = entry_channel[p_start[c_pattern][combo_of_entry] + offset]
    e_key = c_row[combo_of_entry].astype(np.int64) * n_channels + e_channel
    # The first vis point of each (row, channel): the sample an entry reuses.
    p_key = row.astype(np.int64) * n_channels + point_channel
    keys, first_of_key = np.unique(p_key, return_index=True)
    at = np.minimum(np.searchsorted(keys, e_key), max(keys.size - 1, 0))
    found = keys.size > 0
    hit = (keys[at] == e_key) if found else np.zeros(total, bool)
    column = np.empty(total, dtype=np.int64)
    column[hit] = first_of_key[at[hit]]
    new_keys, new_of_entry = np.unique(e_key[~hit], return_inverse=True)
    column[~hit] = n + new_of_entry.ravel()
    # Each extra sample takes the u, v of its row and the λ, Δλ of its channel.
    row_u = np.zeros(int(row.max()) + 1)
    row_v = np.zeros_like(row_u)
    row_u[row], row_v[row] = u, v
    ch_wl = np.zeros(n_channels)
    ch_bw = np.zeros(n_channels)
    ch_wl[channel] = np.concatenate([wavelength, entry_wl])
    ch_bw[channel] = np.concatenate([bandwidth, entry_bw])
    new_row, new_channel = new_keys // n_channels, new_keys % n_channels
    extra = (row_u[new_row], row_v[new_row], ch_wl[new_channel], ch_bw[new_channel])
    matrix = sparse.csr_matrix((np.ones(total), (combo_of_entry, column)),
                               shape=(combos.size, n + new_keys.size))
    return ReferenceSets(extra, matrix, of_point)
