"""The Analysis of one session: the pipeline from Session to breaths, trends, episodes."""

from __future__ import annotations

from dataclasses import dataclass

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes.model import Episode
from sedreport.session import Session


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
        ``spo2_artefact_samples``, ``criteria`` (name, path, sha256).
    """

    session: Session
    criteria: Criteria
    breaths: BreathTable
    trends: Trends
    baseline: Baseline
    episodes: tuple[Episode, ...]
    summary: dict
    quality: dict
