"""Session summary and data quality of an Analysis, as typed frozen dataclasses.

:class:`Summary` and :class:`Quality` are what the renderers read (a renamed field fails at
once instead of printing a dash); ``to_dict()`` gives the JSON objects of the episodes
contract (DESIGN.md). Names carry no hard-coded threshold: the threshold a figure was
counted against is a field beside it.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import asdict, dataclass, field

import numpy as np

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes.linking import usable_spo2
from sedreport.episodes.model import EPISODE_KINDS, SEVERITY_TIERS, AdverseEvent, Episode
from sedreport.gaps import covered_s, stream_gap_findings
from sedreport.oximetry import mark_oximetry
from sedreport.session import QualityFinding, Session, SourceInfo


@dataclass(frozen=True)
class Summary:
    """Key figures of one session over its sedation window.

    Attributes
    ----------
    sedation_start_s, sedation_end_s, sedation_duration_s : float
        The sedation window on the session clock, seconds.
    sedation_window : str
        How the window was chosen (a sentence).
    co2_coverage_pct, spo2_coverage_pct : float or None
        Share of the window covered by gap-free samples (the criteria's gap rule), percent.
    episodes_by_kind, episodes_by_severity : dict of str to int
        Episode counts per kind (every kind of the contract) and per tier of the adverse event
        they belong to (``none`` counts findings; kept for compatibility: count events).
    longest_apnoea_s : float or None
        None when no CO2 breath could be assessed.
    min_spo2_pct : float or None
        Lowest artefact-cleaned SpO2 in the recording.
    spo2_threshold_pct : float
        The desaturation threshold of the criteria, percent.
    time_below_spo2_threshold_s : float or None
        Seconds with SpO2 below ``spo2_threshold_pct`` (gaps not counted).
    max_etco2_mmHg, median_rr_per_min : float or None
        Over valid breaths.
    n_breaths, n_valid_breaths : int
    attention : tuple of str
        Plain sentences for the reviewer's attention: every adverse event with its tier, every
        CO2 or SpO2 gap during sedation, brief SpO2 dips, what could not be assessed.
    co2_low_amplitude_pct, co2_signal_absent_pct : float or None
        Share of the window inside low-amplitude stretches / absent-CO2-signal findings,
        percent: CO2 recorded there says little about ventilation (None without CO2).
    events_by_severity : dict of str to int
        Adverse events per World SIVA tier (``minimal``, ``minor``, ``moderate``,
        ``sentinel``): what a committee counts.
    """

    sedation_start_s: float
    sedation_end_s: float
    sedation_duration_s: float
    sedation_window: str
    co2_coverage_pct: float | None
    spo2_coverage_pct: float | None
    episodes_by_kind: dict[str, int]
    episodes_by_severity: dict[str, int]
    longest_apnoea_s: float | None
    min_spo2_pct: float | None
    spo2_threshold_pct: float
    time_below_spo2_threshold_s: float | None
    max_etco2_mmHg: float | None
    median_rr_per_min: float | None
    n_breaths: int
    n_valid_breaths: int
    attention: tuple[str, ...]
    co2_low_amplitude_pct: float | None = None
    co2_signal_absent_pct: float | None = None
    events_by_severity: dict[str, int] = field(default_factory=dict)

    def to_dict(self) -> dict:
        """The ``summary`` object of the episodes JSON (field names as keys)."""
        out = asdict(self)
        out["attention"] = list(self.attention)
        return out


@dataclass(frozen=True)
class CriteriaRef:
    """Which criteria file an analysis used: name, path as shown, SHA-256."""

    name: str
    path: str
    sha256: str


@dataclass(frozen=True)
class Quality:
    """What the record must say about the data it was made from.

    Attributes
    ----------
    sources : tuple of SourceInfo
        Every input file with its SHA-256, reader, rows, offset and conversion.
    findings : tuple of QualityFinding
        Ingest findings (missing streams, streams that do not overlap...) and the gaps of
        every stream by the criteria's gap rule, in that order.
    warnings : tuple of str
        Ingest warnings (rows dropped and why, naive timestamps...).
    co2_gap_s, spo2_gap_s : float
        The gap rule applied: longest sample step that is not a gap, seconds.
    invalid_breaths : int
        Breaths unusable for trends; ``invalid_by_reason`` counts them per reason.
    invalid_by_reason : dict of str to int
    spo2_artefact_samples : int
        SpO2 readings marked by an artefact rule (:mod:`sedreport.oximetry`).
    criteria : CriteriaRef
    baseline : Baseline
    limitations : tuple of str
        What could not be assessed and why.
    spo2_samples : int
        SpO2 samples in the file.
    spo2_no_reading_samples : int
        SpO2 samples without a reading (blank, the probe's 0, impossible values): missing
        data, set to NaN in cleaning; ``spo2_blank_samples`` of them were blank cells.
    spo2_blank_samples : int
    spo2_artefact_by_rule : dict of str to int
        Readings marked per artefact rule (``acquisition``, ``spike``, ``flat``).
    """

    sources: tuple[SourceInfo, ...]
    findings: tuple[QualityFinding, ...]
    warnings: tuple[str, ...]
    co2_gap_s: float
    spo2_gap_s: float
    invalid_breaths: int
    invalid_by_reason: dict[str, int]
    spo2_artefact_samples: int
    criteria: CriteriaRef
    baseline: Baseline
    limitations: tuple[str, ...]
    spo2_samples: int = 0
    spo2_no_reading_samples: int = 0
    spo2_blank_samples: int = 0
    spo2_artefact_by_rule: dict[str, int] = field(default_factory=dict)

    @property
    def gaps(self) -> tuple[QualityFinding, ...]:
        """The gap findings alone."""
        return tuple(f for f in self.findings if f.kind == "gap")

    def to_dict(self) -> dict:
        """The ``quality`` object of the episodes JSON."""
        return {
            "sources": [asdict(s) for s in self.sources],
            "findings": [asdict(f) for f in self.findings],
            "warnings": list(self.warnings),
            "gap_rule": {"co2_gap_s": self.co2_gap_s, "spo2_gap_s": self.spo2_gap_s},
            "invalid_breaths": {
                "count": self.invalid_breaths,
                "by_reason": dict(self.invalid_by_reason),
            },
            "spo2_artefact_samples": self.spo2_artefact_samples,
            "spo2_samples": self.spo2_samples,
            "spo2_no_reading_samples": self.spo2_no_reading_samples,
            "spo2_blank_samples": self.spo2_blank_samples,
            "spo2_artefact_by_rule": dict(self.spo2_artefact_by_rule),
            "criteria": asdict(self.criteria),
            "baseline": asdict(self.baseline),
            "limitations": list(self.limitations),
        }


def sedation_window_s(session: Session) -> tuple[float, float, str]:
    """Start and end of sedation (s) and a sentence saying how they were chosen.

    Start: the first dose (else the first data). End: the last ``procedure_end`` after the
    start (else the last data, dose or event).
    """
    first, last = session.span_s()
    doses = [d.time_s for d in session.doses]
    start = min(doses) if doses else first
    how = "from the first dose" if doses else "no doses recorded: from the first data"
    ends = [e.time_s for e in session.events if e.event == "procedure_end" and e.time_s > start]
    end = max(ends) if ends else last
    how += " to procedure_end" if ends else " to the last data"
    return float(start), float(max(end, start)), how


def time_below_s(t: np.ndarray, v: np.ndarray, threshold: float, max_step_s: float) -> float:
    """Seconds with SpO2 below ``threshold``, each sample held until the next (steps over
    ``max_step_s`` are gaps and not counted)."""
    if t.size < 2:
        return 0.0
    dt = np.diff(t)
    return float(np.sum(dt[(v[:-1] < threshold) & (dt <= max_step_s)]))


def _non_artefact_spo2(trends: Trends) -> tuple[np.ndarray, np.ndarray]:
    """Times (s) and values (%) of every SpO2 sample but the artefacts: samples without a
    reading stay (NaN), so a low reading is held only until the reading is lost."""
    keep = ~np.asarray(trends.spo2_artefact, dtype=bool)
    return np.asarray(trends.spo2_time_s, float)[keep], np.asarray(trends.spo2_pct, float)[keep]


def _pct(part: float, whole: float) -> float | None:
    return 100.0 * part / whole if whole > 0 else None


def _finite_or_none(x: np.ndarray, fn) -> float | None:
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    return float(fn(x)) if x.size else None


def kind_share_pct(episodes: tuple[Episode, ...], kind: str, lo: float, hi: float) -> float | None:
    """Percent of the window [lo, hi] (s) covered by episodes of one kind (None if empty)."""
    spans = sorted((max(e.start_s, lo), min(e.end_s, hi)) for e in episodes if e.kind == kind)
    covered, reach = 0.0, lo
    for a, b in spans:
        a = max(a, reach)
        if b > a:
            covered += b - a
            reach = b
    return _pct(covered, hi - lo)


def summarise_session(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    episodes: tuple[Episode, ...],
    criteria: Criteria,
    quality: Quality,
    events: tuple[AdverseEvent, ...] = (),
    notes: tuple[str, ...] = (),
) -> Summary:
    """The :class:`Summary` of an Analysis (``notes``: further attention sentences, e.g.
    the brief SpO2 dips)."""
    lo, hi, how = sedation_window_s(session)
    span = hi - lo
    gap = criteria.signal_loss
    co2_cov = covered_s(session.co2.time_s, gap.co2_gap_s, lo, hi) if session.co2 else 0.0
    spo2_t, spo2_v = usable_spo2(trends)
    valid = np.asarray(breaths.valid, dtype=bool)
    apnoeas = [e.duration_s for e in episodes if e.kind == "apnoea"]
    threshold = criteria.desaturation.spo2_below_pct
    return Summary(
        sedation_start_s=lo,
        sedation_end_s=hi,
        sedation_duration_s=span,
        sedation_window=how,
        co2_coverage_pct=_pct(co2_cov, span),
        spo2_coverage_pct=_pct(covered_s(spo2_t, gap.spo2_gap_s, lo, hi), span),
        episodes_by_kind={k: sum(e.kind == k for e in episodes) for k in EPISODE_KINDS},
        episodes_by_severity={
            t: sum(e.severity == (None if t == "none" else t) for e in episodes)
            for t in ("none", *SEVERITY_TIERS)
        },
        longest_apnoea_s=max(apnoeas) if apnoeas else (0.0 if len(breaths) else None),
        min_spo2_pct=_finite_or_none(spo2_v, np.min),
        spo2_threshold_pct=float(threshold),
        time_below_spo2_threshold_s=(
            time_below_s(*_non_artefact_spo2(trends), threshold, gap.spo2_gap_s)
            if spo2_t.size
            else None
        ),
        max_etco2_mmHg=_finite_or_none(breaths.etco2_mmHg[valid], np.max),
        median_rr_per_min=_finite_or_none(breaths.rr_per_min[valid], np.median),
        n_breaths=len(breaths),
        n_valid_breaths=int(valid.sum()),
        attention=(
            *_event_lines(session, episodes, events),
            *_gap_lines(session, quality, lo, hi, gap.min_duration_s),
            *notes,
            *_attention(session, quality),
        ),
        events_by_severity={t: sum(ev.severity == t for ev in events) for t in SEVERITY_TIERS},
        co2_low_amplitude_pct=kind_share_pct(episodes, "low_amplitude", lo, hi)
        if session.co2
        else None,
        co2_signal_absent_pct=(
            kind_share_pct(episodes, "co2_signal_absent", lo, hi) if session.co2 else None
        ),
    )


def _event_lines(
    session: Session, episodes: tuple[Episode, ...], events: tuple[AdverseEvent, ...]
) -> list[str]:
    """One sentence per adverse event: id, time, tier, its episodes and interventions."""
    kinds = {e.id: e.kind.replace("_", " ") for e in episodes}
    out = []
    for ev in events:
        what = " -> ".join(kinds.get(i, i) for i in ev.episodes) or "outcome only"
        acts = ", ".join(dict.fromkeys(i.event.replace("_", " ") for i in ev.interventions))
        outcome = ", ".join(o.text.replace("_", " ") for o in ev.outcome)
        extra = "".join(
            [f"; interventions: {acts}" if acts else "", f"; outcome: {outcome}" if outcome else ""]
        )
        out.append(
            f"Adverse event {ev.id} at {session.clock_time(ev.start_s):%H:%M:%S}, "
            f"{ev.severity}: {what} ({', '.join(ev.episodes) or 'no episode'}){extra}."
        )
    return out


def _gap_lines(session: Session, quality: Quality, lo: float, hi: float, min_s: float) -> list[str]:
    """Every CO2 or SpO2 gap that meets the sedation window: one line each when at least
    ``min_s`` long (the signal-loss listing minimum), the shorter ones counted per stream."""
    out = []
    short: dict[str, list[float]] = {}
    for g in quality.gaps:
        if g.start_s is None or g.end_s is None or g.end_s < lo or g.start_s > hi:
            continue
        name = "CO2" if g.source == "co2" else "SpO2"
        if g.end_s - g.start_s < min_s:
            short.setdefault(name, []).append(g.end_s - g.start_s)
            continue
        out.append(
            f"{name} gap during sedation at {session.clock_time(g.start_s):%H:%M:%S} "
            f"({_duration_text(g.end_s - g.start_s)}): that stream could not be assessed there."
        )
    for name, lengths in short.items():
        out.append(
            f"{len(lengths)} shorter {name} gap(s) during sedation, {sum(lengths):.0f} s in all "
            f"(each under {min_s:g} s)."
        )
    return out


def _attention(session: Session, quality: Quality) -> list[str]:
    out = list(quality.limitations)
    if not session.doses:
        out.append("No doses recorded: the sedation window is the span of the data.")
    return out


def _duration_text(duration_s: float) -> str:
    """``71 s`` as ``1 min 11 s``; under a minute as ``42 s``."""
    minutes, seconds = divmod(round(duration_s), 60)
    return f"{minutes} min {seconds} s" if minutes else f"{seconds} s"


def _limitations(session: Session, breaths: BreathTable, baseline: Baseline) -> list[str]:
    out = []
    if session.co2 is None:
        out.append(
            "No CO2 stream: apnoea, hypoventilation, rebreathing and sloped plateau not assessed."
        )
    elif not np.any(breaths.valid):
        out.append("No valid breath found in the CO2 stream: CO2 episodes not assessed.")
    if session.spo2 is None:
        out.append("No SpO2 stream: desaturation not assessed.")
    if session.co2 is not None and not np.isfinite(baseline.etco2_mmHg):
        out.append(
            "No baseline EtCO2: only the absolute EtCO2 criterion applied; hypopnoeic "
            "hypoventilation and sloped plateau not assessed."
        )
    elif session.co2 is not None and not np.isfinite(baseline.phase3_slope_norm_per_s):
        out.append("No baseline phase III slope: sloped plateau judged on the upstroke only.")
    return out


def summarise_quality(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    baseline: Baseline,
    criteria: Criteria,
) -> Quality:
    """The :class:`Quality` of an Analysis."""
    valid = np.asarray(breaths.valid, dtype=bool)
    reasons = Counter(r for r, ok in zip(breaths.reason, valid, strict=True) if not ok)
    marks = mark_oximetry(session.spo2, criteria) if session.spo2 is not None else None
    return Quality(
        sources=tuple(session.sources),
        findings=(*session.findings, *stream_gap_findings(session, criteria)),
        warnings=tuple(session.warnings),
        co2_gap_s=float(criteria.signal_loss.co2_gap_s),
        spo2_gap_s=float(criteria.signal_loss.spo2_gap_s),
        invalid_breaths=int((~valid).sum()),
        invalid_by_reason=dict(reasons),
        spo2_artefact_samples=int(np.count_nonzero(trends.spo2_artefact)),
        criteria=CriteriaRef(criteria.name, criteria.path, criteria.sha256),
        baseline=baseline,
        limitations=tuple(_limitations(session, breaths, baseline)),
        spo2_samples=int(marks.time_s.size) if marks else 0,
        spo2_no_reading_samples=marks.no_reading_samples if marks else 0,
        spo2_blank_samples=marks.blank_samples if marks else 0,
        spo2_artefact_by_rule=marks.artefact_by_rule if marks else {},
    )
