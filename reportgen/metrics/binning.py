"""Levels from values: bins of a continuous (or long ordinal) scale, and each row's distinct values.

Two ways of turning raw confidence values into the level codes that count tables are built on:

* :func:`bin_index` groups values by provider-declared bin edges, for the measures that need a
  few levels (meta-d′, rating ROC, calibration table, ECE). Bins are **left-closed**,
  ``[e_k, e_k+1)``, except the last, which is closed on both sides ``[e_K-1, e_K]``: exactly the
  rule of ``numpy.histogram``, so ``np.bincount(bin_index(x, e)) == np.histogram(x, e)[0]``.
* :func:`row_levels` codes each row's distinct values 0, 1, 2 ... in ascending order (a dense
  rank per participant), so measures defined on raw values (type-2 ROC area, gamma, the Brier
  decomposition over distinct forecasts) are computed exactly on count tables whose width is
  at most the number of items, however finely the values were written.

Vectorised over a leading participant axis; pure numpy.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.intp]
BoolArray = npt.NDArray[np.bool_]

__all__ = ["RowLevels", "bin_index", "counts_by_code", "row_levels"]


def bin_index(values: npt.ArrayLike, edges: npt.ArrayLike) -> IntArray:
    """The bin of each value: k where ``e_k <= x < e_k+1`` (the last bin also takes ``x ==
    e_K``), or -1 for NaN and values outside ``[e_0, e_K]`` (which ``numpy.histogram`` drops).

    ``edges`` must be strictly increasing, with at least two entries.
    """
    e = np.asarray(edges, dtype=np.float64)
    if e.ndim != 1 or e.size < 2 or np.any(np.diff(e) <= 0):
        raise ValueError("edges must be a strictly increasing 1-D array of at least two values")
    x = np.asarray(values, dtype=np.float64)
    k = np.searchsorted(e, x, side="right") - 1
    k = np.where(x == e[-1], e.size - 2, k)
    inside = np.isfinite(x) & (x >= e[0]) & (x <= e[-1])
    return np.asarray(np.where(inside, k, -1), dtype=np.intp)


def counts_by_code(codes: npt.ArrayLike, mask: npt.ArrayLike, k: int) -> FloatArray:
    """Counts per row and code of the entries in ``mask``: shape (P, k). ``codes`` and ``mask``
    are (P, I); codes outside ``0..k-1`` under the mask raise ValueError."""
    c = np.asarray(codes, dtype=np.intp)
    m = np.asarray(mask, dtype=np.bool_)
    if c.shape != m.shape or c.ndim != 2:
        raise ValueError("codes and mask must be (P, I) arrays of one shape")
    if np.any(m & ((c < 0) | (c >= k))):
        raise ValueError("a code under the mask is outside 0..k-1")
    rows = np.broadcast_to(np.arange(c.shape[0])[:, None], c.shape)
    flat = (rows * k + c)[m]
    return np.bincount(flat, minlength=c.shape[0] * k).reshape(c.shape[0], k).astype(np.float64)


@dataclass(frozen=True)
class RowLevels:
    """Each row's distinct values, coded in ascending order.

    ``codes[p, i]`` is the rank of ``values[p, i]`` among row p's distinct finite values under the
    mask (-1 elsewhere); ``levels[p, k]`` is the k-th smallest of them, padded with 0 beyond the
    row's own count (padding cells have no answers, so they add nothing to a weighted sum).
    """

    codes: IntArray
    levels: FloatArray

    @property
    def width(self) -> int:
        return int(self.levels.shape[1])


def row_levels(values: npt.ArrayLike, mask: npt.ArrayLike) -> RowLevels:
    """Dense per-row ranks of the finite values under ``mask`` (both (P, I))."""
    x = np.asarray(values, dtype=np.float64)
    m = np.asarray(mask, dtype=np.bool_) & np.isfinite(x)
    n_rows = x.shape[0]
    rows, cols = np.nonzero(m)
    v = x[rows, cols]
    order = np.lexsort((v, rows))
    rows, cols, v = rows[order], cols[order], v[order]
    new = np.ones(v.size, dtype=np.bool_)
    new[1:] = (rows[1:] != rows[:-1]) | (v[1:] != v[:-1])
    distinct = np.cumsum(new) - 1  # global index of each distinct (row, value)
    first_of_row = np.zeros(n_rows, dtype=np.intp)
    if v.size:
        starts = np.flatnonzero(np.r_[True, rows[1:] != rows[:-1]])
        first_of_row[rows[starts]] = distinct[starts]
    rank = distinct - first_of_row[rows]
    codes = np.full(x.shape, -1, dtype=np.intp)
    codes[rows, cols] = rank
    width = int(rank.max()) + 1 if rank.size else 1
    levels = np.zeros((n_rows, width), dtype=np.float64)
    levels[rows[new], rank[new]] = v[new]
    return RowLevels(codes, levels)
