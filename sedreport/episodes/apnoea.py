"""Apnoea: no capnographic breath for at least the criterion's minimum.

Criterion: no breath on the capnogram for >= 15 s by default (Deitch et al., Ann Emerg Med
2010; Krauss et al., Ann Emerg Med 2016). A breath here is a valid breath whose EtCO2 is above
``criteria.apnoea.breath_min_etco2_mmHg``. The episode runs from the end of the last breath
before the pause to the start of the next breath (DESIGN.md). A pause that touches a CO2 gap
is never apnoea: missing data is signal_loss.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import BreathTable
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, touches_gap


def detect_apnoea(
    breaths: BreathTable,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
    co2_end_s: float | None = None,
) -> list[Finding]:
    """Pauses between valid breaths of at least ``criteria.apnoea.min_duration_s``.

    Parameters
    ----------
    breaths : BreathTable
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s); a pause touching one is not apnoea.
    criteria : Criteria
    co2_end_s : float, optional
        Time of the last CO2 sample; a pause from the last breath to it that is long enough is
        reported as an apnoea unresolved at the end of the recording.

    Returns
    -------
    list of Finding
        Kind ``apnoea``, no subtype (a pause longer than ``criteria.apnoea.prolonged_s`` is
        named in the notes and raises the severity tier).
    """
    ok = np.asarray(breaths.valid, dtype=bool)
    with np.errstate(invalid="ignore"):
        counted = ok & (breaths.etco2_mmHg > criteria.apnoea.breath_min_etco2_mmHg)
    valid = np.flatnonzero(counted)
    if valid.size == 0:
        return []
    min_s = criteria.apnoea.min_duration_s
    last_end = breaths.end_s[valid]
    next_start = breaths.start_s[valid[1:]]
    pause_start = last_end[:-1]
    pause_end = next_start
    resolved = np.ones(pause_start.size, dtype=bool)
    if co2_end_s is not None and co2_end_s - last_end[-1] >= min_s:
        pause_start = np.r_[pause_start, last_end[-1]]
        pause_end = np.r_[pause_end, co2_end_s]
        resolved = np.r_[resolved, False]
    long_enough = (pause_end - pause_start) >= min_s
    clean = ~touches_gap(pause_start, pause_end, gap_starts, gap_ends)
    keep = np.flatnonzero(long_enough & clean)
    invalid_start = breaths.start_s[~counted]
    out = []
    for k in keep:
        a, b = float(pause_start[k]), float(pause_end[k])
        out.append(_finding(a, b, bool(resolved[k]), invalid_start, criteria))
    return out


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
            f"breaths (invalid, or EtCO2 <= {criteria.apnoea.breath_min_etco2_mmHg:g} mmHg)."
        )
    if prolonged:
        notes.append(
            f"Prolonged apnoea: longer than {criteria.apnoea.prolonged_s:g} s "
            f"(Mason et al., Br J Anaesth 2012)."
        )
    return Finding("apnoea", None, a, b, tuple(notes), resolved)
