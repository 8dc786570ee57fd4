"""Hand-built Analysis objects for the record tests (synthetic; planted truth, no real patient).

The capnogram is a square-ish synthetic waveform (fast upstroke, flat plateau, fast
downstroke, zero inspired baseline) at a steady rate, with a planted apnoea, a planted SpO2 dip
and a planted slow-breathing stretch with raised EtCO2. Episodes, linked doses and the summary
are written by hand from those planted values, so the renderer's output can be checked against
numbers known in advance. The scenario is invented for tests.
"""

from __future__ import annotations

import hashlib
from dataclasses import replace
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np

from sedreport.analysis import Analysis
from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria, load_criteria
from sedreport.episodes.model import (
    AdverseEvent,
    Descriptor,
    Episode,
    LinkedDose,
    LinkedIntervention,
)
from sedreport.episodes.summary import CriteriaRef, Quality, Summary
from sedreport.session import (
    Capnogram,
    Dose,
    Event,
    OximetryTrend,
    Oxygen,
    Patient,
    QualityFinding,
    Session,
    SourceInfo,
    Team,
)

STARTED = datetime(2026, 3, 14, 9, 12, 0, tzinfo=timezone(timedelta(hours=1)))
WEIGHT_KG = 72.0
APNOEA = (1200.0, 1236.0)  # planted pause: last breath ends ~1200 s, next starts 1236 s
DIP = (1228.0, 1268.0, 1330.0, 86.0)  # SpO2 starts falling, bottom, back, lowest value
SLOW = (1800.0, 2100.0)  # 6 breaths/min with EtCO2 rising to 55 mmHg


def _sha(text: str) -> str:
    return hashlib.sha256(text.encode()).hexdigest()


