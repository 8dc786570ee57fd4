"""Apnoea: no capnographic breath for at least the criterion's minimum.

Criterion: no breath on the capnogram for >= 15 s by default (Deitch et al., Ann Emerg Med
2010; Krauss et al., Ann Emerg Med 2016). A breath here is a valid breath whose EtCO2 is above
``criteria.apnoea.breath_min_etco2_mmHg``, or a valid smaller breath that belongs to a rhythmic
run (at least ``rhythm_breaths`` consecutive such small breaths at a rate between
``rhythm_rate_min_per_min`` and ``rhythm_rate_max_per_min``): small rhythmic waves, as in mouth
breathing past a nasal cannula, are breaths; an isolated small deflection, or bumps at the heart
rate, are not. The episode runs from the end of the last breath before the pause to the start of
the next breath (DESIGN.md). A pause that touches a CO2 gap is never apnoea (missing data is
signal_loss), nor is a pause reported as an absent CO2 signal
(:mod:`sedreport.episodes.co2_signal`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.capnography.model import BreathTable
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, touches_gap


@dataclass(frozen=True)
class Pauses:
    """Pauses between counted breaths long enough to be apnoea (session-clock seconds).

    ``resolved`` is False for the pause from the last breath to the end of the CO2 recording.
    """

    start_s: np.ndarray
    end_s: np.ndarray
    resolved: np.ndarray


def rhythmic_run_mask(start_s: np.ndarray, criteria: Criteria) -> np.ndarray:
    """Breaths that belong to a run of ``rhythm_breaths`` breaths at a breathing rhythm.

    Consecutive breaths (given by their start times, s, in order) are linked when their
    start-to-start interval lies between ``60 / rhythm_rate_max_per_min`` and
    ``60 / rhythm_rate_min_per_min`` seconds; a linked chain of at least ``rhythm_breaths``
    breaths is a rhythmic run.
    """
    a = criteria.apnoea
    n = start_s.size
    if n == 0:
        return np.zeros(0, dtype=bool)
    step = np.diff(start_s)
    link = (step >= 60.0 / a.rhythm_rate_max_per_min) & (step <= 60.0 / a.rhythm_rate_min_per_min)
    chain_id = np.r_[0, np.cumsum(~link)]
    sizes = np.bincount(chain_id)
    return sizes[chain_id] >= a.rhythm_breaths


def counted_breaths(breaths: BreathTable, criteria: Criteria) -> np.ndarray:
    """Breaths that end a pause: valid, and above the EtCO2 floor or in a rhythmic run.

    The rhythmic runs are sought among the valid breaths under the floor alone, so two small
    deflections between normal breaths do not borrow the normal breaths' rhythm.
    """
    ok = np.asarray(breaths.valid, dtype=bool)
    with np.errstate(invalid="ignore"):
        above = breaths.etco2_mmHg > criteria.apnoea.breath_min_etco2_mmHg
    rhythmic = np.zeros(ok.shape, dtype=bool)
    idx = np.flatnonzero(ok & ~above)
    rhythmic[idx] = rhythmic_run_mask(breaths.start_s[idx], criteria)
    return ok & (above | rhythmic)


def find_pauses(
    breaths: BreathTable,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
    co2_end_s: float | None = None,
) -> Pauses:
    """Pauses of at least ``apnoea.min_duration_s`` between counted breaths, not touching a gap."""
    counted = np.flatnonzero(counted_breaths(breaths, criteria))
    if counted.size == 0:
        e = np.empty(0)
        return Pauses(e, e, np.empty(0, dtype=bool))
    min_s = criteria.apnoea.min_duration_s
    last_end = breaths.end_s[counted]
    pause_start = last_end[:-1]
    pause_end = breaths.start_s[counted[1:]]
    resolved = np.ones(pause_start.size, dtype=bool)
    if co2_end_s is not None and co2_end_s - last_end[-1] >= min_s:
        pause_start = np.r_[pause_start, last_end[-1]]
        pause_end = np.r_[pause_end, co2_end_s]
        resolved = np.r_[resolved, False]
    keep = (pause_end - pause_start) >= min_s
    keep &= ~touches_gap(pause_start, pause_end, gap_starts, gap_ends)
    return Pauses(pause_start[keep], pause_end[keep], resolved[keep])


def detect_apnoea(
    breaths: BreathTable,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
    co2_end_s: float | None = None,
    absent: list[tuple[float, float]] | None = None,
) -> list[Finding]:
    """Pauses between counted breaths of at least ``criteria.apnoea.min_duration_s``.

    Parameters
    ----------
    breaths : BreathTable
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s); a pause touching one is not apnoea.
    criteria : Criteria
    co2_end_s : float, optional
        Time of the last CO2 sample; a pause from the last breath to it that is long enough is
        reported as an apnoea unresolved at the end of the recording.
    absent : list of (float, float), optional
        Intervals (s) reported as an absent CO2 signal; a pause overlapping one is not apnoea.

    Returns
    -------
    list of Finding
        Kind ``apnoea``, no subtype (a pause longer than ``criteria.apnoea.prolonged_s`` is
        named in the notes and raises the severity tier).
    """
    p = find_pauses(breaths, gap_starts, gap_ends, criteria, co2_end_s)
    keep = np.ones(p.start_s.size, dtype=bool)
    for a, b in absent or ():
        keep &= ~((p.start_s < b) & (p.end_s > a))
    counted = counted_breaths(breaths, criteria)
    invalid_start = breaths.start_s[~counted]
    return [
        _finding(
            float(p.start_s[k]), float(p.end_s[k]), bool(p.resolved[k]), invalid_start, criteria
        )
        for k in np.flatnonzero(keep)
    ]


def _finding(
    a: float, b: float, resolved: bool, invalid_start: np.ndarray, criteria: Criteria
) -> Finding:
    notes = []
    prolonged = (b - a) > criteria.apnoea.prolonged_s
    if not resolved:
        notes.append("The CO2 recording ended during the pause; the end is the last CO2 sample.")
    n_invalid = int(np.count_nonzero((invalid_start > a) & (invalid_start < b)))
    if n_invalid:
        notes.append(
            f"{n_invalid} breath-like deflection(s) inside the pause were not counted as "
            f"breaths (invalid, or EtCO2 <= {criteria.apnoea.breath_min_etco2_mmHg:g} mmHg "
            "and not part of a rhythmic run)."
        )
    if prolonged:
        notes.append(
            f"Prolonged apnoea: longer than {criteria.apnoea.prolonged_s:g} s "
            f"(Mason et al., Br J Anaesth 2012)."
        )
    return Finding("apnoea", None, a, b, tuple(notes), resolved)
