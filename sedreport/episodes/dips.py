"""SpO2 dips shorter than the desaturation listing minimum: never dropped silently.

A desaturation episode needs ``desaturation.min_duration_s`` below the threshold (Cravero et
al., Pediatrics 2006). The World SIVA tool (Mason et al., Br J Anaesth 2012, as reproduced in
Trials 2022 Table 4) makes SpO2 < 75 % at any time a sentinel descriptor whatever its
duration, so a shorter dip that goes below ``desaturation.severe_below_pct`` is a desaturation
episode here. A shorter dip that stays at or above that level is listed as a brief dip in the
record and the JSON, not as an episode (choice of this tool: the listing minimum guards against
oximeter noise). Runs are taken on the artefact-cleaned trend, from the first sample below the
threshold to the first sample back at or above it (DESIGN.md).

A dip is a fall and a recovery that were both seen: a short run that starts at the first sample
after a gap (by the criteria's ``signal_loss.spo2_gap_s``) or at the first sample of the
recording, or that has not recovered by the last sample, is listed as a brief dip with that
said, never made a sentinel episode (on the real oximetry recordings a probe taken off reads
0-1 % for a few seconds after a gap; choice of this tool).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.capnography.model import Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.episodes.linking import usable_spo2


@dataclass(frozen=True)
class Dip:
    """A run of SpO2 below the desaturation threshold (session-clock seconds, percent)."""

    start_s: float
    end_s: float
    duration_s: float
    min_spo2_pct: float
    resolved: bool
    onset_seen: bool = True

    @property
    def observed(self) -> bool:
        """Both the fall (a usable sample above the threshold just before, no gap between) and
        the recovery were recorded."""
        return self.onset_seen and self.resolved


def spo2_runs(trends: Trends, below_pct: float, gap_s: float = np.inf) -> tuple[Dip, ...]:
    """Every run of usable SpO2 samples below ``below_pct``, whatever its length; its onset is
    seen when a usable sample precedes it by at most ``gap_s`` seconds.

    Examples
    --------
    >>> import numpy as np
    >>> from sedreport.capnography.model import Trends
    >>> t = np.arange(0.0, 40.0, 2.0)
    >>> v = np.where((t >= 10) & (t < 28), 72.0, 97.0)
    >>> tr = Trends(*(np.empty(0),) * 5, t, v, np.full(t.size, 70.0), np.zeros(t.size, bool), 60.0)
    >>> [(d.start_s, d.end_s, d.min_spo2_pct) for d in spo2_runs(tr, 90.0)]
    [(10.0, 28.0, 72.0)]
    """
    t, v = usable_spo2(trends)
    if t.size == 0:
        return ()
    below = v < below_pct
    edges = np.diff(np.r_[0, below.astype(np.int8), 0])
    first = np.flatnonzero(edges == 1)
    after = np.flatnonzero(edges == -1)
    out = []
    for a, b in zip(first, after, strict=True):
        resolved = bool(b < t.size)
        end = float(t[b]) if resolved else float(t[-1])
        low = float(v[a:b].min())
        seen = bool(a > 0 and t[a] - t[a - 1] <= gap_s)
        out.append(Dip(float(t[a]), end, end - float(t[a]), low, resolved, seen))
    return tuple(out)


def _short(trends: Trends, criteria: Criteria) -> tuple[Dip, ...]:
    c = criteria.desaturation
    runs = spo2_runs(trends, c.spo2_below_pct, criteria.signal_loss.spo2_gap_s)
    return tuple(d for d in runs if d.duration_s < c.min_duration_s)


def deep_dip_findings(trends: Trends, criteria: Criteria) -> list[Finding]:
    """Desaturation findings for observed dips shorter than the listing minimum that go below
    ``desaturation.severe_below_pct`` (the complement of the desaturation detector)."""
    c = criteria.desaturation
    note = (
        f"A brief deep dip: SpO2 below {c.severe_below_pct:g} % for less than the "
        f"{c.min_duration_s:g} s listing minimum; listed whatever its duration (World SIVA tool)."
    )
    return [
        Finding("desaturation", None, d.start_s, d.end_s, (note,), d.resolved)
        for d in _short(trends, criteria)
        if d.min_spo2_pct < c.severe_below_pct and d.observed
    ]


def brief_dips(trends: Trends, criteria: Criteria) -> tuple[Dip, ...]:
    """Dips shorter than the listing minimum that stay at or above the severe level, or whose
    fall or recovery was not recorded: listed in the record and the JSON, not episodes."""
    severe = criteria.desaturation.severe_below_pct
    return tuple(d for d in _short(trends, criteria) if d.min_spo2_pct >= severe or not d.observed)
