"""Rate statistics of a committee audit: intervals, rule of three, funnel limits, p-chart, CUSUM.

Plain functions of counts; no register, no rendering. Every method names its source.
Distribution functions come from ``scipy.special`` (``betaincinv`` is the beta quantile,
``ndtri`` the normal quantile, ``bdtr`` the binomial CDF), which imports far faster than
``scipy.stats`` and gives the same values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import bdtr, betaincinv, ndtri


@dataclass(frozen=True)
class Proportion:
    """``k`` of ``n`` with its 95 % (or other) intervals, as fractions (0-1).

    Attributes
    ----------
    k, n : int
        Sessions with the event and sessions counted.
    rate : float
        ``k / n`` (NaN when ``n`` is 0).
    wilson_low, wilson_high : float
        Wilson score interval (Wilson, J Am Stat Assoc 1927).
    exact_low, exact_high : float
        Clopper-Pearson exact interval (Clopper & Pearson, Biometrika 1934).
    rule_of_three_high : float or None
        ``3 / n`` when ``k`` is 0 (Hanley & Lippman-Hand, JAMA 1983), else None.
    """

    k: int
    n: int
    rate: float
    wilson_low: float
    wilson_high: float
    exact_low: float
    exact_high: float
    rule_of_three_high: float | None


def z_value(confidence: float = 0.95) -> float:
    """Two-sided standard-normal quantile, e.g. 1.959964 for 95 %."""
    return float(ndtri(1.0 - (1.0 - confidence) / 2.0))


def wilson_interval(k: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval of ``k / n`` (Wilson, J Am Stat Assoc 1927).

    Examples
    --------
    >>> [round(x, 4) for x in wilson_interval(581, 25433)]  # Mallory et al., Ann Emerg Med 2011
    [0.0211, 0.0248]
    """
    if n <= 0:
        return (math.nan, math.nan)
    z = z_value(confidence)
    p = k / n
    denom = 1.0 + z * z / n
    centre = (p + z * z / (2.0 * n)) / denom
    half = z / denom * math.sqrt(p * (1.0 - p) / n + z * z / (4.0 * n * n))
    return (max(0.0, centre - half), min(1.0, centre + half))


