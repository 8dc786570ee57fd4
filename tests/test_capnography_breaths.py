"""Breath detection scored against synthetic capnograms with planted truth.

Truth comes from the recipe in ``test_capnography_traces.py`` (invented data with known
breaths). Tolerances: a detected breath matches a true one when the starts are within 0.5 s
(the task's matching rule); recall and precision >= 0.99 and a median EtCO2 error <= 1 mmHg are
the project's done-when figures.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_capnography_traces import TraceSpec, make_trace, score

from sedreport.capnography import (
    CONTRACT_COLUMNS,
    DetectionSettings,
    breaths_to_frame,
    find_breaths,
)
from sedreport.errors import SessionError
from sedreport.session import Capnogram


def breaths_valid_only(b):
    """The valid breaths of a table, as a table."""
    keep = np.asarray(b.valid, dtype=bool)
    fields = {f: getattr(b, f) for f in b.__dataclass_fields__}
    sub = {
        f: (v[keep] if isinstance(v, np.ndarray) else tuple(np.asarray(v)[keep]))
        for f, v in fields.items()
    }
    return type(b)(**sub)


def _assert_figures(breaths, truth, etco2_tol=1.0):
    s = score(breaths, truth)
    assert s["recall"] >= 0.99, s
    assert s["precision"] >= 0.99, s
    assert s["etco2_err_median_mmHg"] <= etco2_tol, s
    return s


def test_clean_trace_times_follow_design_conventions():
    """Start = upstroke onset, end = back at baseline: within two samples-ish of the truth."""
    cap, truth = make_trace(TraceSpec(fs_hz=100.0, duration_s=300.0))
    s = _assert_figures(find_breaths(cap), truth, etco2_tol=0.2)
    # the 10 % level of a 0.25 s raised-cosine upstroke lies 0.05 s after its onset
    assert s["start_err_median_s"] <= 0.06
    assert s["end_err_median_s"] <= 0.05


@pytest.mark.parametrize("fs_hz", [20.0, 25.0, 50.0, 100.0, 200.0])
def test_sample_rates_20_to_200_hz(fs_hz):
    cap, truth = make_trace(TraceSpec(fs_hz=fs_hz, noise_sd_mmHg=1.0, seed=3))
    _assert_figures(find_breaths(cap), truth)


@pytest.mark.parametrize("sd", [0.5, 1.0, 2.0, 3.0, 5.0])
def test_white_noise_at_100_hz(sd):
    """Figures hold to SD 5 mmHg at 100 Hz (see benchmarks/bench_capnography.py sweep)."""
    cap, truth = make_trace(TraceSpec(fs_hz=100.0, noise_sd_mmHg=sd, seed=1))
    _assert_figures(find_breaths(cap), truth)


@pytest.mark.parametrize("sd", [0.5, 1.0, 2.0])
def test_white_noise_at_20_hz(sd):
    """At 20 Hz the light smoothing averages only 3 samples: figures hold to SD 2 mmHg."""
    cap, truth = make_trace(TraceSpec(fs_hz=20.0, noise_sd_mmHg=sd, seed=2))
    _assert_figures(find_breaths(cap), truth)


def test_noise_beyond_the_stated_limit_degrades():
    """The degradation point is real: at 20 Hz, SD 5 mmHg on a 15 mmHg plateau fails."""
    recalls = []
    for seed in range(3):
        cap, truth = make_trace(
            TraceSpec(fs_hz=20.0, etco2_mmHg=15.0, noise_sd_mmHg=5.0, seed=seed)
        )
        s = score(find_breaths(cap), truth)
        recalls.append(min(s["recall"], s["precision"]))
    assert min(recalls) < 0.99


def test_baseline_drift():
    cap, truth = make_trace(TraceSpec(drift_mmHg=6.0, drift_period_s=120.0, noise_sd_mmHg=0.5))
    _assert_figures(find_breaths(cap), truth)


@pytest.mark.parametrize("plateau", [10.0, 15.0, 20.0])
def test_nasal_cannula_dilution(plateau):
    cap, truth = make_trace(TraceSpec(etco2_mmHg=plateau, noise_sd_mmHg=1.0, seed=4))
    _assert_figures(find_breaths(cap), truth)


def test_cardiogenic_oscillations_make_no_breath_and_split_none():
    """3 mmHg ripples at 72/min on the baseline through a 40 s pause and on every plateau."""
    spec = TraceSpec(cardiogenic_mmHg=3.0, heart_rate_hz=1.2, pauses=[(100.0, 40.0)])
    cap, truth = make_trace(spec)
    b = find_breaths(cap)
    # ripples of +-1.5 mmHg on the plateau move the end-tidal reading by up to their height
    _assert_figures(b, truth, etco2_tol=1.5)
    in_pause = (b.start_s > truth["end_s"][truth["start_s"] < 100.0].max()) & (
        b.start_s < truth["start_s"][truth["start_s"] > 100.0].min() - 0.5
    )
    assert not in_pause.any()


def test_flat_noise_alone_makes_no_breath():
    rng = np.random.default_rng(7)
    t = np.arange(0.0, 300.0, 0.01)
    for sd in (0.5, 1.0, 2.0):
        cap = Capnogram(
            time_s=t, co2_mmHg=1.0 + sd * rng.standard_normal(t.size), sample_rate_hz=100.0
        )
        assert len(find_breaths(cap)) == 0


def test_fast_and_slow_rates():
    for rr in (6.0, 30.0, 40.0):
        short = rr >= 30
        spec = TraceSpec(
            rr_per_min=rr,
            exp_frac=0.5 if short else 0.45,
            upstroke_s=0.15 if short else 0.25,
            down_s=0.15 if short else 0.2,
            noise_sd_mmHg=0.5,
        )
        cap, truth = make_trace(spec)
        b = find_breaths(cap)
        _assert_figures(b, truth)
        assert abs(np.nanmedian(b.rr_per_min) - rr) < 0.5


def test_gaps_split_detection():
    """No breath spans a gap; the first breath after a gap has no rate (DESIGN.md)."""
    spec = TraceSpec(gaps=[(100.0, 112.0), (200.3, 203.0)], noise_sd_mmHg=0.5)
    cap, truth = make_trace(spec)
    b = find_breaths(cap)
    _assert_figures(b, truth)
    for g0, g1 in spec.gaps:
        assert not np.any((b.start_s < g0) & (b.end_s > g1))
        after = np.flatnonzero(b.start_s > g1)[0]
        assert np.isnan(b.rr_per_min[after])
    assert np.isnan(b.rr_per_min[0])
    cut = np.array(["gap" in r for r in b.reason])
    assert not b.valid[cut].any()


def test_etco2_is_not_a_noise_spike():
    cap, truth = make_trace(TraceSpec(noise_sd_mmHg=0.3))
    y = cap.co2_mmHg.copy()
    rng = np.random.default_rng(11)
    spikes = rng.choice(y.size, 60, replace=False)
    y[spikes] += 25.0
    b = find_breaths(Capnogram(cap.time_s, y, cap.sample_rate_hz))
    _assert_figures(b, truth, etco2_tol=0.5)


def _rise_time_10_90(upstroke_s: float, slope: float, exp_s: float, etco2: float) -> float:
    """10 -> 90 % of EtCO2 rise time of the recipe's breath, worked out from its formula.

    Raised-cosine upstroke to ``p0 = etco2 - slope * (exp_s - upstroke_s)``, then the linear
    plateau; each level is solved on whichever piece reaches it first.
    """
    p0 = etco2 - slope * (exp_s - upstroke_s)

    def reach(level):
        if level <= p0:
            return upstroke_s * np.arccos(1 - 2 * level / p0) / np.pi
        return upstroke_s + (level - p0) / slope

    return reach(0.9 * etco2) - reach(0.1 * etco2)


def test_phase3_slope_and_upstroke_recovered():
    """Planted plateau slope (mmHg/s) and the 10-90 % rise time of the planted waveform."""
    for slope, up in ((0.5, 0.3), (3.0, 0.3), (0.2, 0.9)):
        cap, truth = make_trace(TraceSpec(slope_mmHg_s=slope, upstroke_s=up, etco2_sd_mmHg=0))
        b = find_breaths(cap)
        assert np.median(b.phase3_slope_mmHg_s) == pytest.approx(slope, abs=0.1)
        assert np.median(b.phase3_slope_norm_per_s) == pytest.approx(slope / 38.0, rel=0.05)
        expected = _rise_time_10_90(up, slope, 0.45 * 5.0, 38.0)
        # the 0.15 s smoothing lengthens a fast rise by a few hundredths of a second
        assert np.median(b.upstroke_s) == pytest.approx(expected, abs=0.05)


def test_clipped_plateaus_are_marked():
    cap, truth = make_trace(TraceSpec(clip_mmHg=36.0, noise_sd_mmHg=0.2))
    b = find_breaths(cap)
    clipped = np.array(["clipped" in r for r in b.reason])
    assert clipped.mean() > 0.8
    assert not b.valid[clipped].any()


def test_integer_quantised_export_is_not_called_clipped():
    cap, truth = make_trace(TraceSpec(noise_sd_mmHg=0.0, slope_mmHg_s=0.0, etco2_sd_mmHg=0.0))
    q = Capnogram(cap.time_s, np.round(cap.co2_mmHg), cap.sample_rate_hz)
    b = find_breaths(q)
    assert b.valid.all()


def test_frame_contract_columns():
    cap, _ = make_trace(TraceSpec(duration_s=60.0))
    frame = breaths_to_frame(find_breaths(cap))
    assert tuple(frame.columns[:7]) == CONTRACT_COLUMNS
    assert CONTRACT_COLUMNS == (
        "start_s",
        "end_s",
        "etco2_mmHg",
        "fico2_mmHg",
        "rr_per_min",
        "phase3_slope_mmHg_s",
        "valid",
    )
    assert frame["valid"].dtype == bool
    assert {"upstroke_s", "phase3_slope_norm_per_s", "reason"} <= set(frame.columns)


def test_input_not_modified_and_deterministic():
    cap, _ = make_trace(TraceSpec(noise_sd_mmHg=1.0, duration_s=60.0))
    before = cap.co2_mmHg.copy()
    a, b = find_breaths(cap), find_breaths(cap)
    assert np.array_equal(cap.co2_mmHg, before)
    assert np.array_equal(a.start_s, b.start_s)


def test_empty_and_degenerate_inputs():
    empty = Capnogram(np.empty(0), np.empty(0), 100.0)
    assert len(find_breaths(empty)) == 0
    one = Capnogram(np.array([0.0]), np.array([3.0]), 100.0)
    assert len(find_breaths(one)) == 0
    nan = Capnogram(np.arange(100) / 10.0, np.full(100, np.nan), 10.0)
    assert len(find_breaths(nan)) == 0
    frame = breaths_to_frame(find_breaths(empty))
    assert tuple(frame.columns[:7]) == CONTRACT_COLUMNS


def test_bad_arrays_raise_session_error():
    with pytest.raises(SessionError, match="not strictly increasing"):
        find_breaths(Capnogram(np.array([0.0, 0.1, 0.1]), np.zeros(3), 10.0))
    with pytest.raises(SessionError, match="differ in shape"):
        find_breaths(Capnogram(np.arange(3.0), np.zeros(4), 10.0))
    with pytest.raises(SessionError, match="sample_rate_hz must be positive"):
        find_breaths(Capnogram(np.arange(3.0), np.zeros(3), 0.0))


def test_settings_are_used():
    """A huge minimum amplitude turns every breath away: the setting is honoured."""
    cap, _ = make_trace(TraceSpec(duration_s=60.0))
    assert len(find_breaths(cap, settings=DetectionSettings(min_amplitude_mmHg=80.0))) == 0


def test_breaths_cut_by_a_gap_are_invalid_and_unrated():
    """Breaths every 5 s from 1 s (no jitter); a gap 42.0-47.5 s cuts the breath starting at
    41 s (mid-plateau at 42 s) and the one starting at 46 s (mid-plateau at 47.5 s)."""
    cap, truth = make_trace(TraceSpec(rr_jitter_frac=0.0, duration_s=90.0, gaps=[(42.0, 47.5)]))
    b = find_breaths(cap)
    cut = np.array(["gap" in r for r in b.reason])
    assert cut.sum() == 2
    assert b.start_s[cut][0] == pytest.approx(41.0, abs=0.1)
    assert b.end_s[cut][0] <= 42.0 and b.start_s[cut][1] >= 47.5
    assert not b.valid[cut].any()
    nxt = np.flatnonzero(b.start_s > 50.0)[0]
    # the breath cut at its end keeps its rate (its start is seen); the one cut at its start
    # and the next one have none
    assert b.rr_per_min[cut][0] == pytest.approx(12.0, abs=0.01)
    assert np.isnan(b.rr_per_min[cut][1]) and np.isnan(b.rr_per_min[nxt])
    assert b.valid[~cut].all()


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    values=st.lists(
        st.floats(min_value=-5.0, max_value=150.0, allow_nan=False), min_size=0, max_size=400
    ),
    fs=st.sampled_from([10.0, 20.0, 50.0]),
    gap_at=st.integers(min_value=0, max_value=400),
)
def test_any_trace_gives_a_consistent_table(values, fs, gap_at):
    """Property: any finite trace (with one gap) gives ordered breaths that never span it."""
    y = np.asarray(values, dtype=float)
    t = np.arange(y.size) / fs
    t = np.where(np.arange(y.size) >= gap_at, t + 5.0, t)  # a 5 s gap before sample gap_at
    b = find_breaths(Capnogram(t, y, fs))
    assert len(b) == b.end_s.size == len(b.reason) == b.valid.size
    assert np.all(b.end_s >= b.start_s)
    assert np.all(np.diff(b.start_s) > 0)
    if 0 < gap_at < y.size:
        g0, g1 = t[gap_at - 1], t[gap_at]
        assert not np.any((b.start_s < g0 + 1e-9) & (b.end_s > g1 - 1e-9))
    assert all(r == "" for r, v in zip(b.reason, b.valid, strict=True) if v)


@pytest.mark.parametrize("heart_rate_hz", [0.8, 1.2, 2.0])
def test_larger_cardiogenic_ripples_make_no_valid_breath(heart_rate_hz):
    """5 mmHg ripples through a 40 s pause may show as deflections, never as valid breaths.

    Measured limit (stated in the capnography docs): ripples of about 8 mmHg at 0.8-1.2 Hz
    do pass as valid breaths.
    """
    spec = TraceSpec(
        cardiogenic_mmHg=5.0, heart_rate_hz=heart_rate_hz, pauses=[(100.0, 40.0)], noise_sd_mmHg=0.5
    )
    cap, truth = make_trace(spec)
    b = find_breaths(cap)
    last_before = truth["end_s"][truth["start_s"] < 100.0].max()
    first_after = truth["start_s"][truth["start_s"] > 100.0].min()
    inside = (b.start_s > last_before) & (b.start_s < first_after - 0.5)
    assert not b.valid[inside].any()
    valid = breaths_valid_only(b)
    s = score(valid, truth)
    assert s["recall"] >= 0.99 and s["precision"] >= 0.99


def test_subnormal_values_give_no_warning():
    """Regression (found by hypothesis): a subnormal sample step overflowed a crossing quotient."""
    x = np.array([0.0, 2.225073858507e-311, 0.0, 7.0, 1.0])
    cap = Capnogram(np.arange(x.size) / 10.0, x, 10.0)
    table = find_breaths(cap)
    assert len(table) == table.start_s.size


@pytest.mark.parametrize("n", [1, 2, 3, 57, 1000])
@pytest.mark.parametrize("size", [1, 2, 3, 4, 15, 31])
def test_running_filters_equal_scipy_ndimage(n, size):
    # Reference library: scipy.ndimage (Virtanen et al., Nat Methods 2020), mode="nearest".
    from scipy.ndimage import percentile_filter, uniform_filter1d

    from sedreport.capnography.filters import moving_mean, running_percentile

    x = np.random.default_rng(n * 100 + size).normal(20.0, 10.0, n)
    np.testing.assert_allclose(
        moving_mean(x, size), uniform_filter1d(x, size=size, mode="nearest"), atol=1e-9, rtol=0
    )
    for pct in (0.0, 10.0, 50.0, 80.0, 100.0):
        got = running_percentile(x, pct, size)
        assert np.array_equal(got, percentile_filter(x, pct, size=size, mode="nearest"))
