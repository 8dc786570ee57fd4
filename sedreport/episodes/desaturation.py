"""Desaturation: SpO2 below the criterion for at least its minimum duration.

Criterion: SpO2 < 90 % (Cravero et al., Pediatrics 2006 counted < 90 % for > 30 s; the tiers of
Mason et al., Br J Anaesth 2012 grade it). The episode runs from the first sample below the
threshold to the first sample back at or above it (DESIGN.md).

Samples without a reading (NaN in the cleaned trend and not marked as artefact: the probe's
``0``, blanks, impossible values) are never bridged over: a low run ends at the first of them,
unresolved, and a low run after them is a new episode. So does a step between readings longer
than the gap rule's ``signal_loss.spo2_gap_s``. Readings marked by an artefact rule (a spike,
a start-up reading, a flat line) are skipped: they count neither as low nor as recovery.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding

_LOW, _OK, _NONE, _SKIP = 0, 1, 2, 3


def _states(trends: Trends, threshold_pct: float, gap_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Times and states (low / ok / no reading) of every sample that is not an artefact.

    A sample step longer than ``gap_s`` (the gap rule) adds a no-reading state after the
    sample before it.
    """
    t = np.asarray(trends.spo2_time_s, dtype=float)
    v = np.asarray(trends.spo2_pct, dtype=float)
    state = np.where(np.isfinite(v), np.where(v < threshold_pct, _LOW, _OK), _NONE)
    state[np.asarray(trends.spo2_artefact, dtype=bool)] = _SKIP
    gap = np.flatnonzero(np.diff(t) > gap_s)
    if gap.size:
        t = np.insert(t, gap + 1, t[gap] + min(gap_s, 1.0))
        state = np.insert(state, gap + 1, _NONE)
    keep = state != _SKIP
    return t[keep], state[keep]


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
        An episode cut short by a loss of reading is not resolved and says so in its notes.
    """
    c = criteria.desaturation
    t, state = _states(trends, c.spo2_below_pct, criteria.signal_loss.spo2_gap_s)
    if not np.any(state != _NONE):
        return []
    low = state == _LOW
    edges = np.diff(np.r_[0, low.astype(np.int8), 0])
    first = np.flatnonzero(edges == 1)
    after = np.flatnonzero(edges == -1)  # first sample not low, or t.size
    reading = np.flatnonzero(state != _NONE)
    out = []
    for a, b in zip(first, after, strict=True):
        resolved = b < t.size and state[b] == _OK
        start = float(t[a])
        end = float(t[b]) if b < t.size else float(t[b - 1])
        if end - start < c.min_duration_s:
            continue
        notes = []
        if a == reading[0]:
            notes.append("SpO2 was already below the threshold at the first usable sample.")
        elif state[a - 1] == _NONE:
            notes.append("SpO2 was already below the threshold when the reading returned.")
        if b < t.size and state[b] == _NONE:
            notes.append(
                "The SpO2 reading was lost (no reading) before SpO2 recovered; the episode "
                "ends there and is not joined to a low reading after the loss."
            )
        elif not resolved:
            notes.append("SpO2 had not recovered by the last usable sample; that is the end.")
        out.append(Finding("desaturation", None, start, end, tuple(notes), bool(resolved)))
    return out
