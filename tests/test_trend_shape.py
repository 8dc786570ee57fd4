"""Shape indices of the trend: the alpha angle and slopes against a hand-computed worked
example, and recovery of planted shapes on generated visits."""

from __future__ import annotations

import math

import numpy as np
import pytest
from trend_fixtures import capnogram_of, make_session, planted_schedule

from sedreport.capnography import find_breaths
from sedreport.session import Capnogram
from sedreport.trend import alpha_angle_deg, load_trend_settings, visit_indices
from sedreport.trend.shape import averaged_breath, phase2_slope_mmHg_s, phase2_time_s

SETTINGS = load_trend_settings()


def test_alpha_angle_worked_example_by_hand():
    # Worked by hand: atan(100/10) = 84.2894 deg, atan(2/10) = 11.3099 deg,
    # alpha = 180 - 84.2894 + 11.3099 = 107.0205 deg.
    assert alpha_angle_deg(100.0, 2.0, 10.0) == pytest.approx(107.0205, abs=1e-3)
    # A square capnogram (vertical upstroke, flat plateau) has a right angle (geometry).
    assert alpha_angle_deg(np.inf, 0.0, 10.0) == pytest.approx(90.0)
    # k = 1 mmHg/s, 45-degree upstroke and flat plateau: 180 - 45 + 0 = 135 deg.
    assert alpha_angle_deg(1.0, 0.0, 1.0) == pytest.approx(135.0)
    # Obstruction (slower upstroke, steeper plateau) widens the angle (You et al., Eur
    # Respir J 1994; from memory).
    assert alpha_angle_deg(40.0, 8.0, 10.0) > alpha_angle_deg(100.0, 2.0, 10.0)


def test_alpha_scale_is_stated_in_the_settings():
    e = SETTINGS.entry("shape.alpha_scale_mmHg_per_s")
    assert e.value == 10.0 and e.unit == "mmHg/s" and "You et al., Eur Respir J 1994" in e.source


def _piecewise_linear_breaths(fs_hz: float = 100.0, n: int = 40) -> Capnogram:
    """Hand-built breaths: 0 -> 30 mmHg in 0.3 s (100 mmHg/s), plateau 30 -> 36 mmHg in 3 s
    (2 mmHg/s), down to 0 in 0.15 s, 1.55 s at 0 (cycle 5 s, 12/min)."""
    knots_t = np.array([0.0, 0.3, 3.3, 3.45, 5.0])
    knots_y = np.array([0.0, 30.0, 36.0, 0.0, 0.0])
    t = np.arange(0.0, n * 5.0, 1.0 / fs_hz)
    y = np.interp(np.mod(t - 1.0, 5.0), knots_t, knots_y)
    y[t < 1.0] = 0.0
    return Capnogram(t, y, fs_hz)


def test_slopes_and_angle_on_a_hand_built_breath():
    cap = _piecewise_linear_breaths()
    b = find_breaths(cap)
    ok = b.valid
    assert ok.sum() >= 35
    s2 = phase2_slope_mmHg_s(cap, b)[ok]
    # 25 % and 75 % of 36 mmHg (9 and 27 mmHg) both lie on the 100 mmHg/s upstroke.
    assert np.median(s2) == pytest.approx(100.0, rel=0.01)
    assert np.median(b.phase3_slope_mmHg_s[ok]) == pytest.approx(2.0, rel=0.02)
    alpha = alpha_angle_deg(s2, b.phase3_slope_mmHg_s[ok], 10.0)
    assert np.median(alpha) == pytest.approx(107.02, abs=0.3)
    # Upstroke time: 0.8 x 36 / 100 = 0.288 s (10-90 % rise of a straight upstroke).
    t2 = phase2_time_s(b.etco2_mmHg[ok], 0.0, s2)
    assert np.median(t2) == pytest.approx(0.288, abs=0.01)


def _raised_cosine_slope(et: float, p0: float, tu: float, lo=0.25, hi=0.75) -> float:
    """Phase II slope between the lo/hi crossings of a raised-cosine rise 0 -> p0 in tu
    seconds, levels as fractions of et (the demo model's upstroke; algebra by hand)."""
    x = [math.acos(1.0 - 2.0 * f * et / p0) / math.pi for f in (lo, hi)]
    return (hi - lo) * et / (tu * (x[1] - x[0]))


