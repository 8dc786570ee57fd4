"""The Analysis of one session: the pipeline from Session to breaths, trends, episodes.

:func:`analyse_session` runs breath detection, trends and baseline (``sedreport.capnography``),
every episode detector and the linking (``sedreport.episodes``), and builds the typed
:class:`~sedreport.episodes.summary.Summary` and :class:`~sedreport.episodes.summary.Quality`.
Every output form of an Analysis (PDF, JSON, CSV, terminal text) lives in ``sedreport.render``.
The tool documents and reviews recorded data; it is not an alarm or a diagnosis.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from sedreport.capnography import compute_trends, estimate_baseline, find_breaths
from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria, resolve_criteria
from sedreport.episodes.detect import detect_events
from sedreport.episodes.dips import Dip, brief_dips
from sedreport.episodes.model import AdverseEvent, Episode
from sedreport.episodes.summary import Quality, Summary, summarise_quality, summarise_session
from sedreport.session import Session

#: Trailing window of the respiratory-rate trend, seconds (common practice: rate per minute).
RR_WINDOW_S = 60.0
#: Length of the pre-dose baseline window, seconds (common practice; a choice of this tool).
BASELINE_WINDOW_S = 120.0


@dataclass(frozen=True)
class Analysis:
    """Everything the renderers need about one session; no rendering knowledge inside.

    Attributes
    ----------
    session : Session
    criteria : Criteria
    breaths : BreathTable
    trends : Trends
    baseline : Baseline
    episodes : tuple of Episode
        In order of onset, ids ``E1``...
    events : tuple of AdverseEvent
        Adverse events after the World SIVA tool, ids ``A1``... (linked episodes graded once).
    brief_dips : tuple of Dip
        SpO2 dips below the threshold shorter than the listing minimum and not below the
        severe level: listed, not episodes.
    summary : Summary
        Key figures over the sedation window and the attention sentences.
    quality : Quality
        Sources with hashes, findings (gaps by the criteria's gap rule), warnings, invalid
        breaths, SpO2 artefacts, criteria used, baseline, limitations.
    """

    session: Session
    criteria: Criteria
    breaths: BreathTable
    trends: Trends
    baseline: Baseline
    episodes: tuple[Episode, ...]
    summary: Summary
    quality: Quality
    events: tuple[AdverseEvent, ...] = ()
    brief_dips: tuple[Dip, ...] = ()


def empty_breaths() -> BreathTable:
    """A BreathTable with no breaths (a session without CO2)."""
    z = np.empty(0)
    return BreathTable(z, z, z, z, z, z, z, z, np.empty(0, dtype=bool), ())


def analyse_session(session: Session, criteria: Criteria | str | Path | None = None) -> Analysis:
    """Analyse one session: breaths, trends, baseline, episodes, summary and quality.

    Parameters
    ----------
    session : Session
        From :func:`sedreport.ingest.load_session`.
    criteria : Criteria, path or None
        None uses the session's ``criteria:`` file or the shipped default.

    Notes
    -----
    A session without CO2 or SpO2 still analyses; what could not be assessed is listed in
    ``quality.limitations`` and ``summary.attention``.

    Examples
    --------
    >>> import tempfile
    >>> import sedreport
    >>> from sedreport.demo import write_scenario
    >>> folder = write_scenario(tempfile.mkdtemp(), "upper_gi_apnoea", seed=0)  # invented
    >>> analysis = sedreport.analyse_session(sedreport.load_session(folder))
    >>> [(e.kind, round(e.duration_s)) for e in analysis.episodes]
    [('apnoea', 39), ('bradycardia', 65)]
    >>> analysis.quality.co2_gap_s, analysis.criteria.name
    (1.0, 'default')
    """
    crit = resolve_criteria(session, criteria)
    gap_s = crit.signal_loss.co2_gap_s
    co2 = session.co2
    breaths = find_breaths(co2, gap_s=gap_s) if co2 is not None else empty_breaths()
    trends = compute_trends(session, breaths, rr_window_s=RR_WINDOW_S, gap_s=gap_s, criteria=crit)
    baseline = estimate_baseline(session, breaths, window_s=BASELINE_WINDOW_S, gap_s=gap_s)
    episodes, events = detect_events(session, breaths, trends, baseline, crit)
    dips = brief_dips(trends, crit)
    quality = summarise_quality(session, breaths, trends, baseline, crit)
    notes = tuple(_dip_line(session, d, crit) for d in dips)
    summary = summarise_session(session, breaths, trends, episodes, crit, quality, events, notes)
    return Analysis(
        session, crit, breaths, trends, baseline, episodes, summary, quality, events, dips
    )


def _dip_line(session: Session, dip: Dip, criteria: Criteria) -> str:
    """The attention sentence of a brief SpO2 dip (listed, never dropped silently)."""
    c = criteria.desaturation
    why = (
        "its fall or recovery was not recorded (a gap or the recording's edge), so it is not graded"
        if not dip.observed
        else f"shorter than the {c.min_duration_s:g} s listing minimum, so not an episode"
    )
    return (
        f"Brief SpO2 dip below {c.spo2_below_pct:g} % at {session.clock_time(dip.start_s):%H:%M:%S}"
        f" (lowest {dip.min_spo2_pct:g} %, {dip.duration_s:.0f} s): {why}."
    )
