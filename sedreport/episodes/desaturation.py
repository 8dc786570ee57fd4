"""Desaturation: SpO2 below the criterion for at least its minimum duration.

Criterion: SpO2 < 90 % (Cravero et al., Pediatrics 2006 counted < 90 % for > 30 s; the tiers of
Mason et al., Br J Anaesth 2012 grade it). The episode runs from the first sample below the
threshold to the first sample back at or above it (DESIGN.md). Artefact samples (NaN in the
cleaned trend) are excluded and never count as recovery.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding


def detect_desaturation(trends: Trends, criteria: Criteria) -> list[Finding]:
    """Runs of SpO2 < ``criteria.desaturation.spo2_below_pct`` lasting >= ``min_duration_s``.

    Parameters
    ----------
    trends : Trends
        Uses the cleaned oximeter trend (``spo2_time_s``, ``spo2_pct``, ``spo2_artefact``).
    criteria : Criteria

    Returns
    -------
    list of Finding
        Kind ``desaturation``, no subtype (the severity tier grades depth and duration).
    """
    c = criteria.desaturation
    t = np.asarray(trends.spo2_time_s, dtype=float)
    v = np.asarray(trends.spo2_pct, dtype=float)
    usable = np.isfinite(v) & ~np.asarray(trends.spo2_artefact, dtype=bool)
    t, v = t[usable], v[usable]
    if t.size == 0:
        return []
    below = v < c.spo2_below_pct
    edges = np.diff(np.r_[0, below.astype(np.int8), 0])
    first = np.flatnonzero(edges == 1)
    after = np.flatnonzero(edges == -1)  # first sample back at/above, or t.size
    out = []
    for a, b in zip(first, after, strict=True):
        resolved = b < t.size
        start = float(t[a])
        end = float(t[b]) if resolved else float(t[-1])
        if end - start < c.min_duration_s:
            continue
        notes = []
        if a == 0:
            notes.append("SpO2 was already below the threshold at the first usable sample.")
        if not resolved:
            notes.append("SpO2 had not recovered by the last usable sample; that is the end.")
        out.append(Finding("desaturation", None, start, end, tuple(notes), bool(resolved)))
    return out
