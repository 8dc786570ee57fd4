"""Gaps in a sampled stream: the one rule, applied with the active criteria's threshold.

SpO2 samples count only where the oximeter gave a reading (:func:`spo2_sample_times`), so a
long run of "no reading" is a gap like a missing row.

A step between consecutive samples longer than ``max_step_s`` is a gap (DESIGN.md: never
bridged by interpolation). The threshold is never a constant here: callers pass
``criteria.signal_loss.co2_gap_s`` or ``spo2_gap_s``, so that a criteria file that changes it
changes segmentation, episodes, coverage and drawing alike.
"""

from __future__ import annotations

import numpy as np

from sedreport.criteria import Criteria
from sedreport.oximetry import mark_oximetry
from sedreport.session import QualityFinding, Session


def find_gaps(time_s: np.ndarray, max_step_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Sample steps longer than ``max_step_s``.

    Parameters
    ----------
    time_s : ndarray
        Increasing sample times, seconds on the session clock.
    max_step_s : float
        Longest step that is not a gap, seconds.

    Returns
    -------
    starts, ends : ndarray
        Time of the last sample before each gap and of the first sample after it, seconds.

    Examples
    --------
    >>> import numpy as np
    >>> find_gaps(np.array([0.0, 0.5, 1.0, 4.0, 4.5]), max_step_s=1.0)
    (array([1.]), array([4.]))
    """
    t = np.asarray(time_s, dtype=float)
    if t.size < 2:
        return np.empty(0), np.empty(0)
    big = np.flatnonzero(np.diff(t) > max_step_s)
    return t[big], t[big + 1]


def gap_findings(time_s: np.ndarray, source: str, max_step_s: float) -> list[QualityFinding]:
    """One ``gap`` quality finding per step longer than ``max_step_s``.

    Parameters
    ----------
    time_s : ndarray
        Increasing sample times, seconds on the session clock.
    source : str
        Stream role (``co2``, ``spo2``).
    max_step_s : float
        Longest step that is not a gap, seconds.
    """
    starts, ends = find_gaps(time_s, max_step_s)
    return [
        QualityFinding(
            kind="gap",
            source=source,
            message=f"{source}: no samples for {b - a:.1f} s ({a:.2f}-{b:.2f} s)",
            start_s=float(a),
            end_s=float(b),
        )
        for a, b in zip(starts, ends, strict=True)
    ]


def covered_s(time_s: np.ndarray, max_step_s: float, lo_s: float, hi_s: float) -> float:
    """Seconds of ``[lo_s, hi_s]`` covered by sample steps no longer than ``max_step_s``.

    Examples
    --------
    >>> import numpy as np
    >>> covered_s(np.array([0.0, 1.0, 2.0, 6.0, 7.0]), 1.0, 0.0, 7.0)
    3.0
    """
    t = np.asarray(time_s, dtype=float)
    if t.size < 2 or hi_s <= lo_s:
        return 0.0
    a = np.clip(t[:-1], lo_s, hi_s)
    b = np.clip(t[1:], lo_s, hi_s)
    ok = np.diff(t) <= max_step_s
    return float(np.sum((b - a)[ok]))


def spo2_sample_times(session: Session, criteria: Criteria) -> np.ndarray:
    """Times (s) that count as SpO2 samples for the gap rule.

    The samples with a reading plus the file's first and last sample times (its bounds).
    Empty when the session has no SpO2 samples.
    """
    if session.spo2 is None or session.spo2.time_s.size == 0:
        return np.empty(0)
    t = np.asarray(session.spo2.time_s, dtype=float)
    read = mark_oximetry(session.spo2, criteria).reading_time_s
    return np.unique(np.r_[t[0], read, t[-1]])


def stream_gap_findings(session: Session, criteria: Criteria) -> list[QualityFinding]:
    """Gap findings of the CO2 and SpO2 streams by the criteria's gap rule.

    SpO2 samples without a usable reading are not samples
    (:func:`spo2_sample_times`).
    """
    rule = criteria.signal_loss
    out = []
    if session.co2 is not None:
        out.extend(gap_findings(session.co2.time_s, "co2", rule.co2_gap_s))
    if session.spo2 is not None:
        out.extend(gap_findings(spo2_sample_times(session, criteria), "spo2", rule.spo2_gap_s))
    return out
