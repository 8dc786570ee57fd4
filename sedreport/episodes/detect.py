"""All detectors in one pass: findings of every kind, linked, sorted, numbered and graded."""

from __future__ import annotations

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.episodes.apnoea import detect_apnoea
from sedreport.episodes.cardiovascular import detect_bradycardia, detect_hypotension
from sedreport.episodes.co2_signal import detect_co2_signal_absent
from sedreport.episodes.desaturation import detect_desaturation
from sedreport.episodes.dips import deep_dip_findings
from sedreport.episodes.etco2_fall import detect_etco2_fall
from sedreport.episodes.events import grade_events
from sedreport.episodes.hypoventilation import detect_hypoventilation
from sedreport.episodes.linking import link_episode
from sedreport.episodes.low_amplitude import detect_low_amplitude, outside_stretches
from sedreport.episodes.model import EPISODE_KINDS, AdverseEvent, Episode
from sedreport.episodes.signal_loss import detect_signal_loss, stream_gaps
from sedreport.episodes.waveform import detect_rebreathing, detect_sloped_plateau
from sedreport.session import Session


def find_findings(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    baseline: Baseline,
    criteria: Criteria,
) -> list[Finding]:
    """Run every detector; overlapping findings of different kinds stay separate.

    Returns
    -------
    list of Finding
        Sorted by onset, then by the kind order of :data:`EPISODE_KINDS`.
    """
    gs, ge = stream_gaps(session, "co2", criteria)
    co2_end = (
        float(session.co2.time_s[-1])
        if session.co2 is not None and session.co2.time_s.size
        else None
    )
    absent = detect_co2_signal_absent(session, breaths, trends, gs, ge, criteria)
    low = detect_low_amplitude(breaths, baseline, trends, gs, ge, criteria)
    absent_s = [(f.start_s, f.end_s) for f in absent]
    low_s = [(f.start_s, f.end_s) for f in low]
    found = [
        *detect_apnoea(breaths, gs, ge, criteria, co2_end_s=co2_end, absent=absent_s),
        *detect_hypoventilation(breaths, baseline, gs, ge, criteria, low_amplitude=low_s),
        *absent,
        *low,
        *detect_etco2_fall(breaths, baseline, gs, ge, criteria, low_amplitude=low_s),
        *detect_desaturation(trends, criteria),
        *deep_dip_findings(trends, criteria),
        *detect_rebreathing(breaths, gs, ge, criteria),
        *detect_sloped_plateau(outside_stretches(breaths, low_s), baseline, gs, ge, criteria),
        *detect_signal_loss(session, criteria),
        *detect_hypotension(session, criteria),
        *detect_bradycardia(session, trends, criteria),
    ]
    return sorted(found, key=lambda f: (f.start_s, EPISODE_KINDS.index(f.kind), f.end_s))


def detect_episodes(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    baseline: Baseline,
    criteria: Criteria,
) -> tuple[Episode, ...]:
    """Every episode of a session, linked to doses and interventions, ids ``E1``... by onset.

    Parameters
    ----------
    session : Session
    breaths : BreathTable
    trends : Trends
    baseline : Baseline
    criteria : Criteria
        Every threshold used comes from here.

    Examples
    --------
    >>> import tempfile
    >>> from sedreport import compute_trends, estimate_baseline, find_breaths, load_session
    >>> from sedreport.criteria import load_criteria
    >>> from sedreport.demo import write_scenario
    >>> folder = write_scenario(tempfile.mkdtemp(), "upper_gi_apnoea", seed=0)  # invented
    >>> s, crit = load_session(folder), load_criteria()
    >>> b = find_breaths(s.co2, gap_s=crit.signal_loss.co2_gap_s)
    >>> eps = detect_episodes(s, b, compute_trends(s, b), estimate_baseline(s, b), crit)
    >>> [(e.id, e.kind, e.start_time[11:19]) for e in eps]
    [('E1', 'apnoea', '14:35:12'), ('E2', 'bradycardia', '14:40:28')]
    """
    return detect_events(session, breaths, trends, baseline, criteria)[0]


def detect_events(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    baseline: Baseline,
    criteria: Criteria,
) -> tuple[tuple[Episode, ...], tuple[AdverseEvent, ...]]:
    """Every episode, linked and numbered, and the adverse events they make (World SIVA).

    Returns
    -------
    episodes : tuple of Episode
        Ids ``E1``... by onset, each with its ``event`` id and tier (None for findings).
    events : tuple of AdverseEvent
        Ids ``A1``... by onset (:func:`sedreport.episodes.events.grade_events`).
    """
    findings = find_findings(session, breaths, trends, baseline, criteria)
    linked = tuple(
        link_episode(f, f"E{i}", session, breaths, trends, criteria)
        for i, f in enumerate(findings, start=1)
    )
    return grade_events(session, linked, criteria)
