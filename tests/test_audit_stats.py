"""Audit statistics against reference libraries, published series and worked examples."""

from __future__ import annotations

import math

import numpy as np
import pytest
from statsmodels.stats.proportion import proportion_confint

from sedreport.audit.stats import (
    bernoulli_cusum,
    exact_interval,
    funnel_limits,
    p_chart,
    proportion,
    rule_of_three,
    wilson_interval,
    z_value,
)

CASES = [(0, 1), (0, 10), (1, 10), (5, 10), (10, 10), (3, 250), (0, 1000), (17, 1000), (999, 1000)]


@pytest.mark.parametrize(("k", "n"), CASES)
def test_wilson_equals_statsmodels(k, n):
    # Reference library: statsmodels proportion_confint(method="wilson").
    low, high = proportion_confint(k, n, alpha=0.05, method="wilson")
    ours = wilson_interval(k, n)
    assert ours[0] == pytest.approx(low, abs=1e-9)
    assert ours[1] == pytest.approx(high, abs=1e-9)


@pytest.mark.parametrize(("k", "n"), CASES)
def test_exact_equals_statsmodels_beta(k, n):
    # Reference library: statsmodels proportion_confint(method="beta") = Clopper-Pearson.
    low, high = proportion_confint(k, n, alpha=0.05, method="beta")
    ours = exact_interval(k, n)
    assert ours[0] == pytest.approx(low, abs=1e-9)
    assert ours[1] == pytest.approx(high, abs=1e-9)


def test_other_confidence_levels_equal_statsmodels():
    for method, fn in (("wilson", wilson_interval), ("beta", exact_interval)):
        low, high = proportion_confint(7, 60, alpha=0.10, method=method)
        assert fn(7, 60, 0.90) == pytest.approx((low, high), abs=1e-9)


def test_published_series_mallory_2011():
    # Mallory et al., Ann Emerg Med 2011: 581 adverse events in 25,433 sedations,
    # 2.28 %, 95 % CI 2.1-2.5 %.
    p = proportion(581, 25433)
    assert round(100 * p.rate, 2) == 2.28
    assert (round(100 * p.wilson_low, 1), round(100 * p.wilson_high, 1)) == (2.1, 2.5)
    assert (round(100 * p.exact_low, 1), round(100 * p.exact_high, 1)) == (2.1, 2.5)


def test_rule_of_three_published_value():
    # Hanley & Lippman-Hand, JAMA 1983: with 0 events in n, the upper 95 % bound is about
    # 3/n; the exact one-sided bound solves (1 - p)^n = 0.05. Their example: n = 300 -> 1 %.
    assert rule_of_three(300) == pytest.approx(0.01)
    exact = 1.0 - 0.05 ** (1.0 / 300)
    assert abs(rule_of_three(300) - exact) / exact < 0.01
    assert proportion(0, 300).rule_of_three_high == pytest.approx(0.01)
    assert proportion(1, 300).rule_of_three_high is None


def test_z_value_is_handbook_value():
    # Handbook value (common practice): z(0.975) = 1.959964.
    assert z_value(0.95) == pytest.approx(1.959964, abs=1e-6)


def test_funnel_limits_worked_binomial_example():
    # Worked by hand from the binomial table of Bin(10, 0.5) (F(1) = 11/1024, F(2) = 56/1024,
    # F(7) = 968/1024, F(8) = 1013/1024) with the interpolation of Spiegelhalter, Stat Med 2005,
    # appendix A.1.1: upper 95 % = (8 - (1013 - 998.4)/45)/10, lower = (2 - (56 - 25.6)/45)/10.
    low, high = funnel_limits(0.5, 10, 0.95)
    assert high[0] == pytest.approx((8 - 14.6 / 45) / 10, abs=1e-9)
    assert low[0] == pytest.approx((2 - 30.4 / 45) / 10, abs=1e-9)


