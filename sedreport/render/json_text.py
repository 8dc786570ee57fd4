"""JSON forms of the command-line outputs: episodes (the contract of DESIGN.md), breaths, check.

Every function returns plain JSON-ready data (NaN and infinities as None, tuples as lists);
the ``*_json`` functions return the text. Nothing here judges the data.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict
from typing import TYPE_CHECKING

import numpy as np

from sedreport.capnography.breaths import breaths_to_frame
from sedreport.capnography.model import BreathTable
from sedreport.criteria import Criteria
from sedreport.gaps import stream_gap_findings
from sedreport.render.cautions import caution_line
from sedreport.render.csv_text import BREATH_DECIMALS, breath_reason_counts
from sedreport.session import Session

if TYPE_CHECKING:  # types only: the text outputs must not load the detectors
    from sedreport.analysis import Analysis
    from sedreport.episodes.model import AdverseEvent, Episode


def json_ready(x: object) -> object:
    """NaN/inf to None, tuples to lists, numpy scalars to Python (valid JSON).

    Examples
    --------
    >>> json_ready({"a": (1.0, float("nan")), "b": np.float64(2.5)})
    {'a': [1.0, None], 'b': 2.5}
    """
    if isinstance(x, dict):
        return {str(k): json_ready(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [json_ready(v) for v in x]
    if isinstance(x, np.generic):
        x = x.item()
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def _dumps(doc: dict) -> str:
    return json.dumps(json_ready(doc), indent=2, allow_nan=False) + "\n"


def episode_to_dict(episode: Episode) -> dict:
    """One episode in the JSON contract (linked doses and interventions as objects)."""
    return json_ready(asdict(episode))


def event_to_dict(event: AdverseEvent) -> dict:
    """One adverse event in the JSON contract: ``id, episodes, start_s, end_s, start_time,
    severity, descriptors [{text, tier, episode}], interventions, outcome [{text, tier}],
    capnographic_lead_s, notes``."""
    return json_ready(asdict(event))


def episodes_to_dict(analysis: Analysis) -> dict:
    """The ``sedreport episodes --format json`` object of DESIGN.md (NaN as null)."""
    s = analysis.session
    return json_ready(
        {
            "session_id": s.session_id,
            "started": s.started.isoformat(),
            "criteria": analysis.criteria.to_dict(),
            "episodes": [episode_to_dict(e) for e in analysis.episodes],
            "events": [event_to_dict(ev) for ev in analysis.events],
            "brief_dips": [asdict(d) for d in analysis.brief_dips],
            "summary": analysis.summary.to_dict(),
            "quality": analysis.quality.to_dict(),
        }
    )


def episodes_json(analysis: Analysis) -> str:
    """The ``sedreport episodes --format json`` text."""
    return _dumps(episodes_to_dict(analysis))


def _breath_value(column: str, value: object) -> object:
    if column == "valid":
        return bool(value)
    if column == "reason":
        return str(value)
    v = float(value)
    return round(v, BREATH_DECIMALS[column] + 1) if math.isfinite(v) else None


def breaths_to_dict(breaths: BreathTable, session_id: str, criteria: Criteria) -> dict:
    """JSON-ready breaths: ``session_id``, ``criteria`` (name, path, sha256), ``n_breaths``,
    ``n_valid``, ``invalid_by_reason``, ``breaths`` (records of the CSV columns), ``caution``."""
    frame = breaths_to_frame(breaths)
    columns = list(frame.columns)
    return {
        "session_id": session_id,
        "criteria": {"name": criteria.name, "path": criteria.path, "sha256": criteria.sha256},
        "n_breaths": len(breaths),
        "n_valid": int(breaths.valid.sum()),
        "invalid_by_reason": breath_reason_counts(breaths),
        "breaths": [
            {c: _breath_value(c, v) for c, v in zip(columns, row, strict=True)}
            for row in frame.itertuples(index=False)
        ],
        "caution": caution_line(),
    }


def breaths_json(breaths: BreathTable, session_id: str, criteria: Criteria) -> str:
    """The ``sedreport breaths --format json`` text."""
    return _dumps(breaths_to_dict(breaths, session_id, criteria))


def describe_session(session: Session, criteria: Criteria) -> dict:
    """JSON-ready description of a loaded session for ``sedreport check``.

    Keys: ``session_id``, ``folder``, ``started``, ``span_s`` ([first, last] seconds on the
    session clock), ``duration_s``, ``streams`` (one dict per input file: ``role``, ``file``,
    ``reader``, ``rows``, ``sample_rate_hz``, ``span_s``, ``units_in``, ``conversion``,
    ``clock_offset_s``, ``time_style``, ``channel``, ``sha256``, ``other_files``), ``doses``,
    ``events`` (counts), ``gap_rule`` (the criteria's ``co2_gap_s``/``spo2_gap_s``),
    ``findings`` (``kind``, ``source``, ``message``, ``start_s``, ``end_s``; the gaps by that
    rule among them) and ``warnings``.
    """
    first, last = session.span_s()
    findings = (*session.findings, *stream_gap_findings(session, criteria))
    return json_ready(
        {
            "session_id": session.session_id,
            "folder": str(session.folder) if session.folder is not None else None,
            "started": session.started.isoformat(),
            "span_s": [first, last],
            "duration_s": last - first,
            "streams": [
                {
                    "role": s.role,
                    "file": s.file,
                    "reader": s.reader,
                    "rows": s.rows,
                    "sample_rate_hz": s.sample_rate_hz,
                    "span_s": list(s.span_s) if s.span_s is not None else None,
                    "units_in": s.units_in,
                    "conversion": s.conversion,
                    "clock_offset_s": s.clock_offset_s,
                    "time_style": s.time_style,
                    "channel": s.channel,
                    "sha256": s.sha256,
                    "other_files": [{"file": f, "sha256": h} for f, h in s.other_files],
                }
                for s in session.sources
            ],
            "doses": len(session.doses),
            "events": len(session.events),
            "gap_rule": {
                "co2_gap_s": criteria.signal_loss.co2_gap_s,
                "spo2_gap_s": criteria.signal_loss.spo2_gap_s,
                "criteria": criteria.path,
            },
            "findings": [asdict(f) for f in findings],
            "warnings": list(session.warnings),
        }
    )


def check_json(descriptions: list[dict], errors: list[str]) -> str:
    """The ``sedreport check --format json`` text: sessions, error lines, caution."""
    return _dumps({"sessions": descriptions, "errors": errors, "caution": caution_line()})
