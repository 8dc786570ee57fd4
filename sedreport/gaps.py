"""Gaps in a sampled stream: the one rule, applied with the active criteria's threshold.

A step between consecutive samples longer than ``max_step_s`` is a gap (DESIGN.md: never
bridged by interpolation). The threshold is never a constant here: callers pass
``criteria.signal_loss.co2_gap_s`` or ``spo2_gap_s``, so that a criteria file that changes it
changes segmentation, episodes, coverage and drawing alike.
"""

from __future__ import annotations

import numpy as np

from sedreport.session import QualityFinding


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
