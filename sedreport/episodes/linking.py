"""Linking a detector's finding to the case: worst values, doses, infusions, interventions.

The tier is given later, once per adverse event (:mod:`sedreport.episodes.events`).
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.episodes.drugs import cumulative_at, doses_during, infusions_at, link_doses
from sedreport.episodes.model import Episode, LinkedIntervention
from sedreport.episodes.severity import intervention_tier
from sedreport.session import Session

#: Kinds whose onset can precede a desaturation (capnographic lead time).
LEAD_KINDS = ("apnoea", "hypoventilation")


def link_interventions(
    session: Session, start_s: float, end_s: float, criteria: Criteria
) -> tuple[LinkedIntervention, ...]:
    """Interventions from ``start_s - criteria.linking.intervention_before_s`` to
    ``end_s + criteria.linking.intervention_after_s`` (one begun shortly before the onset,
    e.g. bag-mask ventilation for the apnoea that causes a desaturation, belongs to it)."""
    first = start_s - criteria.linking.intervention_before_s
    last = end_s + criteria.linking.intervention_after_s
    return tuple(
        LinkedIntervention(
            event=e.event,
            time_s=e.time_s,
            seconds_after_onset=float(e.time_s - start_s),
            value=e.value,
            note=e.note,
            tier=intervention_tier(e.event),
        )
        for e in session.interventions
        if first <= e.time_s <= last
    )


def usable_spo2(trends: Trends) -> tuple[np.ndarray, np.ndarray]:
    """Times (s) and values (%) of the cleaned SpO2 samples that are not artefact."""
    v = np.asarray(trends.spo2_pct, dtype=float)
    ok = np.isfinite(v) & ~np.asarray(trends.spo2_artefact, dtype=bool)
    return np.asarray(trends.spo2_time_s, dtype=float)[ok], v[ok]


def capnographic_lead_s(
    finding: Finding, spo2_t: np.ndarray, spo2_v: np.ndarray, criteria: Criteria
) -> float | None:
    """Seconds from an apnoea/hypoventilation onset to the first SpO2 below the threshold.

    Only a sample at or after onset and at most ``criteria.linking.lead_window_s`` after the
    episode's end counts; None when there is none or the kind has no lead time.
    """
    if finding.kind not in LEAD_KINDS:
        return None
    last = finding.end_s + criteria.linking.lead_window_s
    hit = (spo2_t >= finding.start_s) & (spo2_t <= last)
    hit &= spo2_v < criteria.desaturation.spo2_below_pct
    idx = np.flatnonzero(hit)
    return float(spo2_t[idx[0]] - finding.start_s) if idx.size else None


def worst_values(
    finding: Finding, breaths: BreathTable, spo2_t: np.ndarray, spo2_v: np.ndarray
) -> tuple[float | None, float | None, float | None]:
    """Peak EtCO2 (mmHg), lowest SpO2 (%) and lowest breath rate (/min) inside the episode.

    Breaths count when they overlap the closed interval [start, end] (for an apnoea: the two
    breaths that bound the pause); SpO2 samples when they fall inside it.
    """
    a, b = finding.start_s, finding.end_s
    sel = np.asarray(breaths.valid, dtype=bool) & (breaths.start_s <= b) & (breaths.end_s >= a)
    et = breaths.etco2_mmHg[sel]
    rr = breaths.rr_per_min[sel]
    sp = spo2_v[(spo2_t >= a) & (spo2_t <= b)]
    return _max(et), _min(sp), _min(rr)


def _max(x: np.ndarray) -> float | None:
    x = x[np.isfinite(x)]
    return float(x.max()) if x.size else None


def _min(x: np.ndarray) -> float | None:
    x = x[np.isfinite(x)]
    return float(x.min()) if x.size else None


def link_episode(
    finding: Finding,
    episode_id: str,
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    criteria: Criteria,
) -> Episode:
    """Turn one finding into an :class:`Episode` with worst values and links (no tier yet)."""
    spo2_t, spo2_v = usable_spo2(trends)
    peak_et, min_spo2, min_rr = worst_values(finding, breaths, spo2_t, spo2_v)
    duration = finding.end_s - finding.start_s
    interventions = link_interventions(session, finding.start_s, finding.end_s, criteria)
    return Episode(
        id=episode_id,
        kind=finding.kind,
        subtype=finding.subtype,
        start_s=finding.start_s,
        end_s=finding.end_s,
        duration_s=duration,
        start_time=session.clock_time(finding.start_s).isoformat(timespec="milliseconds"),
        severity=None,
        peak_etco2_mmHg=peak_et,
        min_spo2_pct=min_spo2,
        min_rr_per_min=min_rr,
        preceding_doses=link_doses(session, finding.start_s, criteria),
        interventions=interventions,
        notes=finding.notes,
        time_to_first_intervention_s=min(
            (i.seconds_after_onset for i in interventions), default=None
        ),
        time_to_resolution_s=duration if finding.resolved else None,
        capnographic_lead_s=capnographic_lead_s(finding, spo2_t, spo2_v, criteria),
        infusions_at_onset=infusions_at(session, finding.start_s),
        doses_during=doses_during(session, finding.start_s, finding.end_s),
        cumulative_at_onset=cumulative_at(session, finding.start_s),
    )
