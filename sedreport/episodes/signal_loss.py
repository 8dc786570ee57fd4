"""Signal loss: no usable CO2 or SpO2 data (a gap in the samples, a flat-lined probe).

A signal_loss episode runs from the last sample before a gap to the first sample after it
(DESIGN.md time conventions). Gaps come from the samples alone, by the one gap rule of
:mod:`sedreport.gaps` with the active criteria's ``signal_loss.co2_gap_s`` / ``spo2_gap_s``;
SpO2 samples without a reading (:func:`sedreport.oximetry.mark_oximetry`: the probe's ``0``,
blanks, impossible values) do not count as samples (a reading marked as artefact does); the first
and last sample of the SpO2 file bound the stream, so a stretch without a reading at its start
or end, or a file with no reading at all, is a gap too.
"""

from __future__ import annotations

import numpy as np

from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.gaps import find_gaps, spo2_sample_times
from sedreport.session import Session


def stream_gaps(session: Session, stream: str, criteria: Criteria) -> tuple[np.ndarray, np.ndarray]:
    """Gap intervals of one stream (``"co2"`` or ``"spo2"``), seconds.

    Parameters
    ----------
    session : Session
    stream : str
        ``"co2"`` or ``"spo2"``.
    criteria : Criteria
        Supplies the longest sample step that is not a gap.
    """
    if stream == "co2" and session.co2 is not None:
        return find_gaps(session.co2.time_s, criteria.signal_loss.co2_gap_s)
    if stream == "spo2" and session.spo2 is not None:
        return find_gaps(spo2_sample_times(session, criteria), criteria.signal_loss.spo2_gap_s)
    return np.empty(0), np.empty(0)


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
                what = "SpO2 reading" if stream == "spo2" else "CO2 data"
                note = (
                    f"No usable {what} for {b - a:.1f} s; nothing about the "
                    "patient can be read from the record in this interval."
                )
                out.append(Finding("signal_loss", stream, float(a), float(b), (note,)))
    return out
