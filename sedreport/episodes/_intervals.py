"""Private interval helpers shared by the detectors: gap contact, runs of qualifying breaths."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Finding:
    """A detector's raw result before linking: kind, subtype and session-clock times (s).

    ``resolved`` is False when the recording ended before the episode did.
    """

    kind: str
    subtype: str | None
    start_s: float
    end_s: float
    notes: tuple[str, ...] = ()
    resolved: bool = True


def touches_gap(
    start_s: np.ndarray, end_s: np.ndarray, gap_starts: np.ndarray, gap_ends: np.ndarray
) -> np.ndarray:
    """True where the closed interval [start_s, end_s] meets any (merged, sorted) gap."""
    a = np.atleast_1d(np.asarray(start_s, dtype=float))
    b = np.atleast_1d(np.asarray(end_s, dtype=float))
    if gap_starts.size == 0:
        return np.zeros(a.shape, dtype=bool)
    j = np.searchsorted(gap_ends, a, side="left")  # first gap ending at or after a
    inside = j < gap_starts.size
    hit = np.zeros(a.shape, dtype=bool)
    hit[inside] = gap_starts[j[inside]] <= b[inside]
    return hit


def breath_runs(
    start_s: np.ndarray,
    end_s: np.ndarray,
    qualifies: np.ndarray,
    valid: np.ndarray,
    max_interruption_s: float,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
) -> list[tuple[int, int]]:
    """Runs of qualifying valid breaths, as (first, last) indices into the breath arrays.

    Invalid breaths are ignored. Non-qualifying valid breaths that span at most
    ``max_interruption_s`` (from the start of the first to the end of the last of them) do not
    split a run; a CO2 gap always does.
    """
    idx = np.flatnonzero(np.asarray(valid, dtype=bool))
    if idx.size == 0:
        return []
    q = np.asarray(qualifies, dtype=bool)[idx]
    s, e = start_s[idx], end_s[idx]
    gap_after = np.r_[touches_gap(e[:-1], s[1:], gap_starts, gap_ends), False]
    edges = np.diff(np.r_[0, q.astype(np.int8), 0])
    seg_first = np.flatnonzero(edges == 1)
    seg_last = np.flatnonzero(edges == -1) - 1
    segments: list[list[int]] = []
    for f, last in zip(seg_first, seg_last, strict=True):
        cuts = np.flatnonzero(gap_after[f:last])  # gap between position k and k+1
        bounds = np.r_[f, f + cuts + 1]
        ends = np.r_[f + cuts, last]
        segments.extend([int(a), int(b)] for a, b in zip(bounds, ends, strict=True))
    merged: list[list[int]] = []
    for seg in segments:
        if merged:
            prev = merged[-1]
            between_first, between_last = prev[1] + 1, seg[0] - 1
            gap_inside = bool(gap_after[prev[1] : seg[0]].any())
            span = e[between_last] - s[between_first] if between_last >= between_first else 0.0
            if not gap_inside and span <= max_interruption_s:
                prev[1] = seg[1]
                continue
        merged.append(seg)
    return [(int(idx[a]), int(idx[b])) for a, b in merged]
