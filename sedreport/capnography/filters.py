"""Running filters of the breath detector in plain numpy (edge values repeated at the ends).

They give the same numbers as ``scipy.ndimage.uniform_filter1d`` and
``scipy.ndimage.percentile_filter`` with ``mode="nearest"`` (checked against scipy in the tests)
without importing scipy.ndimage, whose import alone takes longer than detecting the breaths of a
2-hour recording; the command line starts that much faster.
"""

from __future__ import annotations

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view


def _padded(x: np.ndarray, size: int) -> np.ndarray:
    """``x`` with ``size // 2`` edge copies before and ``size - 1 - size // 2`` after."""
    left = size // 2
    return np.pad(np.asarray(x, dtype=float), (left, size - 1 - left), mode="edge")


def moving_mean(x: np.ndarray, size: int) -> np.ndarray:
    """Centred moving mean over ``size`` samples (even sizes lean one sample to the left).

    Examples
    --------
    >>> moving_mean(np.array([0.0, 0.0, 3.0, 0.0, 0.0]), 3)
    array([0., 1., 1., 1., 0.])
    """
    if size <= 1 or np.size(x) == 0:
        return np.asarray(x, dtype=float).copy()
    padded = _padded(x, size)
    n = padded.size - size + 1
    total = np.zeros(n)
    for k in range(size):  # a short window (a few samples): exact sums, no running drift
        total += padded[k : k + n]
    return total / size


def running_percentile(x: np.ndarray, percentile: float, size: int) -> np.ndarray:
    """Running rank filter: the sample at rank ``int(size * percentile / 100)`` of each window.

    No interpolation between samples (the value returned is always one of the inputs).

    Examples
    --------
    >>> running_percentile(np.array([5.0, 1.0, 4.0, 2.0, 3.0]), 50.0, 3)
    array([5., 4., 2., 3., 3.])
    """
    x = np.asarray(x, dtype=float)
    if size <= 1 or x.size == 0:
        return x.copy()
    rank = min(int(size * percentile / 100.0), size - 1)
    windows = sliding_window_view(_padded(x, size), size)
    return np.partition(windows, rank, axis=1)[:, rank]
