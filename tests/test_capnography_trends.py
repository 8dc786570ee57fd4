"""Trends (rate in a trailing window, per-breath EtCO2/FiCO2) and the pre-dose baseline.

Expected values are worked out from the planted recipe of ``test_capnography_traces.py``.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest
from test_capnography_traces import TraceSpec, make_trace

from sedreport.capnography import compute_trends, estimate_baseline, find_breaths
from sedreport.capnography.trends import rate_trend
from sedreport.session import Dose, OximetryTrend, Session

STARTED = datetime(2026, 3, 14, 9, 12, tzinfo=UTC)


def _session(cap=None, spo2=None, doses=()):
    return Session(
        session_id="TEST-01",
        started=STARTED,
        folder=Path("."),
        co2=cap,
        spo2=spo2,
        doses=tuple(doses),
    )


def _bolus(t_s, drug="propofol", mg=30.0):
    return Dose(t_s, drug, mg, "mg", "iv", "bolus", mg, 0.0, 2)


def test_rate_trend_counts_breaths_in_trailing_window():
    """Breaths every 5 s -> 12/min once the 60 s window is full; 0/min through a pause."""
    cap, truth = make_trace(TraceSpec(rr_jitter_frac=0.0, duration_s=400.0, pauses=[(200.0, 90.0)]))
    b = find_breaths(cap)
    tr = compute_trends(_session(cap), b, rr_window_s=60.0)
    rr = dict(zip(tr.rr_time_s, tr.rr_per_min, strict=True))
    assert rr[150.0] == pytest.approx(12.0, abs=1.0)
    # no breath starts between ~201 s and ~291 s: the window (220, 280] holds none
    assert rr[280.0] == 0.0
    assert np.isnan(rr[10.0])  # the first 30 s of data cannot fill half a window
    assert tr.rr_window_s == 60.0
    assert np.all(np.diff(tr.rr_time_s) == 1.0)


def test_rate_trend_nan_inside_gaps_and_scaled_by_coverage():
    starts = np.r_[np.arange(0.0, 100.0, 5.0), np.arange(150.0, 300.0, 5.0)]
    grid, rr = rate_trend(starts, np.array([0.0, 150.0]), np.array([100.0, 300.0]), 60.0)
    r = dict(zip(grid, rr, strict=True))
    assert np.isnan(r[120.0])  # inside the gap
    # at 180 s the window (120, 180] holds 30 s of data and the 7 starts 150, 155 ... 180
    assert r[180.0] == pytest.approx(7 * 60.0 / 30.0)
    assert np.isnan(r[170.0])  # (110, 170] holds only 20 s of data: less than half a window
    assert r[90.0] == pytest.approx(12.0)


def test_rate_trend_rejects_bad_window():
    with pytest.raises(ValueError, match="rr_window_s must be positive"):
        rate_trend(np.array([1.0]), np.array([0.0]), np.array([10.0]), 0.0)


def test_trend_values_are_the_valid_breaths():
    cap, truth = make_trace(TraceSpec(gaps=[(100.0, 110.0)]))
    b = find_breaths(cap)
    tr = compute_trends(_session(cap), b)
    assert tr.breath_time_s.size == int(b.valid.sum())
    assert np.array_equal(tr.etco2_mmHg, b.etco2_mmHg[b.valid])
    assert np.array_equal(tr.breath_time_s, b.end_s[b.valid])


def test_trends_include_cleaned_oximetry_and_handle_missing_streams():
    t = np.arange(0.0, 120.0)
    spo2 = np.full(t.size, 97.0) + (np.arange(t.size) % 2)
    spo2[50] = 0.0  # the probe's "no reading": missing, not an artefact
    spo2[80:83] = 80.0  # a 17-point fall that is back 3 s later: the drop rule's artefact
    ox = OximetryTrend(t, spo2, 70.0 + np.arange(t.size) % 3, 1.0)
    tr = compute_trends(_session(None, ox), find_breaths(make_trace(TraceSpec(duration_s=60))[0]))
    assert tr.rr_time_s.size == 0 and tr.rr_per_min.size == 0
    assert not tr.spo2_artefact[50] and np.isnan(tr.spo2_pct[50])
    assert np.flatnonzero(tr.spo2_artefact).tolist() == [80, 81, 82]
    cap, _ = make_trace(TraceSpec(duration_s=60))
    tr2 = compute_trends(_session(cap), find_breaths(cap))
    assert tr2.spo2_time_s.size == 0 and tr2.spo2_artefact.dtype == bool


def _baseline_case(dose_at_s=180.0, etco2_pre=38.0):
    """Pre-dose EtCO2 38 mmHg at 12/min; after the dose 48 mmHg at 8/min."""
    pre, _ = make_trace(TraceSpec(duration_s=dose_at_s, etco2_mmHg=etco2_pre, seed=1))
    post, _ = make_trace(TraceSpec(duration_s=300.0, etco2_mmHg=48.0, rr_per_min=8.0, seed=2))
    t = np.r_[pre.time_s, post.time_s + dose_at_s]
    y = np.r_[pre.co2_mmHg, post.co2_mmHg]
    return replace(pre, time_s=t, co2_mmHg=y)


def test_baseline_from_the_minutes_before_the_first_dose():
    cap = _baseline_case()
    b = find_breaths(cap)
    base = estimate_baseline(_session(cap, doses=[_bolus(200.0, "fentanyl"), _bolus(180.0)]), b)
    assert base.window_s == (60.0, 180.0)
    assert base.etco2_mmHg == pytest.approx(38.0, abs=0.7)
    assert base.rr_per_min == pytest.approx(12.0, abs=0.7)
    assert base.n_breaths >= 20
    assert "before the first dose" in base.method and "propofol" in base.method
    assert base.phase3_slope_norm_per_s == pytest.approx(1.0 / 38.0, rel=0.2)
    assert base.upstroke_s > 0


def test_baseline_fallback_without_doses():
    cap = _baseline_case()
    base = estimate_baseline(_session(cap), find_breaths(cap), window_s=120.0)
    assert "no dose recorded" in base.method
    assert base.window_s[1] - base.window_s[0] == 120.0
    assert base.etco2_mmHg == pytest.approx(38.0, abs=0.7)


def test_baseline_fallback_with_too_little_predose_data():
    cap = _baseline_case(dose_at_s=20.0)
    base = estimate_baseline(_session(cap, doses=[_bolus(20.0)]), find_breaths(cap))
    assert base.method.startswith("only")
    assert "first 120 s of valid breathing" in base.method
    assert base.window_s[1] - base.window_s[0] == 120.0


def test_baseline_without_any_breath():
    t = np.arange(0.0, 60.0, 0.01)
    cap = replace(make_trace(TraceSpec(duration_s=1.0))[0], time_s=t, co2_mmHg=np.zeros(t.size))
    base = estimate_baseline(_session(cap), find_breaths(cap))
    assert base.n_breaths == 0 and np.isnan(base.etco2_mmHg)
    assert "no valid breath" in base.method
    with pytest.raises(ValueError, match="window_s must be positive"):
        estimate_baseline(_session(cap), find_breaths(cap), window_s=0.0)


def test_rate_ignores_doubtful_deflections_in_a_pause():
    """8 mmHg cardiogenic ripples through a 60 s pause are invalid deflections (at the heart
    rate, 72/min: above adult breathing rates, common practice): rate 0."""
    spec = TraceSpec(
        rr_jitter_frac=0.0, cardiogenic_mmHg=8.0, heart_rate_hz=1.2, pauses=[(100.0, 60.0)]
    )
    cap, _ = make_trace(spec)
    b = find_breaths(cap)
    assert (~b.valid).sum() > 10  # the ripples do show as invalid deflections
    tr = compute_trends(_session(cap), b, rr_window_s=30.0)
    rr = dict(zip(tr.rr_time_s, tr.rr_per_min, strict=True))
    assert rr[150.0] == 0.0
    assert rr[90.0] == pytest.approx(12.0, abs=2.1)