# (rr /min, upstroke s, phase III slope mmHg/s, EtCO2 mmHg): normal to obstructed.
CASES = [
    (14.0, 0.20, 1.0, 38.0),
    (18.0, 0.35, 3.0, 44.0),
    (22.0, 0.50, 5.0, 50.0),
]


@pytest.mark.parametrize(("rr", "tu", "slope", "et"), CASES)
def test_planted_shapes_are_recovered(rr, tu, slope, et):
    sched = planted_schedule(150, rr, tu, slope, et, jitter=0.04, seed=3)
    cap = capnogram_of(sched, 25.0, 0.3)
    v = visit_indices(make_session(cap), SETTINGS)
    s = v.stats
    p0 = et - slope * float(np.median(sched.plateau_s))
    s2 = _raised_cosine_slope(et, p0, tu)
    expected_alpha = float(alpha_angle_deg(s2, slope, 10.0))
    # Tolerances (noise SD 0.3 mmHg at 25 Hz, medians over ~150 breaths): EtCO2 within
    # 0.7 mmHg (end-of-plateau window read); rate within 0.3 /min; phase III slope within 5 %
    # + 0.1 mmHg/s (least squares over about a second of plateau); phase II slope within 12 %
    # (crossings interpolated between samples 40 ms apart on a curved rise); alpha within 2 deg.
    assert s["etco2_mmHg"].median == pytest.approx(et, abs=0.7)
    assert s["rr_per_min"].median == pytest.approx(rr, abs=0.3)
    assert s["phase3_slope_mmHg_s"].median == pytest.approx(slope, rel=0.05, abs=0.1)
    assert s["phase3_slope_norm_per_s"].median == pytest.approx(slope / et, rel=0.06, abs=0.003)
    assert s["phase2_slope_mmHg_s"].median == pytest.approx(s2, rel=0.12)
    assert s["alpha_angle_deg"].median == pytest.approx(expected_alpha, abs=2.0)
    assert s["upstroke_s"].median == pytest.approx(0.8 * et / s2, rel=0.12)
    # Inspired CO2 within 1 mmHg of 0: the sensor model clips noise at 0 mmHg, which raises
    # the mean of a zero baseline by about 0.4 SD, and short pauses keep some downstroke tail.
    assert s["fico2_mmHg"].median == pytest.approx(0.0, abs=1.0)
    assert v.breaths_used >= 140 and v.excluded_pct < 5


def test_indices_order_with_obstruction():
    values = []
    for rr, tu, slope, et in CASES:
        cap = capnogram_of(planted_schedule(120, rr, tu, slope, et, seed=5), 25.0, 0.3)
        values.append(visit_indices(make_session(cap), SETTINGS).stats)
    for key in ("alpha_angle_deg", "phase3_slope_norm_per_s", "upstroke_s"):
        medians = [v[key].median for v in values]
        assert medians == sorted(medians), key


def test_averaged_breath_matches_the_planted_shape():
    sched = planted_schedule(100, 15.0, 0.3, 2.0, 40.0, seed=2)
    cap = capnogram_of(sched, 50.0, 0.2)
    b = find_breaths(cap)
    avg = averaged_breath(cap, b, b.valid, 0.02)
    assert avg.n_breaths == int(b.valid.sum())
    # At 2.0 s after onset the planted breath is on its plateau: p0 + slope * (2.0 - 0.3).
    plateau_s = float(np.median(sched.plateau_s))
    p0 = 40.0 - 2.0 * plateau_s
    k = int(np.argmin(np.abs(avg.time_s - 2.0)))
    # The detected onset is a few samples after the true one (3-10 % level): 1 mmHg.
    assert avg.co2_mmHg[k] == pytest.approx(p0 + 2.0 * 1.7, abs=1.0)
    assert np.nanmax(avg.co2_mmHg) == pytest.approx(40.0, abs=1.0)
    assert avg.co2_mmHg[0] == pytest.approx(0.0, abs=0.5)
