"""Breaths and CO2 findings on traces that behave like recorded nasal capnograms.

Every trace is built here from planted breaths (start times, plateau heights, shapes), so the
expected counts and intervals are known in advance. What each trace imitates: mouth breathing
past a nasal cannula (the sampled plateau drops abruptly to 8-15 mmHg while the rate goes on;
common practice of sidestream nasal capnography), cardiogenic oscillations (small bumps at the
heart rate on a flat trace during a pause; common practice), a line off the nose or a channel
not delivering (exact zeros), stepped and two-hump expirations, one-sample dropouts, and a fall
of EtCO2 by the two-sided change criterion of Burton et al., Acad Emerg Med 2006 (absolute
change >= 10 mmHg from baseline; from memory).
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest

from sedreport.analysis import analyse_session
from sedreport.capnography import find_breaths
from sedreport.criteria import load_criteria
from sedreport.episodes.co2_signal import flat_runs
from sedreport.session import Capnogram, Dose, OximetryTrend, Session

CRIT = load_criteria()
FS_HZ = 25.0
DOSE_S = 240.0  # the baseline window lies before the first dose
END_S = 2.2  # a planted breath is back at the baseline 2.2 s after its start (expire_s)


def wave(
    starts: np.ndarray,
    etco2: np.ndarray,
    duration_s: float,
    *,
    shelf_mmHg: float = 0.0,
    shelf_s: float = 0.0,
    dip: float = 0.0,
    expire_s: float = 2.2,
    noise_sd: float = 0.3,
    seed: int = 0,
) -> Capnogram:
    """Trapezoid breaths (0.2 s up, plateau, 0.2 s down) at ``starts`` with plateau ``etco2``.

    ``shelf_mmHg`` for ``shelf_s`` precedes every main rise (a stepped expiration, started at
    the breath start); ``dip`` is a fractional mid-plateau dip (a two-hump expiration).
    Non-negative sensor noise of SD ``noise_sd`` (a capnometer does not read below 0).
    """
    t = np.arange(0.0, duration_s, 1.0 / FS_HZ)
    i = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, starts.size - 1)
    u = t - starts[i]
    inside = (np.searchsorted(starts, t, side="right") > 0) & (u < shelf_s + expire_s + 0.2)
    et = etco2[i]
    v = u - shelf_s
    rise = np.clip(v / 0.2, 0.0, 1.0)
    fall = np.clip((expire_s - v) / 0.2, 0.0, 1.0)
    main = et * np.minimum(rise, fall)
    mid = (shelf_s + 0.2 + expire_s) / 2.0
    main = main * (1.0 - dip * np.exp(-0.5 * ((u - mid) / 0.15) ** 2))
    shelf = np.where((u >= 0) & (v < 0), shelf_mmHg, 0.0)
    y = np.where(inside, np.maximum(main, shelf), 0.0)
    y = y + np.abs(np.random.default_rng(seed).normal(0.0, noise_sd, t.size))
    return Capnogram(t, y, FS_HZ)


def session_of(cap: Capnogram, spo2: tuple[np.ndarray, np.ndarray] | None = None) -> Session:
    oxi = None
    if spo2 is not None:
        st, sv = spo2
        oxi = OximetryTrend(st, sv, np.full(st.size, 70.0), 1.0)
    return Session(
        session_id="CO2-TEST",
        started=datetime(2026, 5, 1, 9, 0, tzinfo=UTC),
        folder=Path("."),
        co2=cap,
        spo2=oxi,
        doses=(Dose(DOSE_S, "propofol", 40.0, "mg", "iv", "bolus", 40.0, 0.0, 2),),
    )


def kinds(analysis) -> list[str]:
    return [e.kind for e in analysis.episodes]


def of_kind(analysis, kind: str):
    return [e for e in analysis.episodes if e.kind == kind]


# ----- mouth breathing: small rhythmic waves are breaths and a low-amplitude finding ------------
def mouth_breathing_case(seed: int = 0):
    starts = np.arange(1.0, 600.0, 4.0)  # 15/min throughout
    rng = np.random.default_rng(seed)
    et = np.full(starts.size, 38.0)
    mouth = (starts >= 300.0) & (starts < 420.0)
    et[mouth] = rng.uniform(8.0, 15.0, int(mouth.sum()))  # 8-15 mmHg above zero
    return starts, et, mouth


def test_mouth_breathing_gives_breaths_and_a_low_amplitude_finding():
    starts, et, mouth = mouth_breathing_case()
    a = analyse_session(session_of(wave(starts, et, 603.0)))
    b = a.breaths
    assert len(b) == starts.size
    found = np.abs(b.start_s[:, None] - starts[mouth][None, :]).min(axis=0)
    assert found.max() < 0.2  # every small breath found and dated at its rise
    assert b.valid.all()
    (low,) = of_kind(a, "low_amplitude")
    assert low.start_s == pytest.approx(starts[mouth][0], abs=0.2)
    assert low.end_s == pytest.approx(starts[mouth][-1] + END_S, abs=0.2)
    assert low.severity is None
    for k in ("apnoea", "hypoventilation", "etco2_fall", "obstruction"):
        assert k not in kinds(a), k
    assert a.summary.co2_low_amplitude_pct == pytest.approx(
        100.0 * (low.end_s - low.start_s) / a.summary.sedation_duration_s
    )


def test_mouth_breathing_at_20_hz_and_with_noise():
    starts, et, mouth = mouth_breathing_case(seed=3)
    cap = wave(starts, et, 603.0, noise_sd=1.0, seed=3)
    step = int(FS_HZ // 12.5)  # 12.5 Hz: fewer samples per upstroke than any export we read
    sub = Capnogram(cap.time_s[::step], cap.co2_mmHg[::step], FS_HZ / step)
    a = analyse_session(session_of(sub))
    assert len(a.breaths) == starts.size
    assert kinds(a).count("low_amplitude") == 1
    assert "apnoea" not in kinds(a) and "hypoventilation" not in kinds(a)


def test_gradual_shrinking_with_a_falling_rate_stays_hypopnoeic_hypoventilation():
    """A small waveform alone is not hypoventilation, but a gradual fall at a falling rate is
    (Krauss & Hess, Ann Emerg Med 2007 pattern; the rule is this tool's choice)."""
    period = np.r_[np.full(75, 4.0), np.linspace(4.0, 6.0, 30), np.full(40, 6.0)]
    starts = 1.0 + np.r_[0.0, np.cumsum(period)[:-1]]
    et = np.r_[np.full(75, 38.0), np.linspace(38.0, 12.0, 30), np.full(40, 12.0)]
    a = analyse_session(session_of(wave(starts, et, starts[-1] + 5.0)))
    hypo = of_kind(a, "hypoventilation")
    assert [e.subtype for e in hypo] == ["hypopnoeic"]
    assert "low_amplitude" not in kinds(a)


# ----- cardiogenic oscillations in a pause ----------------------------------------------------
@pytest.mark.parametrize("bump_mmHg", [1.0, 2.0, 3.0])
def test_cardiogenic_bumps_in_a_40_s_pause_give_an_apnoea_and_no_breaths(bump_mmHg):
    starts = np.r_[np.arange(1.0, 300.0, 4.0), np.arange(343.0, 500.0, 4.0)]
    cap = wave(starts, np.full(starts.size, 38.0), 503.0)
    t = cap.time_s
    last_end = starts[starts < 300.0][-1] + END_S
    pause = (t > last_end + 1.0) & (t < 342.5)
    hr_hz = 1.2  # 72/min
    bumps = bump_mmHg * 0.5 * (1.0 - np.cos(2.0 * np.pi * hr_hz * t))
    cap = Capnogram(t, cap.co2_mmHg + np.where(pause, bumps, 0.0), FS_HZ)
    a = analyse_session(session_of(cap))
    inside = (a.breaths.start_s > last_end) & (a.breaths.start_s < 342.5)
    assert not inside.any()
    (ap,) = of_kind(a, "apnoea")
    assert ap.start_s == pytest.approx(last_end, abs=0.1)
    assert ap.end_s == pytest.approx(343.0, abs=0.1)


# ----- flat traces: an absent signal, not apnoea -----------------------------------------------
def flat_case(flat_s: float, exact: bool):
    a0 = 300.0
    starts = np.r_[np.arange(1.0, a0, 4.0), np.arange(a0 + flat_s, a0 + flat_s + 200.0, 4.0)]
    cap = wave(starts, np.full(starts.size, 36.0), starts[-1] + 5.0)
    if exact:
        y = cap.co2_mmHg.copy()
        y[(cap.time_s > starts[starts < a0][-1] + 2.5) & (cap.time_s < a0 + flat_s - 0.1)] = 0.0
        cap = Capnogram(cap.time_s, y, FS_HZ)
    return cap, starts[starts < a0][-1] + END_S, a0 + flat_s


def test_fifteen_minute_flat_line_is_an_absent_signal_not_an_apnoea():
    # the line off the nose of an awake subject: sensor noise only, for 15 minutes
    cap, a, b = flat_case(900.0, exact=False)
    ana = analyse_session(session_of(cap))
    assert "apnoea" not in kinds(ana)
    (absent,) = of_kind(ana, "co2_signal_absent")
    assert absent.subtype == "too_long"
    assert (absent.start_s, absent.end_s) == (pytest.approx(a, abs=0.1), pytest.approx(b, abs=0.1))
    assert "disconnected or displaced line, or apnoea" in absent.notes[0]
    assert absent.severity is None
    assert ana.summary.longest_apnoea_s == 0.0


def test_long_flat_line_with_a_falling_spo2_stays_an_apnoea():
    cap, a, b = flat_case(150.0, exact=False)
    st = np.arange(0.0, cap.time_s[-1], 1.0)
    # a fall of 11 points, 1 point every 3 s (the oximetry cleaning rejects impossible jumps)
    sv = np.clip(97.0 - np.clip((st - a - 30.0) / 3.0, 0.0, None), 86.0, 97.0)
    sv = np.where(st > b + 30.0, 97.0, sv)
    ana = analyse_session(session_of(cap, (st, sv)))
    assert "co2_signal_absent" not in kinds(ana)
    (ap,) = of_kind(ana, "apnoea")
    assert ap.duration_s == pytest.approx(b - a, abs=0.2)


def test_long_flat_line_with_a_steady_spo2_is_an_absent_signal():
    cap, _, _ = flat_case(150.0, exact=False)
    st = np.arange(0.0, cap.time_s[-1], 1.0)
    ana = analyse_session(session_of(cap, (st, np.full(st.size, 97.0))))
    assert kinds(ana).count("co2_signal_absent") == 1 and "apnoea" not in kinds(ana)


def test_exact_zero_stretch_is_an_absent_signal_not_an_apnoea():
    cap, a, b = flat_case(40.0, exact=True)
    ana = analyse_session(session_of(cap))
    assert "apnoea" not in kinds(ana)
    (absent,) = of_kind(ana, "co2_signal_absent")
    assert absent.subtype == "no_variation"
    assert absent.start_s == pytest.approx(a, abs=0.1)


def test_exact_zero_channel_is_an_absent_signal():
    t = np.arange(0.0, 120.0, 1.0 / FS_HZ)
    ana = analyse_session(session_of(Capnogram(t, np.zeros(t.size), FS_HZ)))
    assert kinds(ana) == ["co2_signal_absent"]
    assert ana.episodes[0].duration_s == pytest.approx(t[-1])


def test_flat_runs_need_identical_samples_and_no_gap():
    t = np.arange(0.0, 40.0, 0.1)
    y = np.where(t < 20.0, 0.0, 1.0 + np.sin(t))
    assert flat_runs(t, y, 10.0, 1.0)[0].tolist() == [0.0]
    assert flat_runs(t, y, 25.0, 1.0)[0].size == 0
    noisy = y + np.abs(np.random.default_rng(0).normal(0.0, 0.05, t.size))
    assert flat_runs(t, noisy, 10.0, 1.0)[0].size == 0


# ----- EtCO2 fall ------------------------------------------------------------------------------
def test_etco2_fall_by_the_change_criterion_is_a_finding():
    # baseline 38 mmHg; 16 mmHg lower for 2 minutes (>= 10 mmHg: Burton 2006, two-sided)
    starts = np.arange(1.0, 700.0, 4.0)
    et = np.interp(starts, [0, 400, 410, 530, 540, 700], [38, 38, 22, 22, 38, 38])
    a = analyse_session(session_of(wave(starts, et, 703.0)))
    (fall,) = of_kind(a, "etco2_fall")
    qualifying = starts[et <= 28.0]
    assert fall.start_s == pytest.approx(qualifying[0], abs=0.2)
    assert fall.end_s == pytest.approx(qualifying[-1] + END_S, abs=0.2)
    assert fall.severity is None
    assert "low_amplitude" not in kinds(a) and "hypoventilation" not in kinds(a)


def test_etco2_fall_of_less_than_the_criterion_is_nothing():
    starts = np.arange(1.0, 700.0, 4.0)
    et = np.interp(starts, [0, 400, 410, 530, 540, 700], [38, 38, 30, 30, 38, 38])
    assert "etco2_fall" not in kinds(analyse_session(session_of(wave(starts, et, 703.0))))


# ----- breath shapes of clinical nasal capnography ---------------------------------------------
@pytest.mark.parametrize(
    ("shelf_mmHg", "shelf_s", "dip"),
    [(6.0, 0.6, 0.0), (4.0, 1.2, 0.0), (0.0, 0.0, 0.5), (6.0, 0.8, 0.45)],
    ids=["stepped", "long_low_shelf", "two_hump", "stepped_two_hump"],
)
def test_stepped_and_multi_hump_expirations_count_once(shelf_mmHg, shelf_s, dip):
    starts = np.arange(3.0, 120.0, 4.0)
    cap = wave(starts, np.full(starts.size, 36.0), 123.0, shelf_mmHg=shelf_mmHg, shelf_s=shelf_s,
               dip=dip, expire_s=2.2 - shelf_s)  # fmt: skip
    b = find_breaths(cap)
    assert len(b) == starts.size
    assert np.abs(b.start_s - starts).max() < 0.15  # the breath starts at the shelf


def test_one_sample_dropouts_do_not_split_a_breath():
    starts = np.arange(1.0, 120.0, 4.0)
    cap = wave(starts, np.full(starts.size, 36.0), 123.0)
    y = cap.co2_mmHg.copy()
    y[np.searchsorted(cap.time_s, starts + 1.2)] = 0.0  # exactly 0, mid-plateau, every breath
    b = find_breaths(Capnogram(cap.time_s, y, FS_HZ))
    assert len(b) == starts.size


# ----- criteria of the CO2 findings ------------------------------------------------------------
def test_co2_finding_criteria_are_checked(tmp_path):
    from sedreport.errors import CriteriaError

    text = (Path(__file__).resolve().parents[1] / "templates/criteria/default.yaml").read_text()
    for key, old, new, why in (
        ("co2_signal.max_apnoea_s", "value: 120", "value: 12", "outside the plausible range"),
        ("apnoea.rhythm_rate_min_per_min", "value: 4\n", "value: 40\n", "plausible range 1-20"),
        ("low_amplitude.amplitude_fraction", "value: 0.5", "value: 1.5", "plausible range"),
    ):
        bad = tmp_path / "bad.yaml"
        section, name = key.split(".")
        head, _, tail = text.partition(f"\n  {name}:\n")
        assert tail, key
        bad.write_text(head + f"\n  {name}:\n" + tail.replace(old, new, 1))
        with pytest.raises(CriteriaError, match=why):
            load_criteria(bad)
    strict = load_criteria(Path(__file__).resolve().parents[1] / "templates/criteria/strict.yaml")
    assert strict.etco2_fall.fall_from_baseline_pct == 10.0  # Deitch 2010, both directions
    assert np.isnan(CRIT.etco2_fall.fall_from_baseline_pct)


def test_oxygen_flow_dilution_changes_no_breath_and_makes_no_finding():
    """More oxygen through the cannula dilutes the sample: plateau 10-25 % lower and noisier
    (common practice of nasal-cannula capnography); breaths and findings stay as they were."""
    starts = np.arange(1.0, 700.0, 4.0)
    et = np.where(starts < 400.0, 38.0, 38.0 * 0.76)  # 24 % lower from 400 s
    cap = wave(starts, et, 703.0)
    noisy = cap.co2_mmHg + np.where(
        cap.time_s >= 400.0, np.random.default_rng(7).normal(0.0, 0.8, cap.time_s.size), 0.0
    )
    a = analyse_session(session_of(Capnogram(cap.time_s, np.clip(noisy, 0, None), FS_HZ)))
    assert len(a.breaths) == starts.size and a.breaths.valid.all()
    assert kinds(a) == []


def test_waves_too_small_for_breaths_at_a_breathing_rhythm_are_not_an_apnoea():
    """A displaced cannula: rhythmic waves of 3-4 mmHg at 15/min for a minute (recorded nasal
    segments with a maximum under 6 mmHg look like this), not a 60-s apnoea."""
    starts = np.arange(1.0, 600.0, 4.0)
    rng = np.random.default_rng(4)
    et = np.full(starts.size, 38.0)
    tiny = (starts >= 300.0) & (starts < 360.0)
    et[tiny] = rng.uniform(3.0, 4.0, int(tiny.sum()))
    a = analyse_session(session_of(wave(starts, et, 603.0)))
    assert "apnoea" not in kinds(a)
    (low,) = of_kind(a, "low_amplitude")
    assert low.subtype == "waves_only"
    assert low.start_s == pytest.approx(starts[starts < 300.0][-1] + END_S, abs=0.2)
    assert low.end_s == pytest.approx(360.0 + 1.0, abs=0.2)
