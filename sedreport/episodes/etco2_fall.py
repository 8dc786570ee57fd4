"""EtCO2 fall: sustained EtCO2 below the patient's own baseline (the other side of the change).

The change criteria of procedural-sedation research are two-sided (an absolute change of
>= 10 mmHg from baseline: Burton et al., Acad Emerg Med 2006; >= 10 %: Deitch et al., Ann Emerg
Med 2010; both from memory), and EtCO2 can fall before an apnoea (Krauss et al., Ann Emerg Med
2016; from memory, not checked against the paper). A breath qualifies when EtCO2 <= baseline -
``etco2_fall.fall_from_baseline_mmHg`` (or the percentage, when that option is on). Breaths
inside a low-amplitude stretch do not count (their low EtCO2 is a sampling effect). A finding
runs from the first qualifying breath to the last and spans at least ``min_duration_s``.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import Baseline, BreathTable
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, breath_runs


def fall_mask(breaths: BreathTable, baseline: Baseline, criteria: Criteria) -> np.ndarray:
    """Breaths whose EtCO2 lies the criterion's fall below the baseline (all False w/o one)."""
    c = criteria.etco2_fall
    base = baseline.etco2_mmHg
    et = breaths.etco2_mmHg
    if not np.isfinite(base):
        return np.zeros(et.shape, dtype=bool)
    with np.errstate(invalid="ignore"):
        mask = (base - et) >= c.fall_from_baseline_mmHg
        if np.isfinite(c.fall_from_baseline_pct) and base > 0:
            mask |= (base - et) / base * 100.0 >= c.fall_from_baseline_pct
    return mask


def detect_etco2_fall(
    breaths: BreathTable,
    baseline: Baseline,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
    low_amplitude: list[tuple[float, float]] | None = None,
) -> list[Finding]:
    """Sustained falls of EtCO2 below the baseline (kind ``etco2_fall``).

    Parameters
    ----------
    breaths : BreathTable
    baseline : Baseline
        Without a baseline EtCO2 nothing is assessed.
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s); a run never crosses one.
    criteria : Criteria
    low_amplitude : list of (float, float), optional
        Low-amplitude stretches (s); their breaths are left out.
    """
    if len(breaths) == 0:
        return []
    c = criteria.etco2_fall
    usable = np.asarray(breaths.valid, dtype=bool).copy()
    for a, b in low_amplitude or ():
        usable &= ~((breaths.end_s >= a) & (breaths.start_s <= b))
    mask = fall_mask(breaths, baseline, criteria)
    runs = breath_runs(
        breaths.start_s, breaths.end_s, mask, usable, c.max_interruption_s, gap_starts, gap_ends
    )
    out = []
    for first, last in runs:
        a, b = float(breaths.start_s[first]), float(breaths.end_s[last])
        if b - a < c.min_duration_s:
            continue
        sel = np.zeros(len(breaths), dtype=bool)
        sel[first : last + 1] = True
        sel &= usable & mask
        low = float(np.min(breaths.etco2_mmHg[sel]))
        note = (
            f"EtCO2 fall: {int(sel.sum())} breaths at least "
            f"{c.fall_from_baseline_mmHg:g} mmHg below the patient's baseline of "
            f"{baseline.etco2_mmHg:.0f} mmHg (lowest {low:.0f} mmHg; Burton et al., Acad Emerg "
            "Med 2006). A falling EtCO2 can precede apnoea; check the waveform and the patient."
        )
        out.append(Finding("etco2_fall", None, a, b, (note,)))
    return out
