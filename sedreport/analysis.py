"""The Analysis of one session: the pipeline from Session to breaths, trends, episodes.

:func:`analyse_session` runs breath detection, trends and baseline (``sedreport.capnography``),
every episode detector and the linking (``sedreport.episodes``), and fills the JSON-ready
``summary`` and ``quality``. :func:`episodes_to_dict` and :func:`episodes_to_frame` give the
machine-readable outputs of DESIGN.md. The tool documents and reviews recorded data; it is not
an alarm or a diagnosis.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from sedreport.capnography import compute_trends, estimate_baseline, find_breaths
from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria, load_criteria
from sedreport.episodes.detect import detect_episodes
from sedreport.episodes.model import Episode
from sedreport.episodes.summary import summarise_quality, summarise_session
from sedreport.session import Session

#: Trailing window of the respiratory-rate trend, seconds (common practice: rate per minute).
RR_WINDOW_S = 60.0
#: Length of the pre-dose baseline window, seconds (common practice; a choice of this tool).
BASELINE_WINDOW_S = 120.0
#: Scalar episode fields of the csv output, in column order.
EPISODE_SCALARS: tuple[str, ...] = (
    "id",
    "kind",
    "subtype",
    "start_s",
    "end_s",
    "duration_s",
    "start_time",
    "severity",
    "peak_etco2_mmHg",
    "min_spo2_pct",
    "min_rr_per_min",
    "time_to_first_intervention_s",
    "time_to_resolution_s",
    "capnographic_lead_s",
)


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
    summary : dict
        JSON-ready: ``sedation_start_s``, ``sedation_end_s``, ``sedation_duration_s``,
        ``co2_coverage_pct``, ``spo2_coverage_pct``, ``episodes_by_kind``,
        ``episodes_by_severity``, ``longest_apnoea_s``, ``min_spo2_pct``,
        ``time_below_90_s``, ``max_etco2_mmHg``, ``median_rr_per_min``, ``n_breaths``,
        ``n_valid_breaths``, ``attention`` (list of plain sentences).
    quality : dict
        JSON-ready: ``sources`` (file, sha256, reader, rows, clock_offset_s, conversion...),
        ``findings`` (ingest gaps etc.), ``warnings``, ``invalid_breaths``,
        ``spo2_artefact_samples``, ``criteria`` (name, path, sha256); also ``baseline`` and
        ``limitations`` (what could not be assessed and why).
    """

    session: Session
    criteria: Criteria
    breaths: BreathTable
    trends: Trends
    baseline: Baseline
    episodes: tuple[Episode, ...]
    summary: dict
    quality: dict


def resolve_criteria(session: Session, criteria: Criteria | str | Path | None) -> Criteria:
    """The criteria to use: the argument, else the session's own file, else ``default.yaml``.

    A relative ``criteria:`` path in ``session.yaml`` is taken inside the session folder.
    """
    if isinstance(criteria, Criteria):
        return criteria
    if criteria is not None:
        return load_criteria(criteria)
    if session.criteria_file:
        path = Path(session.criteria_file)
        return load_criteria(path if path.is_absolute() else session.folder / path)
    return load_criteria(None)


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
    ``quality["limitations"]`` and ``summary["attention"]``.
    """
    crit = resolve_criteria(session, criteria)
    breaths = find_breaths(session.co2) if session.co2 is not None else empty_breaths()
    trends = compute_trends(session, breaths, rr_window_s=RR_WINDOW_S)
    baseline = estimate_baseline(session, breaths, window_s=BASELINE_WINDOW_S)
    episodes = detect_episodes(session, breaths, trends, baseline, crit)
    quality = summarise_quality(session, breaths, trends, baseline, crit)
    summary = summarise_session(session, breaths, trends, episodes, crit, quality)
    return Analysis(session, crit, breaths, trends, baseline, episodes, summary, quality)


def _clean(x: object) -> object:
    """NaN/inf to None, tuples to lists, numpy scalars to Python (valid JSON)."""
    if isinstance(x, dict):
        return {str(k): _clean(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_clean(v) for v in x]
    if isinstance(x, np.generic):
        x = x.item()
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def episode_to_dict(episode: Episode) -> dict:
    """One episode in the JSON contract (linked doses and interventions as objects)."""
    return _clean(asdict(episode))


def episodes_to_dict(analysis: Analysis) -> dict:
    """The ``sedreport episodes --format json`` object of DESIGN.md (NaN as null)."""
    s = analysis.session
    return _clean(
        {
            "session_id": s.session_id,
            "started": s.started.isoformat(),
            "criteria": analysis.criteria.to_dict(),
            "episodes": [episode_to_dict(e) for e in analysis.episodes],
            "summary": analysis.summary,
            "quality": analysis.quality,
        }
    )


def episodes_to_frame(analysis: Analysis) -> pd.DataFrame:
    """One row an episode with the scalar fields of :data:`EPISODE_SCALARS` plus counts."""
    rows = []
    for e in analysis.episodes:
        row = {k: getattr(e, k) for k in EPISODE_SCALARS}
        row["n_preceding_doses"] = len(e.preceding_doses)
        row["n_interventions"] = len(e.interventions)
        rows.append(row)
    columns = [*EPISODE_SCALARS, "n_preceding_doses", "n_interventions"]
    return pd.DataFrame(rows, columns=columns)


CAUTION = (
    "sedreport documents and reviews recorded data; it is not an alarm or a diagnosis. "
    "Clinical observation comes first; local sedation policy and licensed practice decide."
)


def _fmt(x: object, spec: str = ".1f") -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) else format(x, spec)


def format_episode_table(analysis: Analysis) -> str:
    """Plain-text table of the episodes with the criteria used and the caution."""
    c = analysis.criteria
    lines = [
        f"session {analysis.session.session_id}  started {analysis.session.started.isoformat()}",
        f"criteria {c.name} ({c.path}, sha256 {c.sha256[:12]})",
        f"{'id':<4} {'kind':<16} {'subtype':<12} {'start':<26} {'start_s':>9} {'dur_s':>7} "
        f"{'severity':<9} {'EtCO2max':>8} {'SpO2min':>7} {'RRmin':>6}",
    ]
    for e in analysis.episodes:
        lines.append(
            f"{e.id:<4} {e.kind:<16} {e.subtype or '-':<12} {e.start_time:<26} "
            f"{e.start_s:>9.1f} {e.duration_s:>7.1f} {e.severity:<9} "
            f"{_fmt(e.peak_etco2_mmHg):>8} {_fmt(e.min_spo2_pct):>7} {_fmt(e.min_rr_per_min):>6}"
        )
    if not analysis.episodes:
        lines.append("(no episode met the criteria)")
    lines.extend(f"attention: {a}" for a in analysis.summary["attention"])
    lines.append(f"note: {CAUTION}")
    return "\n".join(lines) + "\n"


def episodes_json(analysis: Analysis) -> str:
    """The ``sedreport episodes --format json`` object as text (NaN written as null)."""
    import json

    return json.dumps(episodes_to_dict(analysis), indent=2, allow_nan=False) + "\n"


def episodes_output(session: Session, fmt: str, criteria: Criteria | str | Path | None) -> str:
    """The text printed by ``sedreport episodes``: ``table``, ``csv`` or ``json``.

    Analyses the session; raises SedreportError on bad criteria before any output is produced.
    """
    analysis = analyse_session(session, criteria)
    if fmt == "json":
        return episodes_json(analysis)
    if fmt == "csv":
        return episodes_to_frame(analysis).to_csv(index=False, lineterminator="\n")
    return format_episode_table(analysis)