def test_funnel_limits_approach_normal_approximation():
    # Spiegelhalter, Stat Med 2005: for large n the limits approach p0 +- z sqrt(p0 (1-p0)/n).
    n = np.array([2000.0, 5000.0])
    p0 = 0.05
    for level in (0.95, 0.998):
        low, high = funnel_limits(p0, n, level)
        half = z_value(level) * np.sqrt(p0 * (1 - p0) / n)
        assert np.allclose(high, p0 + half, atol=0.02 * p0)
        assert np.allclose(low, p0 - half, atol=0.02 * p0)
    lo95, hi95 = funnel_limits(p0, n, 0.95)
    lo998, hi998 = funnel_limits(p0, n, 0.998)
    assert np.all(hi998 > hi95) and np.all(lo998 < lo95)


def test_p_chart_worked_example():
    # Montgomery, Introduction to Statistical Quality Control (ch. 7, the orange-juice can
    # example, from memory): 347 nonconforming in 30 samples of 50: p_bar = 0.2313,
    # UCL = 0.4102, LCL = 0.0524.
    k = [
        12,
        15,
        8,
        10,
        4,
        7,
        16,
        9,
        14,
        10,
        5,
        6,
        17,
        12,
        22,
        8,
        10,
        5,
        13,
        11,
        20,
        18,
        24,
        15,
        9,
        12,
        7,
        13,
        9,
        6,
    ]
    assert sum(k) == 347
    c = p_chart([str(i) for i in range(30)], k, [50] * 30)
    assert c.centre == pytest.approx(0.2313, abs=1e-4)
    assert c.high[0] == pytest.approx(0.4102, abs=1e-4)
    assert c.low[0] == pytest.approx(0.0524, abs=1e-4)
    # Samples 15 (22/50) and 23 (24/50) are above the UCL in that example.
    assert c.out_of_control == ("14", "22")


def test_bernoulli_cusum_worked_example():
    # Steiner et al., Biostatistics 2000: W = y log(R) - log(1 - p + R p). Worked by hand for
    # R = 2: a death at p = 0.1 scores log 2 - log 1.1 = 0.59784, a survival -log 1.1 = -0.09531;
    # at p = 0.5 a survival scores -log 1.5 = -0.40547.
    c = bernoulli_cusum([1, 0, 0, 1, 1], [0.1, 0.1, 0.5, 0.1, 0.1], odds_ratio=2.0, threshold=1.0)
    expected = [0.59784, 0.50253, 0.09706, 0.69490, 1.29274]
    assert np.allclose(c.path, expected, atol=1e-5)
    assert c.signals == (4,)
    # Never below zero, and a run of survivals brings it back to 0.
    quiet = bernoulli_cusum([0] * 50, [0.1] * 50)
    assert float(quiet.path.max()) == 0.0


def test_cusum_signals_a_drift():
    rng = np.random.default_rng(1)
    y = np.concatenate([rng.random(400) < 0.05, rng.random(200) < 0.15]).astype(int)
    c = bernoulli_cusum(y, np.full(600, 0.05), odds_ratio=2.0, threshold=4.5)
    assert c.signals and c.signals[0] >= 380
    assert math.isfinite(c.path[-1])


def test_risk_adjusted_expected_risk_per_cell():
    from sedreport.audit.report import RISK_CELL_MIN_SESSIONS, expected_risks

    # Cell A has 30 sessions with 3 events (its own rate, 0.1); cell B has 10 with 4 (fewer
    # than the minimum, so the overall rate 7/40 is used).
    assert RISK_CELL_MIN_SESSIONS == 20
    cells = [("2", "moderate")] * 30 + [("3", "deep")] * 10
    y = [1, 1, 1] + [0] * 27 + [1] * 4 + [0] * 6
    p = expected_risks(cells, y)
    assert np.allclose(p[:30], 0.1) and np.allclose(p[30:], 7 / 40)
    # Steiner et al. (2000): with risk adjustment an event in a high-risk case scores less.
    c = bernoulli_cusum([1, 1], [0.1, 0.5], odds_ratio=2.0, risk_adjusted=True)
    assert c.path[0] == pytest.approx(math.log(2) - math.log(1.1))
    assert c.path[1] - c.path[0] == pytest.approx(math.log(2) - math.log(1.5))
