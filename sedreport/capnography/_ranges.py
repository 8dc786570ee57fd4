"""Vectorised reductions over many index ranges of one array (no Python loop over samples).

Private helpers of the capnography stage: each breath (or inspiratory pause) is a half-open
range ``[a, b)`` of sample indices, and the detector needs minima, maxima, sums and "first /
last sample meeting a condition" over thousands of such ranges at once.
"""

from __future__ import annotations

import numpy as np


def flat_ranges(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Concatenate the index ranges ``[a[k], b[k])``.

    Parameters
    ----------
    a, b : ndarray of int
        Range starts and (exclusive) stops; every ``b[k] > a[k]``.

    Returns
    -------
    flat : ndarray of int
        All indices of all ranges, range after range.
    offsets : ndarray of int
        Position of each range's first index in ``flat`` (for ``ufunc.reduceat``).
    """
    lengths = (b - a).astype(np.int64)
    if lengths.size and lengths.min() <= 0:
        raise ValueError("flat_ranges needs non-empty ranges")
    offsets = np.zeros(lengths.size, dtype=np.int64)
    if lengths.size:
        offsets[1:] = np.cumsum(lengths)[:-1]
    total = int(lengths.sum())
    flat = np.arange(total, dtype=np.int64) + np.repeat(a.astype(np.int64) - offsets, lengths)
    return flat, offsets


def range_reduce(ufunc: np.ufunc, x: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``ufunc.reduce`` of ``x[a[k]:b[k]]`` for every k (ranges must be non-empty)."""
    if a.size == 0:
        return np.empty(0, dtype=x.dtype)
    flat, offsets = flat_ranges(a, b)
    return ufunc.reduceat(x[flat], offsets)


def last_where(mask_fn, x: np.ndarray, a: np.ndarray, b: np.ndarray, level: np.ndarray):
    """Last index ``j`` in each range ``[a, b)`` with ``mask_fn(x[j], level)``; -1 if none."""
    if a.size == 0:
        return np.empty(0, dtype=np.int64)
    flat, offsets = flat_ranges(a, b)
    lev = np.repeat(level, b - a)
    hit = np.where(mask_fn(x[flat], lev), flat, -1)
    return np.maximum.reduceat(hit, offsets)


def first_where(mask_fn, x: np.ndarray, a: np.ndarray, b: np.ndarray, level: np.ndarray):
    """First index ``j`` in each range ``[a, b)`` with ``mask_fn(x[j], level)``; -1 if none."""
    if a.size == 0:
        return np.empty(0, dtype=np.int64)
    flat, offsets = flat_ranges(a, b)
    lev = np.repeat(level, b - a)
    big = np.iinfo(np.int64).max
    hit = np.where(mask_fn(x[flat], lev), flat, big)
    out = np.minimum.reduceat(hit, offsets)
    return np.where(out == big, -1, out)


def crossing_time(t: np.ndarray, x: np.ndarray, j: np.ndarray, level: np.ndarray) -> np.ndarray:
    """Time at which the line from sample ``j`` to ``j + 1`` crosses ``level`` (linear).

    The fraction is clipped to [0, 1], so the result always lies between the two samples.
    """
    j1 = np.minimum(j + 1, t.size - 1)
    dx = x[j1] - x[j]
    # overflow: a subnormal step (e.g. 1e-311) makes the quotient huge; clipped below
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        frac = np.where(dx != 0, (level - x[j]) / dx, 0.0)
    frac = np.clip(np.nan_to_num(frac, nan=0.0), 0.0, 1.0)
    return t[j] + frac * (t[j1] - t[j])
