"""Signal loss: no usable CO2 or SpO2 data (a gap in the samples, a flat-lined probe).

A signal_loss episode runs from the last sample before a gap to the first sample after it
(DESIGN.md time conventions). Gaps come from the samples themselves (a step longer than
``criteria.signal_loss.co2_gap_s`` / ``spo2_gap_s``) and from the ingest findings of kind
``gap`` or ``flat_line``; overlapping intervals of one stream are merged.
"""

from __future__ import annotations

import numpy as np

from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, find_gaps, merge_intervals
from sedreport.session import Session

_FINDING_KINDS = ("gap", "flat_line")


def _finding_stream(source: str) -> str | None:
    text = source.lower()
    if "spo2" in text or "oxim" in text:
        return "spo2"
    if "co2" in text:
        return "co2"
    return None


def stream_gaps(session: Session, stream: str, criteria: Criteria) -> tuple[np.ndarray, np.ndarray]:
    """Merged gap intervals of one stream (``"co2"`` or ``"spo2"``), seconds.

    Parameters
    ----------
    session : Session
    stream : str
        ``"co2"`` or ``"spo2"``.
    criteria : Criteria
        Supplies the longest sample step that is not a gap.
    """
    starts: list[np.ndarray] = []
    ends: list[np.ndarray] = []
    if stream == "co2" and session.co2 is not None:
        s, e = find_gaps(session.co2.time_s, criteria.signal_loss.co2_gap_s)
        starts.append(s)
        ends.append(e)
    if stream == "spo2" and session.spo2 is not None:
        s, e = find_gaps(session.spo2.time_s, criteria.signal_loss.spo2_gap_s)
        starts.append(s)
        ends.append(e)
    for f in session.findings:
        if f.kind in _FINDING_KINDS and _finding_stream(f.source) == stream:
            if f.start_s is not None and f.end_s is not None and f.end_s > f.start_s:
                starts.append(np.array([f.start_s]))
                ends.append(np.array([f.end_s]))
    if not starts:
        return np.empty(0), np.empty(0)
    return merge_intervals(np.concatenate(starts), np.concatenate(ends))


def detect_signal_loss(session: Session, criteria: Criteria) -> list[Finding]:
    """Gaps of at least ``criteria.signal_loss.min_duration_s`` in the CO2 or SpO2 stream.

    The subtype names the stream (``co2`` / ``spo2``).
    """
    out: list[Finding] = []
    min_s = criteria.signal_loss.min_duration_s
    for stream in ("co2", "spo2"):
        starts, ends = stream_gaps(session, stream, criteria)
        for a, b in zip(starts, ends, strict=True):
            if b - a >= min_s:
                note = (
                    f"No usable {stream.upper()} data for {b - a:.1f} s; nothing about the "
                    "patient can be read from the record in this interval."
                )
                out.append(Finding("signal_loss", stream, float(a), float(b), (note,)))
    return out
