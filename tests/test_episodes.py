"""Episode detectors on planted breath tables and trends (exact expected times).

Every input here is built by hand: breaths with known starts and ends, SpO2 samples with known
times. The expected episode edges follow the time conventions of DESIGN.md and are computed
from the planted values in each test; the tolerance is 1e-9 s (pure arithmetic, no signal
processing), stated as ``TOL_S``.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import load_criteria
from sedreport.episodes import (
    detect_apnoea,
    detect_desaturation,
    detect_hypoventilation,
    detect_rebreathing,
    detect_sloped_plateau,
)
from sedreport.episodes._intervals import breath_runs, touches_gap

TOL_S = 1e-9
CRIT = load_criteria()
STRICT = load_criteria(CRIT.path.replace("default.yaml", "strict.yaml"))
NO_GAPS = (np.empty(0), np.empty(0))


def make_breaths(
    starts,
    etco2=38.0,
    fico2=0.0,
    exp_s=2.4,
    valid=True,
    slope_norm=0.03,
    upstroke=0.2,
) -> BreathTable:
    """Breaths starting at ``starts`` (s), each ``exp_s`` long (upstroke to back at baseline).

    ``rr_per_min`` follows DESIGN.md: 60 / (this start - previous start), NaN for the first.
    """
    s = np.asarray(starts, dtype=float)
    n = s.size
    end = s + exp_s
    rr = np.r_[np.nan, 60.0 / np.diff(s)] if n else np.empty(0)

    def arr(x, dtype=float):
        return np.broadcast_to(np.asarray(x, dtype=dtype), (n,)).copy()

    v = arr(valid, bool)
    return BreathTable(
        start_s=s,
        end_s=end,
        etco2_mmHg=arr(etco2),
        fico2_mmHg=arr(fico2),
        rr_per_min=rr,
        upstroke_s=arr(upstroke),
        phase3_slope_mmHg_s=arr(slope_norm) * arr(etco2),
        phase3_slope_norm_per_s=arr(slope_norm),
        valid=v,
        reason=tuple("" if ok else "short" for ok in v),
    )


def make_baseline(etco2=38.0, rr=15.0, slope_norm=0.03, upstroke=0.2) -> Baseline:
    return Baseline(etco2, rr, slope_norm, upstroke, (0.0, 120.0), "planted", 30)


def make_trends(spo2_t, spo2, artefact=None) -> Trends:
    t = np.asarray(spo2_t, dtype=float)
    v = np.asarray(spo2, dtype=float)
    art = np.zeros(t.size, dtype=bool) if artefact is None else np.asarray(artefact, dtype=bool)
    z = np.empty(0)
    return Trends(z, z, z, z, z, t, v, np.full(t.size, np.nan), art, 60.0)


def regular(t0, t1, period):
    return np.arange(t0, t1, period)


# ----- interval helpers -------------------------------------------------------------------------
def test_touches_gap_is_closed_interval():
    gs, ge = np.array([10.0]), np.array([12.0])
    hit = touches_gap(np.array([0.0, 12.0, 12.1, 5.0]), np.array([10.0, 13.0, 14.0, 9.9]), gs, ge)
    assert hit.tolist() == [True, True, False, False]


def test_breath_runs_merge_short_interruption_and_split_at_gap():
    starts = regular(0, 100, 4.0)
    b = make_breaths(starts)
    q = (starts >= 20) & (starts <= 80)
    q[starts == 40] = False  # one breath (2.4 s) interrupts: merged (max 10 s)
    runs = breath_runs(b.start_s, b.end_s, q, b.valid, 10.0, *NO_GAPS)
    assert runs == [(5, 20)]
    # a CO2 gap between breath 15 (60.0-62.4 s) and breath 16 (64 s) splits the run
    runs = breath_runs(b.start_s, b.end_s, q, b.valid, 10.0, np.array([62.5]), np.array([63.0]))
    assert runs == [(5, 15), (16, 20)]
    # a longer interruption (breaths 40-56 s) splits it too
    q[(starts >= 40) & (starts <= 56)] = False
    assert breath_runs(b.start_s, b.end_s, q, b.valid, 10.0, *NO_GAPS) == [(5, 9), (15, 20)]


# ----- apnoea -----------------------------------------------------------------------------------
def apnoea_breaths(pause_to_s: float) -> BreathTable:
    """Breaths every 4 s from 0 to 100 s, then from ``pause_to_s`` to 200 s."""
    return make_breaths(np.r_[regular(0, 101, 4.0), regular(pause_to_s, 200, 4.0)])


def test_apnoea_dated_from_end_of_last_breath_to_next_start():
    # last breath before the pause: starts 100 s, ends 102.4 s; next breath starts 125 s
    found = detect_apnoea(apnoea_breaths(125.0), *NO_GAPS, CRIT)
    assert len(found) == 1
    assert found[0].kind == "apnoea"
    assert found[0].start_s == pytest.approx(102.4, abs=TOL_S)
    assert found[0].end_s == pytest.approx(125.0, abs=TOL_S)


@pytest.mark.parametrize(
    ("pause_s", "n_default", "n_20", "n_30"),
    [(14.9, 0, 0, 0), (15.0, 1, 0, 0), (19.9, 1, 0, 0), (20.0, 1, 1, 0), (30.0, 1, 1, 1)],
)
def test_apnoea_minimum_pause_is_inclusive(pause_s, n_default, n_20, n_30):
    """Default 15 s (Deitch et al., Ann Emerg Med 2010; Krauss et al., Ann Emerg Med 2016);
    20 s and 30 s variants from the shipped files."""
    c20 = load_criteria(CRIT.path.replace("default.yaml", "apnoea_20s.yaml"))
    c30 = load_criteria(CRIT.path.replace("default.yaml", "apnoea_30s.yaml"))
    b = apnoea_breaths(102.4 + pause_s)
    assert b.start_s[26] - b.end_s[25] == pytest.approx(pause_s, abs=1e-9)
    got = [len(detect_apnoea(b, *NO_GAPS, c)) for c in (CRIT, c20, c30)]
    assert got == [n_default, n_20, n_30]


def test_pause_touching_a_gap_is_not_apnoea():
    b = apnoea_breaths(150.0)
    inside = (np.array([120.0]), np.array([130.0]))
    assert detect_apnoea(b, *inside, CRIT) == []
    at_edge = (np.array([150.0]), np.array([152.0]))  # gap starts where the next breath starts
    assert detect_apnoea(b, *at_edge, CRIT) == []
    elsewhere = (np.array([300.0]), np.array([310.0]))
    assert len(detect_apnoea(b, *elsewhere, CRIT)) == 1


def test_invalid_breaths_do_not_end_an_apnoea():
    starts = np.r_[regular(0, 101, 4.0), [115.0, 120.0], regular(150.0, 200, 4.0)]
    valid = np.ones(starts.size, dtype=bool)
    valid[26:28] = False
    b = make_breaths(starts, valid=valid)
    found = detect_apnoea(b, *NO_GAPS, CRIT)
    assert len(found) == 1
    assert found[0].start_s == pytest.approx(102.4, abs=TOL_S)
    assert found[0].end_s == pytest.approx(150.0, abs=TOL_S)
    assert any("not counted as breaths" in n for n in found[0].notes)


def test_apnoea_unresolved_at_end_of_recording():
    b = make_breaths(regular(0, 101, 4.0))
    found = detect_apnoea(b, *NO_GAPS, CRIT, co2_end_s=140.0)
    assert len(found) == 1 and not found[0].resolved
    assert found[0].end_s == 140.0
    assert detect_apnoea(b, *NO_GAPS, CRIT, co2_end_s=b.end_s[-1] + 5.0) == []


# ----- hypoventilation --------------------------------------------------------------------------
def hypo_case(rr_slow=6.0, et_high=55.0, t_on=300.0, t_off=420.0, et_normal=38.0):
    """Normal 15/min breathing; slow breaths with high EtCO2 from t_on to t_off."""
    slow = np.arange(t_on, t_off, 60.0 / rr_slow)
    starts = np.r_[regular(0, t_on, 4.0), slow, regular(slow[-1] + 60.0 / rr_slow, 700, 4.0)]
    et = np.where((starts >= t_on) & (starts < t_off), et_high, et_normal)
    return make_breaths(starts, etco2=et), slow


def test_bradypnoeic_hypoventilation_first_to_last_qualifying_breath():
    b, slow = hypo_case()
    found = detect_hypoventilation(b, make_baseline(), *NO_GAPS, CRIT)
    assert len(found) == 1
    f = found[0]
    i0, i1 = np.flatnonzero(b.start_s == slow[0])[0], np.flatnonzero(b.start_s == slow[-1])[0]
    assert f.start_s == pytest.approx(slow[0], abs=TOL_S)
    assert f.end_s == pytest.approx(b.end_s[i1], abs=TOL_S)
    assert f.subtype == "bradypnoeic"
    assert i1 > i0


def test_hypercapnic_at_normal_rate_and_minimum_duration():
    starts = regular(0, 700, 4.0)
    et = np.where((starts >= 300) & (starts < 400), 52.0, 38.0)  # Burton: EtCO2 >= 50 mmHg
    found = detect_hypoventilation(make_breaths(starts, etco2=et), make_baseline(), *NO_GAPS, CRIT)
    assert [f.subtype for f in found] == ["hypercapnic"]
    assert found[0].start_s == 300.0
    short = np.where((starts >= 300) & (starts < 340), 52.0, 38.0)  # spans 38.4 s < 60 s
    assert (
        detect_hypoventilation(make_breaths(starts, etco2=short), make_baseline(), *NO_GAPS, CRIT)
        == []
    )


def test_rise_from_baseline_and_strict_percentage_option():
    starts = regular(0, 700, 4.0)
    rise10 = np.where((starts >= 300) & (starts < 400), 30.0 + 10.0, 30.0)
    base30 = make_baseline(etco2=30.0)
    # Burton et al., Acad Emerg Med 2006: absolute rise >= 10 mmHg from baseline.
    assert (
        len(detect_hypoventilation(make_breaths(starts, etco2=rise10), base30, *NO_GAPS, CRIT)) == 1
    )
    rise4 = np.where((starts >= 300) & (starts < 400), 34.0, 30.0)  # +13 %, +4 mmHg
    assert detect_hypoventilation(make_breaths(starts, etco2=rise4), base30, *NO_GAPS, CRIT) == []
    # Deitch et al., Ann Emerg Med 2010: change >= 10 % from baseline (strict file).
    assert (
        len(detect_hypoventilation(make_breaths(starts, etco2=rise4), base30, *NO_GAPS, STRICT))
        == 1
    )


def test_hypopnoeic_shrinking_waveform_with_low_etco2():
    starts = regular(0, 700, 4.0)
    et = np.where((starts >= 200) & (starts < 320), 14.0, 38.0)
    found = detect_hypoventilation(make_breaths(starts, etco2=et), make_baseline(), *NO_GAPS, CRIT)
    assert [(f.subtype, f.start_s) for f in found] == [("hypopnoeic", 200.0)]


def test_no_baseline_only_absolute_criterion():
    b, _ = hypo_case(et_high=48.0, et_normal=36.0)
    nan_base = make_baseline(etco2=np.nan, rr=np.nan, slope_norm=np.nan, upstroke=np.nan)
    assert detect_hypoventilation(b, nan_base, *NO_GAPS, CRIT) == []
    b2, _ = hypo_case(et_high=51.0)
    assert len(detect_hypoventilation(b2, nan_base, *NO_GAPS, CRIT)) == 1


def test_hypoventilation_split_by_co2_gap():
    b, slow = hypo_case(rr_slow=6.0, t_on=300.0, t_off=500.0)
    gap = (np.array([397.0]), np.array([399.0]))  # between the slow breaths at 390 and 400
    found = detect_hypoventilation(b, make_baseline(), *gap, CRIT)
    assert [f.start_s for f in found] == [300.0, 400.0]


# ----- desaturation -----------------------------------------------------------------------------
def spo2_case():
    t = np.arange(0.0, 400.0, 1.0)
    v = np.full(t.size, 97.0)
    v[(t >= 100) & (t <= 140)] = 88.0
    return t, v


def test_desaturation_first_below_to_first_back():
    t, v = spo2_case()
    found = detect_desaturation(make_trends(t, v), CRIT)
    assert [(f.start_s, f.end_s) for f in found] == [(100.0, 141.0)]


def test_desaturation_minimum_duration_30_s():
    # Cravero et al., Pediatrics 2006: SpO2 < 90 % for more than 30 s.
    t = np.arange(0.0, 400.0, 1.0)
    v = np.full(t.size, 97.0)
    v[(t >= 100) & (t < 120)] = 85.0
    assert detect_desaturation(make_trends(t, v), CRIT) == []


def test_artefact_never_counts_as_recovery():
    t, v = spo2_case()
    art = np.zeros(t.size, dtype=bool)
    art[(t >= 124) & (t <= 126)] = True
    v[art] = np.nan  # a spike marked as artefact: skipped, neither low nor recovery
    found = detect_desaturation(make_trends(t, v, art), CRIT)
    assert [(f.start_s, f.end_s) for f in found] == [(100.0, 141.0)]


def test_no_reading_is_never_bridged():
    """Samples without a reading (NaN, not artefact) end a low run; the low run after them is
    a new episode: 100-160 s low with no reading at 130-134 s gives two 30-s pieces."""
    t = np.arange(0.0, 400.0, 1.0)
    v = np.full(t.size, 97.0)
    v[(t >= 100) & (t < 166)] = 88.0
    v[(t >= 130) & (t < 135)] = np.nan
    found = detect_desaturation(make_trends(t, v), CRIT)
    assert [(f.start_s, f.end_s, f.resolved) for f in found] == [
        (100.0, 130.0, False),
        (135.0, 166.0, True),
    ]
    assert "reading was lost" in found[0].notes[0]


def test_desaturation_unresolved_at_end():
    t, v = spo2_case()
    v[t >= 300] = 85.0
    found = detect_desaturation(make_trends(t, v), CRIT)
    assert found[-1].start_s == 300.0 and found[-1].end_s == 399.0 and not found[-1].resolved


# ----- rebreathing and sloped plateau --------------------------------------------------------------
def test_rebreathing_ends_at_the_breath_closing_the_last_raised_inspiration():
    starts = regular(0, 400, 4.0)
    fi = np.where((starts >= 100) & (starts < 200), 7.0, 1.0)
    found = detect_rebreathing(make_breaths(starts, fico2=fi), *NO_GAPS, CRIT)
    assert [(f.start_s, f.end_s) for f in found] == [(100.0, 200.0)]
    short = np.where((starts >= 100) & (starts < 140), 7.0, 1.0)  # 40 s < 60 s
    assert detect_rebreathing(make_breaths(starts, fico2=short), *NO_GAPS, CRIT) == []


def test_sloped_plateau_needs_steeper_plateau_and_slower_upstroke():
    """Shark-fin shape: both indices up against the patient's own baseline (DESIGN.md)."""
    starts = regular(0, 400, 4.0)
    inside = (starts >= 100) & (starts < 180)
    slope = np.where(inside, 0.075, 0.03)  # 2.5x baseline slope
    up = np.where(inside, 0.4, 0.2)  # 2x baseline upstroke
    b = make_breaths(starts, slope_norm=slope, upstroke=up)
    found = detect_sloped_plateau(b, make_baseline(slope_norm=0.03), *NO_GAPS, CRIT)
    # the centred running median keeps step edges: first 100 s, last breath starts 176 s
    assert [(f.start_s, f.end_s) for f in found] == [(100.0, 176.0 + 2.4)]
    # 1.5x the baseline slope is below the default slope_ratio of 2 (criteria file)
    mild = make_breaths(starts, slope_norm=np.where(inside, 0.045, 0.03), upstroke=up)
    assert detect_sloped_plateau(mild, make_baseline(slope_norm=0.03), *NO_GAPS, CRIT) == []
    short = np.where((starts >= 100) & (starts < 156), 0.4, 0.2)  # spans 58.4 s < 60 s
    b_short = make_breaths(starts, slope_norm=slope * (starts < 156), upstroke=short)
    assert detect_sloped_plateau(b_short, make_baseline(), *NO_GAPS, CRIT) == []
    slope_only = make_breaths(starts, slope_norm=slope)
    assert detect_sloped_plateau(slope_only, make_baseline(), *NO_GAPS, CRIT) == []
    up_only = make_breaths(starts, upstroke=up)
    assert detect_sloped_plateau(up_only, make_baseline(), *NO_GAPS, CRIT) == []


