"""Within-visit spread and the visit-to-visit noise: medians, IQR, a moving-block bootstrap.

The noise of a visit's median is estimated from the visit itself: consecutive breaths (or
SpO2 samples) are resampled in overlapping blocks, so the breath-to-breath correlation of
resting breathing is kept (moving-block bootstrap, Kunsch, Ann Stat 1989; percentile interval,
Efron and Tibshirani, An Introduction to the Bootstrap, 1993; both from memory). A change
between two visits is "within the noise" when its interval, difference +/- z * sqrt(se1^2 +
se2^2) with the bootstrap standard errors of the two medians and the normal quantile z of the
confidence level, contains zero. This covers the sampling noise of a resting recording only;
day-to-day variation of the patient is not in it, so real visit-to-visit noise is larger.
"""

from __future__ import annotations

import zlib
from dataclasses import dataclass

import numpy as np
from scipy.stats import norm


@dataclass(frozen=True)
class IndexStat:
    """Summary of one index over the breaths (or samples) of one visit.

    Attributes
    ----------
    median, q1, q3 : float
        Median and quartiles (NaN when ``n`` is 0).
    n : int
        Values used.
    se : float
        Moving-block bootstrap standard error of the median.
    ci_low, ci_high : float
        Percentile bootstrap interval of the median at the settings' confidence level.
    """

    median: float
    q1: float
    q3: float
    n: int
    se: float
    ci_low: float
    ci_high: float

    @property
    def iqr(self) -> float:
        """Interquartile range q3 - q1."""
        return self.q3 - self.q1


@dataclass(frozen=True)
class Change:
    """Difference of an index between two visits with its noise interval."""

    index: str
    delta: float
    low: float
    high: float
    within_noise: bool


def seeded_rng(seed: int, *keys: str) -> np.random.Generator:
    """A generator that depends only on ``seed`` and the text keys (stable crc32)."""
    parts = [int(seed), *(zlib.crc32(k.encode("utf-8")) for k in keys)]
    return np.random.default_rng(np.random.SeedSequence(parts))


def block_bootstrap_medians(
    values: np.ndarray, block: int, resamples: int, rng: np.random.Generator
) -> np.ndarray:
    """Medians of ``resamples`` moving-block bootstrap series of ``values`` (in order).

    Each series joins blocks of ``block`` consecutive values starting at random places, cut
    to the original length. Vectorised over resamples.
    """
    x = np.asarray(values, dtype=float)
    n = x.size
    b = int(min(max(block, 1), n))
    k = -(-n // b)
    starts = rng.integers(0, n - b + 1, size=(resamples, k))
    idx = (starts[:, :, None] + np.arange(b)[None, None, :]).reshape(resamples, k * b)[:, :n]
    return np.median(x[idx], axis=1)


def index_stat(
    values: np.ndarray, block: int, resamples: int, confidence_pct: float, rng
) -> IndexStat:
    """Median, quartiles and bootstrap interval of the finite ``values`` (kept in time order).

    Examples
    --------
    >>> s = index_stat(np.arange(100.0), 10, 500, 95.0, seeded_rng(0, "x"))
    >>> s.median, s.n
    (49.5, 100)
    """
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        nan = float("nan")
        return IndexStat(nan, nan, nan, 0, nan, nan, nan)
    q1, med, q3 = np.percentile(x, [25, 50, 75])
    if x.size < 2:
        return IndexStat(float(med), float(q1), float(q3), 1, float("nan"), float(med), float(med))
    meds = block_bootstrap_medians(x, block, resamples, rng)
    tail = (100.0 - confidence_pct) / 2.0
    lo, hi = np.percentile(meds, [tail, 100.0 - tail])
    return IndexStat(
        float(med),
        float(q1),
        float(q3),
        int(x.size),
        float(np.std(meds, ddof=1)),
        float(lo),
        float(hi),
    )


def robust_sd(values: np.ndarray) -> float:
    """1.4826 x the median absolute deviation: the SD of normal data, but not inflated by a
    few outlying breaths, e.g. the one after a pause (Rousseeuw and Croux, J Am Stat Assoc
    1993; the constant is common practice). NaN for fewer than 3 values.

    Examples
    --------
    >>> robust_sd(np.array([1.0, 2.0, 3.0, 4.0, 100.0]))
    1.4826
    """
    x = np.asarray(values, dtype=float)
    if x.size < 3:
        return float("nan")
    return float(1.4826 * np.median(np.abs(x - np.median(x))))


def change(
    index: str, new: IndexStat, old: IndexStat, confidence_pct: float, floor: float = 0.0
) -> Change:
    """Change ``new - old`` of one index with its noise interval (module docstring); a change
    no larger than ``floor`` (the reading's display resolution) is always within the noise."""
    z = float(norm.ppf(0.5 + confidence_pct / 200.0))
    delta = new.median - old.median
    se = float(np.hypot(new.se, old.se))
    low, high = delta - z * se, delta + z * se
    within = bool((np.isfinite(se) and low <= 0.0 <= high) or abs(delta) <= floor)
    return Change(index, float(delta), float(low), float(high), within)