def breath_starts(duration_s: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Breath onsets and the nominal period of each breath (s)."""
    starts, periods = [], []
    t = 2.0
    while t < duration_s - 10:
        in_slow = SLOW[0] <= t < SLOW[1]
        period = (10.0 if in_slow else 60.0 / 14.0) * (1 + 0.03 * rng.standard_normal())
        if APNOEA[0] - period < t < APNOEA[1]:
            t = APNOEA[1]
            continue
        starts.append(t)
        periods.append(period)
        t += period
    return np.array(starts), np.array(periods)


def breath_etco2(starts: np.ndarray) -> np.ndarray:
    """38 mmHg, rising linearly to 55 mmHg across the slow stretch."""
    rise = np.clip((starts - SLOW[0]) / (SLOW[1] - SLOW[0]), 0, 1) * 17.0
    inside = (starts >= SLOW[0]) & (starts < SLOW[1])
    return np.where(inside, 38.0 + rise, 38.0)


def capnogram(duration_s: float, fs_hz: float, starts, periods, etco2, rng) -> Capnogram:
    """Square-ish waveform: rise over 8 % of the cycle, plateau to 50 %, fall over 5 %."""
    t = np.arange(0.0, duration_s, 1.0 / fs_hz)
    k = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, starts.size - 1)
    since = t - starts[k]
    phase = since / periods[k]
    rise = np.clip(phase / 0.08, 0, 1)
    fall = np.clip((0.55 - phase) / 0.05, 0, 1)
    shape = np.where(since < 0, 0.0, np.minimum(rise, fall))
    shape = np.where(phase > 1.0, 0.0, shape)
    co2 = shape * etco2[k] + 0.3 * rng.standard_normal(t.size) * 0.2
    return Capnogram(time_s=t, co2_mmHg=np.clip(co2, 0, None), sample_rate_hz=fs_hz)


def oximetry(duration_s: float, rng) -> OximetryTrend:
    """1 Hz SpO2 at 97 % with the planted dip; pulse near 78 /min."""
    t = np.arange(0.0, duration_s, 1.0)
    down = np.interp(t, [DIP[0], DIP[1], DIP[2]], [97.0, DIP[3], 96.0], left=97.0, right=97.0)
    spo2 = np.round(
        np.where((t >= DIP[0]) & (t <= DIP[2]), down, 97.0 + 0.4 * rng.standard_normal(t.size))
    )
    spo2 = np.minimum(spo2, 100.0)
    pulse = 78.0 + 3.0 * rng.standard_normal(t.size)
    return OximetryTrend(time_s=t, spo2_pct=spo2, pulse_bpm=pulse, sample_rate_hz=1.0)


def doses() -> tuple[Dose, ...]:
    """Fentanyl 50 mcg, propofol 40 + 20 + 20 mg and a 4 mg/kg/h propofol run of 600 s."""

    def d(line, t, drug, dose, unit, kind, mg=0.0, rate=0.0):
        return Dose(t, drug, dose, unit, "iv", kind, mg, rate, line)

    return (
        d(2, 240.0, "fentanyl", 50, "mcg", "bolus", mg=0.05),
        d(3, 300.0, "propofol", 40, "mg", "bolus", mg=40.0),
        d(4, 900.0, "propofol", 20, "mg", "bolus", mg=20.0),
        d(5, 1150.0, "propofol", 20, "mg", "bolus", mg=20.0),
        d(6, 1500.0, "propofol", 4, "mg/kg/h", "infusion", rate=4 * WEIGHT_KG),
        d(7, 2100.0, "propofol", 0, "mg/kg/h", "infusion", rate=0.0),
    )


def events() -> tuple[Event, ...]:
    return (
        Event(360.0, "procedure_start", line=2),
        Event(1215.0, "verbal_stimulus", line=3),
        Event(1222.0, "airway_repositioning", note="chin lift", line=4),
        Event(1240.0, "oxygen_increase", value=4.0, line=5),
        Event(2300.0, "procedure_end", line=6),
    )


def criteria() -> Criteria:
    """The shipped default criteria file (real thresholds with their published sources)."""
    return load_criteria()


def episodes(apnoea_start: float, apnoea_end: float) -> tuple[Episode, ...]:
    """E1 apnoea, E2 desaturation, E3 slow-breathing hypoventilation (planted values)."""

    def ld(drug, dose, unit, t, onset, cum):
        return LinkedDose(
            drug, dose, unit, "iv", "bolus", t, onset - t, None, cum, cum / WEIGHT_KG, None
        )

    first_below_90 = 1253.0  # planted: linear fall from 97 at 1228 s to 86 at 1268 s
    e1 = Episode(
        "E1",
        "apnoea",
        None,
        apnoea_start,
        apnoea_end,
        apnoea_end - apnoea_start,
        STARTED.isoformat(),
        "minor",
        None,
        88.0,
        0.0,
        (ld("propofol", 20, "mg", 1150.0, apnoea_start, 80.0),),
        (
            LinkedIntervention("verbal_stimulus", 1215.0, 1215.0 - apnoea_start, None, "", "minor"),
            LinkedIntervention(
                "airway_repositioning", 1222.0, 1222.0 - apnoea_start, None, "chin lift", "minor"
            ),
        ),
        ("Minor: airway repositioning was needed.",),
        1215.0 - apnoea_start,
        apnoea_end - apnoea_start,
        first_below_90 - apnoea_start,
        "A1",
    )
    e2 = Episode(
        "E2",
        "desaturation",
        None,
        first_below_90,
        1294.0,
        1294.0 - first_below_90,
        STARTED.isoformat(),
        "minor",
        None,
        86.0,
        None,
        (),
        (LinkedIntervention("oxygen_increase", 1240.0, 1240.0 - first_below_90, 4.0, "", "minor"),),
        (),
        None,
        1294.0 - first_below_90,
        None,
        "A1",
    )
    e3 = Episode(
        "E3",
        "hypoventilation",
        "bradypnoeic",
        SLOW[0],
        SLOW[1],
        SLOW[1] - SLOW[0],
        STARTED.isoformat(),
        "minimal",
        55.0,
        None,
        6.0,
        (ld("propofol", 20, "mg", 1150.0, SLOW[0], 80.0),),
        (),
        (),
        None,
        300.0,
        None,
        "A2",
    )
    return tuple(
        replace(e, start_time=(STARTED + timedelta(seconds=e.start_s)).isoformat())
        for e in (e1, e2, e3)
    )


def make_analysis(
    duration_s: float = 2400.0,
    fs_hz: float = 25.0,
    seed: int = 5,
    folder: Path = Path("/tmp/FIX-0007"),
) -> Analysis:
    """The standard fixture: 40 minutes, all four streams, three planted episodes."""
    rng = np.random.default_rng(seed)
    starts, periods = breath_starts(duration_s, rng)
    etco2 = breath_etco2(starts)
    co2 = capnogram(duration_s, fs_hz, starts, periods, etco2, rng)
    spo2 = oximetry(duration_s, rng)
    ends = starts + 0.55 * periods
    rr = np.r_[np.nan, 60.0 / np.diff(starts)]
    breaths = BreathTable(
        starts,
        ends,
        etco2,
        np.full(starts.size, 0.4),
        rr,
        0.08 * periods,
        np.zeros(starts.size),
        np.zeros(starts.size),
        np.ones(starts.size, bool),
        ("",) * starts.size,
    )
    grid = np.arange(0.0, duration_s, 1.0)
    count = np.searchsorted(starts, grid) - np.searchsorted(starts, grid - 60.0)
    rr_grid = np.where(grid >= 60.0, count.astype(float), np.nan)
    trends = Trends(
        ends,
        etco2,
        breaths.fico2_mmHg,
        grid,
        rr_grid,
        spo2.time_s,
        spo2.spo2_pct,
        spo2.pulse_bpm,
        np.zeros(spo2.time_s.size, bool),
        60.0,
    )
    pause_start = float(ends[np.searchsorted(starts, APNOEA[1]) - 1])
    eps = episodes(pause_start, APNOEA[1])
    span = (0.0, float(co2.time_s[-1]))
    sources = (
        SourceInfo(
            "co2",
            "co2.csv",
            _sha("co2"),
            "csv",
            co2.time_s.size,
            0.0,
            "mmHg",
            "none",
            "seconds",
            fs_hz,
            span,
        ),
        SourceInfo(
            "spo2",
            "spo2.csv",
            _sha("spo2"),
            "csv",
            spo2.time_s.size,
            -4.0,
            "%",
            "none",
            "seconds",
            1.0,
            (0.0, float(spo2.time_s[-1])),
        ),
        SourceInfo("doses", "doses.csv", _sha("doses"), "csv", 6),
        SourceInfo("events", "events.csv", _sha("events"), "csv", 5),
    )
    findings = (
        QualityFinding("gap", "co2", "CO2 step of 3.2 s (sample line 41200)", 1648.0, 1651.2),
    )
    session = Session(
        "FIX-0007",
        STARTED,
        folder,
        "endoscopy",
        "colonoscopy",
        "moderate",
        Patient("P-0042", 67, "female", WEIGHT_KG, 160, 3, ("copd",)),
        Team("RN-12", "DR-04"),
        Oxygen("nasal_cannula", 2.0),
        760.0,
        None,
        co2,
        spo2,
        doses(),
        events(),
        sources,
        findings,
        ("spo2.csv: 2 rows with SpO2 above 100 were dropped",),
    )
    summary = Summary(
        sedation_start_s=240.0,
        sedation_end_s=2300.0,
        sedation_duration_s=2060.0,
        sedation_window="from the first dose to procedure_end",
        co2_coverage_pct=99.8,
        spo2_coverage_pct=100.0,
        episodes_by_kind={"apnoea": 1, "desaturation": 1, "hypoventilation": 1},
        episodes_by_severity={"none": 0, "minimal": 1, "minor": 2},
        longest_apnoea_s=APNOEA[1] - pause_start,
        min_spo2_pct=86.0,
        spo2_threshold_pct=90.0,
        time_below_spo2_threshold_s=41.0,
        max_etco2_mmHg=55.0,
        median_rr_per_min=14.0,
        n_breaths=int(starts.size),
        n_valid_breaths=int(starts.size),
        attention=(
            f"Apnoea of {APNOEA[1] - pause_start:.0f} s at 09:32 needed airway repositioning.",
            "SpO2 fell to 86 % (41 s below 90 %) after the apnoea.",
        ),
        events_by_severity={"minimal": 1, "minor": 1, "moderate": 0, "sentinel": 0},
    )
    baseline = Baseline(
        38.0,
        14.0,
        0.0,
        0.34,
        (0.0, 240.0),
        "median of the valid breaths before the first dose (0 to 240 s)",
        55,
    )
    crit = criteria()
    quality = Quality(
        sources=session.sources,
        findings=session.findings,
        warnings=session.warnings,
        co2_gap_s=crit.signal_loss.co2_gap_s,
        spo2_gap_s=crit.signal_loss.spo2_gap_s,
        invalid_breaths=0,
        invalid_by_reason={},
        spo2_artefact_samples=0,
        criteria=CriteriaRef(crit.name, crit.path, crit.sha256),
        baseline=baseline,
        limitations=(),
    )
    return Analysis(
        session, crit, breaths, trends, baseline, eps, summary, quality, fixture_events(eps)
    )


def fixture_events(eps: tuple[Episode, ...]) -> tuple[AdverseEvent, ...]:
    """A1 = E1 apnoea + E2 desaturation (minor), A2 = E3 hypoventilation (minimal)."""
    e1, e2, e3 = eps

    def ev(i, members, tier, descriptors, acts):
        return AdverseEvent(
            f"A{i}", tuple(m.id for m in members), members[0].start_s, members[-1].end_s,
            members[0].start_time, tier, descriptors, acts, (), members[0].capnographic_lead_s,
            (f"Graded {tier}.",),
        )  # fmt: skip

    a1 = ev(
        1,
        (e1, e2),
        "minor",
        (
            Descriptor("apnoea, not prolonged", "minor", "E1"),
            Descriptor("oxygen desaturation 75-90 % for <= 60 s", "minor", "E2"),
        ),
        e1.interventions + e2.interventions,
    )
    a2 = ev(
        2,
        (e3,),
        "minimal",
        (Descriptor("subclinical respiratory depression", "minimal", "E3"),),
        (),
    )
    return (a1, a2)


def make_co2_only(duration_s: float = 1200.0, fs_hz: float = 25.0, seed: int = 7) -> Analysis:
    """Only a CO2 file (20 minutes): no oximetry, doses or events, and no episode (the planted
    pause at 1200 s lies past the end)."""
    full = make_analysis(duration_s, fs_hz, seed, Path("/tmp/FIX-CO2"))
    s = full.session
    empty = np.zeros(0)
    trends = replace(
        full.trends,
        spo2_time_s=empty,
        spo2_pct=empty,
        pulse_bpm=empty,
        spo2_artefact=np.zeros(0, bool),
    )
    session = replace(
        s,
        session_id="FIX-CO2",
        spo2=None,
        doses=(),
        events=(),
        sources=s.sources[:1],
        findings=(),
        warnings=(),
    )
    summary = replace(
        full.summary,
        spo2_coverage_pct=None,
        min_spo2_pct=None,
        time_below_spo2_threshold_s=None,
        episodes_by_kind={},
        episodes_by_severity={},
        longest_apnoea_s=None,
        attention=(),
    )
    return replace(full, session=session, trends=trends, episodes=(), summary=summary, events=())


def with_many_episodes(analysis: Analysis, n: int, spacing_s: float = 20.0) -> Analysis:
    """The analysis with ``n`` short planted signal-loss episodes added (E4...), from 300 s,
    ``spacing_s`` apart."""
    extra = []
    for i in range(n):
        start = 300.0 + spacing_s * i
        extra.append(
            Episode(
                f"E{len(analysis.episodes) + i + 1}",
                "signal_loss",
                None,
                start,
                start + 3.0,
                3.0,
                (STARTED + timedelta(seconds=start)).isoformat(),
                None,
                None,
                None,
                None,
                (),
                (),
                (),
                None,
                None,
                None,
            )
        )
    return replace(analysis, episodes=analysis.episodes + tuple(extra))