def test_copd_own_baseline_slope_is_not_a_sloped_plateau():
    """A steep but stable plateau is the patient's baseline (DESIGN.md), not an episode."""
    starts = regular(0, 400, 4.0)
    b = make_breaths(starts, slope_norm=0.12, upstroke=0.5)
    assert (
        detect_sloped_plateau(b, make_baseline(slope_norm=0.12, upstroke=0.5), *NO_GAPS, CRIT) == []
    )


def test_isolated_odd_breaths_do_not_make_a_sloped_plateau():
    starts = regular(0, 400, 4.0)
    slope = np.full(starts.size, 0.03)
    up = np.full(starts.size, 0.2)
    slope[::3] = 0.09  # every third breath odd: the 5-breath median stays at baseline
    up[::3] = 0.6
    b = make_breaths(starts, slope_norm=slope, upstroke=up)
    assert detect_sloped_plateau(b, make_baseline(), *NO_GAPS, CRIT) == []


def test_running_median_edges_and_nan():
    from sedreport.episodes.waveform import running_median

    x = np.array([1.0, 1.0, 5.0, 5.0, 5.0, np.nan, 5.0])
    assert running_median(x, 3).tolist() == [1.0, 1.0, 5.0, 5.0, 5.0, 5.0, 5.0]
    assert np.isnan(running_median(np.array([np.nan, np.nan]), 3)).all()


