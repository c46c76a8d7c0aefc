"""Distinct rows of a float array, fast.

``np.unique(a, axis=0)`` compares rows field by field; for the (u, v, λ, Δλ) samples of a
data set (tens of thousands of rows, recomputed on every filter click) comparing each
row's bytes at once is about twice as fast. The result is the same: distinct rows in
lexicographic order and the row of each input.
"""
from __future__ import annotations

import numpy as np

__all__ = ["distinct_rows"]


def distinct_rows(a):
    """Distinct rows of a 2-D float array and where each input row went.

    Parameters
    ----------
    a : array_like, shape (n, k)
        Finite values (any unit); −0.0 and 0.0 count as equal.

    Returns
    -------
    rows : ndarray, shape (d, k)
        The distinct rows, in lexicographic order (as ``np.unique(a, axis=0)``).
    inverse : ndarray of int, shape (n,)
        ``rows[inverse]`` equals ``a``.
    """
    # Adding 0.0 turns −0.0 into 0.0, so equal numbers have equal bytes.
    c = np.ascontiguousarray(np.asarray(a, dtype=float) + 0.0)
    if c.shape[0] == 0:
        return c.reshape(0, c.shape[1] if c.ndim == 2 else 0), np.zeros(0, dtype=np.int64)
    keys = c.view(np.dtype((np.void, c.dtype.itemsize * c.shape[1]))).ravel()
    _, first, inverse = np.unique(keys, return_index=True, return_inverse=True)
    rows = c[first]
    # Byte order is not numeric order: sort the (few) distinct rows and renumber.
    order = np.lexsort(rows.T[::-1])
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size)
    return rows[order], rank[inverse.ravel()]
