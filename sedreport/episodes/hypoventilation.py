"""Hypoventilation: sustained runs of hypercapnic/slow breaths or of shrinking breaths.

Two patterns (Krauss & Hess, Ann Emerg Med 2007):

* bradypnoeic (rising EtCO2): a breath qualifies when EtCO2 >= ``etco2_high_mmHg`` or rises
  >= ``rise_from_baseline_mmHg`` above the patient's baseline (Burton et al., Acad Emerg Med
  2006), or >= ``rise_from_baseline_pct`` % when that stricter option is on (Deitch et al., Ann
  Emerg Med 2010). The run's subtype is ``bradypnoeic`` when the median rate of its qualifying
  breaths is below ``bradypnoea_rr_per_min`` (Conway et al., J Clin Monit Comput 2019), else
  ``hypercapnic`` (raised CO2 at a normal rate). A slow rate alone does not start an episode.
* hypopnoeic: waveform amplitude (EtCO2 - FiCO2) below ``hypopnoea_amplitude_fraction`` of the
  baseline amplitude while EtCO2 is not raised, and more than a small waveform: a run that
  overlaps a low-amplitude stretch (an abrupt fall at an unchanged rate with SpO2 not falling,
  :mod:`sedreport.episodes.low_amplitude`) is reported there, not here.

An episode runs from the start of the first qualifying breath to the end of the last and must
span at least ``min_duration_s``.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import Baseline, BreathTable
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, breath_runs


def baseline_fico2_mmHg(breaths: BreathTable, baseline: Baseline) -> float:
    """Median FiCO2 of the valid breaths inside the baseline window (NaN when none)."""
    lo, hi = baseline.window_s
    sel = np.asarray(breaths.valid, dtype=bool) & (breaths.start_s >= lo) & (breaths.end_s <= hi)
    vals = breaths.fico2_mmHg[sel]
    vals = vals[np.isfinite(vals)]
    return float(np.median(vals)) if vals.size else float("nan")


def hypercapnic_mask(breaths: BreathTable, baseline: Baseline, criteria: Criteria) -> np.ndarray:
    """Breaths that qualify for bradypnoeic/hypercapnic hypoventilation (bool array)."""
    c = criteria.hypoventilation
    et = breaths.etco2_mmHg
    base = baseline.etco2_mmHg
    with np.errstate(invalid="ignore"):
        mask = et >= c.etco2_high_mmHg
        if np.isfinite(base):
            mask |= (et - base) >= c.rise_from_baseline_mmHg
            if np.isfinite(c.rise_from_baseline_pct) and base > 0:
                mask |= (et - base) / base * 100.0 >= c.rise_from_baseline_pct
    return mask


def hypopnoeic_mask(
    breaths: BreathTable, baseline: Baseline, criteria: Criteria, hypercapnic: np.ndarray
) -> np.ndarray:
    """Breaths with a shrunken waveform and EtCO2 not raised (bool array; all False w/o baseline)."""
    base_amp = baseline.etco2_mmHg - np.nan_to_num(baseline_fico2_mmHg(breaths, baseline))
    if not (np.isfinite(base_amp) and base_amp > 0):
        return np.zeros(len(breaths), dtype=bool)
    amp = breaths.etco2_mmHg - breaths.fico2_mmHg
    with np.errstate(invalid="ignore"):
        small = amp < criteria.hypoventilation.hypopnoea_amplitude_fraction * base_amp
    return small & ~hypercapnic


def detect_hypoventilation(
    breaths: BreathTable,
    baseline: Baseline,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
    low_amplitude: list[tuple[float, float]] | None = None,
) -> list[Finding]:
    """Sustained hypoventilation runs (kind ``hypoventilation``).

    Parameters
    ----------
    breaths : BreathTable
    baseline : Baseline
        The patient's own pre-sedation EtCO2; without it only the absolute EtCO2 criterion
        applies and the hypopnoeic pattern is not assessed.
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s); a run never crosses one.
    criteria : Criteria
    low_amplitude : list of (float, float), optional
        Low-amplitude stretches (s); a hypopnoeic run overlapping one is not reported.
    """
    if len(breaths) == 0:
        return []
    c = criteria.hypoventilation
    hyper = hypercapnic_mask(breaths, baseline, criteria)
    hypo = hypopnoeic_mask(breaths, baseline, criteria, hyper)
    out: list[Finding] = []
    for mask, pattern in ((hyper, "hyper"), (hypo, "hypopnoeic")):
        runs = breath_runs(
            breaths.start_s,
            breaths.end_s,
            mask,
            breaths.valid,
            c.max_interruption_s,
            gap_starts,
            gap_ends,
        )
        for first, last in runs:
            start, end = float(breaths.start_s[first]), float(breaths.end_s[last])
            if end - start < c.min_duration_s:
                continue
            if pattern == "hypopnoeic" and any(
                start < b and end > a for a, b in low_amplitude or ()
            ):
                continue
            out.append(_finding(breaths, mask, first, last, pattern, baseline, criteria))
    return out


def _finding(
    breaths: BreathTable,
    mask: np.ndarray,
    first: int,
    last: int,
    pattern: str,
    baseline: Baseline,
    criteria: Criteria,
) -> Finding:
    c = criteria.hypoventilation
    sel = np.zeros(len(breaths), dtype=bool)
    sel[first : last + 1] = True
    sel &= np.asarray(breaths.valid, dtype=bool) & mask
    start, end = float(breaths.start_s[first]), float(breaths.end_s[last])
    if pattern == "hypopnoeic":
        note = (
            f"{int(sel.sum())} breaths with a waveform below "
            f"{c.hypopnoea_amplitude_fraction:g} of the baseline amplitude and EtCO2 not raised."
        )
        return Finding("hypoventilation", "hypopnoeic", start, end, (note,))
    rr = breaths.rr_per_min[sel]
    rr = rr[np.isfinite(rr)]
    slow = rr.size > 0 and float(np.median(rr)) < c.bradypnoea_rr_per_min
    base = baseline.etco2_mmHg
    base_txt = f"baseline {base:.0f} mmHg" if np.isfinite(base) else "no baseline available"
    note = (
        f"{int(sel.sum())} qualifying breaths (EtCO2 >= {c.etco2_high_mmHg:g} mmHg, a rise >= "
        f"{c.rise_from_baseline_mmHg:g} mmHg over the patient's own baseline; {base_txt}); "
        f"median rate {np.median(rr) if rr.size else float('nan'):.1f}/min."
    )
    return Finding("hypoventilation", "bradypnoeic" if slow else "hypercapnic", start, end, (note,))