# ----- signal loss ------------------------------------------------------------------------------
def gap_session(findings=()):
    from datetime import UTC, datetime
    from pathlib import Path

    from sedreport.session import Capnogram, Session

    t = np.r_[
        np.arange(0.0, 100.05, 0.1), np.arange(130.0, 140.05, 0.1), np.arange(145.0, 200.0, 0.1)
    ]
    co2 = Capnogram(t, np.zeros(t.size), 10.0)
    return Session("GAP-1", datetime(2026, 1, 1, tzinfo=UTC), Path("."), co2=co2, findings=findings)


def test_signal_loss_from_last_sample_before_to_first_after():
    from sedreport.episodes import detect_signal_loss

    found = detect_signal_loss(gap_session(), CRIT)
    # the 30 s gap is reported; the 5 s gap (140-145 s) is under the 10 s minimum (choice)
    assert [(f.kind, f.subtype) for f in found] == [("signal_loss", "co2")]
    assert found[0].start_s == pytest.approx(100.0, abs=1e-6)
    assert found[0].end_s == pytest.approx(130.0, abs=1e-6)


def test_sloped_plateau_onset_dated_by_the_breaths_own_values():
    """The smoothed index finds the run; a noisy second breath must not delay the onset."""
    starts = regular(0, 400, 4.0)
    inside = (starts >= 100) & (starts < 200)
    slope = np.where(inside, 0.075, 0.03)
    slope[(starts == 104) | (starts == 108)] = 0.03  # noisy breaths right after the onset
    up = np.where(inside, 0.4, 0.2)
    b = make_breaths(starts, slope_norm=slope, upstroke=up)
    found = detect_sloped_plateau(b, make_baseline(), *NO_GAPS, CRIT)
    assert [f.start_s for f in found] == [100.0]


