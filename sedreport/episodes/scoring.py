"""Scoring detected episodes against planted truth (synthetic demo sessions only).

Used by the end-to-end tests and ``benchmarks/bench_detection.py``; a real case has no truth.
"""

from __future__ import annotations

from dataclasses import dataclass

from sedreport.episodes.model import Episode


@dataclass(frozen=True)
class EpisodeScore:
    """Matches of one session.

    Attributes
    ----------
    hits : list of (dict, Episode)
        Planted episode and the detected one matched to it (same kind, onset within the
        tolerance, nearest first).
    misses : list of dict
        Planted episodes without a match.
    false_positives : list of Episode
        Detected episodes matched to nothing.
    """

    hits: list
    misses: list
    false_positives: list

    @property
    def onset_errors_s(self) -> list[float]:
        """Detected minus planted onset of each hit, seconds."""
        return [float(e.start_s - t["start_s"]) for t, e in self.hits]


def match_episodes(
    episodes: tuple[Episode, ...] | list[Episode], planted: list[dict], onset_tol_s: float = 3.0
) -> EpisodeScore:
    """Greedy one-to-one matching of detected to planted episodes by kind and onset.

    Parameters
    ----------
    episodes : sequence of Episode
    planted : list of dict
        Truth entries with ``kind`` and ``start_s`` (seconds on the session clock).
    onset_tol_s : float
        Largest onset difference that still counts as the same episode, seconds.
    """
    pairs = sorted(
        (abs(e.start_s - t["start_s"]), i, j)
        for i, t in enumerate(planted)
        for j, e in enumerate(episodes)
        if e.kind == t["kind"] and abs(e.start_s - t["start_s"]) <= onset_tol_s
    )
    used_t: set[int] = set()
    used_e: set[int] = set()
    hits = []
    for _, i, j in pairs:
        if i not in used_t and j not in used_e:
            used_t.add(i)
            used_e.add(j)
            hits.append((planted[i], episodes[j]))
    hits.sort(key=lambda h: h[0]["start_s"])
    misses = [t for i, t in enumerate(planted) if i not in used_t]
    fps = [e for j, e in enumerate(episodes) if j not in used_e]
    return EpisodeScore(hits, misses, fps)