def exact_interval(k: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Clopper-Pearson exact interval from beta quantiles (Clopper & Pearson, Biometrika 1934).

    Examples
    --------
    >>> [round(x, 4) for x in exact_interval(0, 10)]
    [0.0, 0.3085]
    """
    if n <= 0:
        return (math.nan, math.nan)
    a = (1.0 - confidence) / 2.0
    low = 0.0 if k == 0 else float(betaincinv(k, n - k + 1, a))
    high = 1.0 if k == n else float(betaincinv(k + 1, n - k, 1.0 - a))
    return (low, high)


def rule_of_three(n: int) -> float:
    """Approximate upper 95 % bound of a rate when 0 events were seen in ``n``: ``3 / n``.

    Hanley & Lippman-Hand, JAMA 1983 ("If nothing goes wrong, is everything all right?"). The
    approximation is meant for n of about 30 and more; a proportion is never above 1, so for
    n < 3 the bound is 1.

    Examples
    --------
    >>> rule_of_three(300)
    0.01
    >>> rule_of_three(1)
    1.0
    """
    return min(3.0 / n, 1.0) if n > 0 else math.nan


def proportion(k: int, n: int, confidence: float = 0.95) -> Proportion:
    """:class:`Proportion` of ``k`` events in ``n`` sessions with both intervals.

    Examples
    --------
    >>> p = proportion(0, 150)
    >>> p.rate, p.rule_of_three_high
    (0.0, 0.02)
    """
    w = wilson_interval(k, n, confidence)
    e = exact_interval(k, n, confidence)
    rate = k / n if n > 0 else math.nan
    r3 = rule_of_three(n) if (k == 0 and n > 0) else None
    return Proportion(int(k), int(n), rate, w[0], w[1], e[0], e[1], r3)


def funnel_limits(p0: float, n: np.ndarray | float, level: float) -> tuple[np.ndarray, np.ndarray]:
    """Control limits of a funnel plot for a proportion around the target ``p0``.

    Exact binomial limits with the interpolation of Spiegelhalter (Stat Med 2005, "Funnel
    plots for comparing institutional performance", appendix A.1.1): for the upper limit
    ``r`` is the smallest count with ``F(r) >= level_two_sided``, and the limit is
    ``(r - alpha) / n`` with ``alpha = (F(r) - p) / (F(r) - F(r - 1))``; the lower limit is
    the mirror with ``p = 1 - level_two_sided``.

    Parameters
    ----------
    p0 : float
        Target (overall) proportion, 0-1.
    n : array or float
        Sessions in each unit.
    level : float
        Two-sided coverage, e.g. 0.95 or 0.998.

    Returns
    -------
    (low, high) : arrays of fractions, clipped to [0, 1].
    """
    n = np.atleast_1d(np.asarray(n, dtype=float))
    low = np.full(n.shape, np.nan)
    high = np.full(n.shape, np.nan)
    for i, ni in enumerate(n):
        if ni > 0:
            low[i] = _interpolated_quantile((1.0 - level) / 2.0, int(ni), p0) / ni
            high[i] = _interpolated_quantile(1.0 - (1.0 - level) / 2.0, int(ni), p0) / ni
    return np.clip(low, 0.0, 1.0), np.clip(high, 0.0, 1.0)


def _interpolated_quantile(q: float, n: int, p0: float) -> float:
    """``r - alpha`` of Spiegelhalter (2005): the binomial ``q``-quantile, interpolated."""
    cdf = bdtr(np.arange(n + 1), n, p0)
    r = int(min(np.searchsorted(cdf, q, side="left"), n))
    f_r = cdf[r]
    f_prev = cdf[r - 1] if r > 0 else 0.0
    alpha = (f_r - q) / (f_r - f_prev) if f_r > f_prev else 0.0
    return r - alpha


@dataclass(frozen=True)
class PChart:
    """A p-chart (Shewhart): per-period proportions against 3-sigma limits around the mean.

    Attributes
    ----------
    labels : tuple of str
    k, n : tuple of int
    p : tuple of float
    centre : float
        Pooled proportion over all periods.
    low, high : tuple of float
        ``centre -/+ sigmas * sqrt(centre (1 - centre) / n_i)``, clipped to [0, 1].
    out_of_control : tuple of str
        Labels of periods outside their limits.
    """

    labels: tuple[str, ...]
    k: tuple[int, ...]
    n: tuple[int, ...]
    p: tuple[float, ...]
    centre: float
    low: tuple[float, ...]
    high: tuple[float, ...]
    out_of_control: tuple[str, ...]


def p_chart(labels, k, n, sigmas: float = 3.0) -> PChart:
    """p-chart with variable sample sizes (Montgomery, Introduction to Statistical Quality
    Control, ch. 7: limits ``p_bar -/+ 3 sqrt(p_bar (1 - p_bar) / n_i)``).

    Examples
    --------
    >>> c = p_chart(["2026-01", "2026-02"], [2, 9], [100, 100])
    >>> round(c.centre, 3), c.out_of_control
    (0.055, ())
    """
    k_a = np.asarray(k, dtype=float)
    n_a = np.asarray(n, dtype=float)
    centre = float(k_a.sum() / n_a.sum()) if n_a.sum() > 0 else math.nan
    half = sigmas * np.sqrt(centre * (1.0 - centre) / np.where(n_a > 0, n_a, np.nan))
    low = np.clip(centre - half, 0.0, 1.0)
    high = np.clip(centre + half, 0.0, 1.0)
    p = np.where(n_a > 0, k_a / np.where(n_a > 0, n_a, 1.0), np.nan)
    out = tuple(
        str(lab) for lab, pi, lo, hi in zip(labels, p, low, high, strict=True) if pi < lo or pi > hi
    )
    return PChart(
        tuple(str(x) for x in labels),
        tuple(int(x) for x in k),
        tuple(int(x) for x in n),
        tuple(float(x) for x in p),
        centre,
        tuple(float(x) for x in low),
        tuple(float(x) for x in high),
        out,
    )


def cusum_weights(y: np.ndarray, p: np.ndarray, odds_ratio: float) -> np.ndarray:
    """Log-likelihood-ratio scores of the Bernoulli CUSUM for an odds-ratio shift.

    Steiner, Cook, Farewell & Treasure, Biostatistics 2000: for a case with expected risk
    ``p`` and outcome ``y`` (1 = event), ``W = y log(R) - log(1 - p + R p)`` with ``R`` the
    odds ratio to detect. With the same ``p`` for every case it is the plain Bernoulli CUSUM.
    """
    y = np.asarray(y, dtype=float)
    p = np.asarray(p, dtype=float)
    return y * math.log(odds_ratio) - np.log(1.0 - p + odds_ratio * p)


def cusum_path(weights: np.ndarray) -> np.ndarray:
    """Upper CUSUM ``S_t = max(0, S_{t-1} + W_t)`` (Page, Biometrika 1954)."""
    s = np.empty(len(weights))
    acc = 0.0
    for i, w in enumerate(weights):
        acc = max(0.0, acc + float(w))
        s[i] = acc
    return s


@dataclass(frozen=True)
class Cusum:
    """A Bernoulli CUSUM over sessions in time order.

    Attributes
    ----------
    path : ndarray
        CUSUM value after each session.
    threshold : float
        Decision limit ``h``.
    odds_ratio : float
        Shift the chart is tuned to detect.
    signals : tuple of int
        Indexes (0-based) of sessions where the path first crosses ``h`` (reset after each).
    risk_adjusted : bool
    """

    path: np.ndarray
    threshold: float
    odds_ratio: float
    signals: tuple[int, ...]
    risk_adjusted: bool


def bernoulli_cusum(
    y, p, odds_ratio: float = 2.0, threshold: float = 4.5, risk_adjusted: bool = False
) -> Cusum:
    """Bernoulli (optionally risk-adjusted) CUSUM after Steiner et al., Biostatistics 2000.

    The plotted path is never reset; ``signals`` lists where a chart restarted at 0 after each
    signal would cross ``threshold`` again.

    Examples
    --------
    >>> c = bernoulli_cusum([1, 0, 1], [0.1, 0.1, 0.1])
    >>> [round(float(x), 4) for x in c.path]
    [0.5978, 0.5025, 1.1004]
    """
    w = cusum_weights(np.asarray(y), np.asarray(p), odds_ratio)
    path = cusum_path(w)
    signals = []
    acc = 0.0
    for i, wi in enumerate(w):
        acc = max(0.0, acc + float(wi))
        if acc >= threshold:
            signals.append(i)
            acc = 0.0
    return Cusum(path, float(threshold), float(odds_ratio), tuple(signals), risk_adjusted)


def median_or_none(values) -> float | None:
    """Median of the finite values, None when there are none."""
    a = np.asarray([v for v in values if v is not None], dtype=float)
    a = a[np.isfinite(a)]
    return float(np.median(a)) if a.size else None