def test_low_etco2_deflections_do_not_end_an_apnoea():
    """Deflections at or below 10 mmHg are not breaths (Krauss et al., Ann Emerg Med 2016,
    from memory); with the threshold at 0 they split the pause."""
    import dataclasses

    starts = np.r_[regular(0, 101, 4.0), [112.0, 126.0], regular(140.0, 200, 4.0)]
    et = np.full(starts.size, 38.0)
    et[26:28] = 6.0  # noise on a flat trace picked up as two small "breaths"
    b = make_breaths(starts, etco2=et)
    found = detect_apnoea(b, *NO_GAPS, CRIT)
    assert [(f.start_s, f.end_s) for f in found] == [(pytest.approx(102.4), 140.0)]
    off = dataclasses.replace(
        CRIT, apnoea=dataclasses.replace(CRIT.apnoea, breath_min_etco2_mmHg=0.0)
    )
    assert detect_apnoea(b, *NO_GAPS, off) == []


# ----- properties on random breath tables -------------------------------------------------------
@settings(max_examples=60, deadline=None)
@given(
    intervals=st.lists(st.floats(1.0, 40.0), min_size=2, max_size=60),
    gap_at=st.floats(0.0, 1.0),
    gap_len=st.floats(1.5, 30.0),
)
def test_apnoea_properties(intervals, gap_at, gap_len):
    """Every apnoea lasts at least the minimum, contains no breath and touches no gap; every
    long pause away from gaps is reported (invariants of the DESIGN.md conventions)."""
    starts = np.cumsum(intervals)
    b = make_breaths(starts, exp_s=1.0)
    g0 = starts[0] + gap_at * (starts[-1] - starts[0])
    gaps = (np.array([g0]), np.array([g0 + gap_len]))
    found = detect_apnoea(b, *gaps, CRIT)
    for f in found:
        assert f.end_s - f.start_s >= CRIT.apnoea.min_duration_s
        assert not ((b.start_s > f.start_s) & (b.start_s < f.end_s)).any()
        assert not (gaps[0][0] <= f.end_s and gaps[1][0] >= f.start_s)
    pause_start, pause_end = b.end_s[:-1], b.start_s[1:]
    long = pause_end - pause_start >= CRIT.apnoea.min_duration_s
    clean = ~((gaps[0][0] <= pause_end) & (gaps[1][0] >= pause_start))
    assert len(found) == int((long & clean).sum())
