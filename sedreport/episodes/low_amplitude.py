"""Low-amplitude capnogram: small breaths that are not hypoventilation.

On a nasal cannula, mouth breathing (common with a bite block), a displaced cannula or shallow
breathing shrink the sampled waveform. A run of small breaths (amplitude EtCO2 - FiCO2 below
``low_amplitude.amplitude_fraction`` of the patient's usual amplitude, spanning at least
``min_duration_s``) is a low-amplitude finding when all three hold:

* it began abruptly: a valid breath in the ``onset_s`` before the run was at least
  ``1 / amplitude_fraction`` times the run's median amplitude;
* the rate is unchanged: the run's median rate lies within ``rate_change_pct`` % of the minute
  before (else of the baseline rate);
* SpO2 did not fall by ``spo2_fall_pct`` points during the run.

Otherwise (a gradual fall, a falling rate, a falling SpO2) the small breaths remain hypopnoeic
hypoventilation (:mod:`sedreport.episodes.hypoventilation`). The pattern of the shrinking
waveform is from Krauss & Hess, Ann Emerg Med 2007 (from memory); the rule and its numbers
are choices of this tool, stated in the criteria file.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, breath_runs
from sedreport.episodes.co2_signal import spo2_fell
from sedreport.episodes.hypoventilation import baseline_fico2_mmHg
from sedreport.episodes.linking import usable_spo2

CHECK_TEXT = (
    "Low-amplitude capnogram: mouth breathing, a displaced cannula or shallow breathing - "
    "check against the clinical notes."
)
#: The rate before a run is the median over this window, s (choice of this tool).
RATE_REFERENCE_S = 60.0


def usual_amplitude_mmHg(breaths: BreathTable, baseline: Baseline) -> float:
    """The patient's usual waveform amplitude: baseline EtCO2 minus baseline FiCO2, mmHg."""
    return float(baseline.etco2_mmHg - np.nan_to_num(baseline_fico2_mmHg(breaths, baseline)))


def breath_amplitude_mmHg(breaths: BreathTable) -> np.ndarray:
    """EtCO2 - FiCO2 of each breath, mmHg (FiCO2 taken as 0 where not measured)."""
    return breaths.etco2_mmHg - np.nan_to_num(breaths.fico2_mmHg)


def _in_window(breaths: BreathTable, lo: float, hi: float) -> np.ndarray:
    return np.asarray(breaths.valid, dtype=bool) & (breaths.start_s >= lo) & (breaths.start_s < hi)


def is_abrupt(breaths: BreathTable, first: int, run_amp_mmHg: float, criteria: Criteria) -> bool:
    """True when a breath in the ``onset_s`` before breath ``first`` was 1/fraction times larger."""
    c = criteria.low_amplitude
    s0 = float(breaths.start_s[first])
    before = breath_amplitude_mmHg(breaths)[_in_window(breaths, s0 - c.onset_s, s0)]
    return before.size > 0 and float(before.max()) >= run_amp_mmHg / c.amplitude_fraction


def rate_unchanged(breaths: BreathTable, sel: np.ndarray, baseline: Baseline, criteria: Criteria):
    """True when the median rate of ``sel`` is within ``rate_change_pct`` of the minute before."""
    rr = breaths.rr_per_min[sel]
    rr = rr[np.isfinite(rr)]
    s0 = float(breaths.start_s[np.flatnonzero(sel)[0]])
    ref = breaths.rr_per_min[_in_window(breaths, s0 - RATE_REFERENCE_S, s0)]
    ref = ref[np.isfinite(ref)]
    ref_rr = float(np.median(ref)) if ref.size else baseline.rr_per_min
    if rr.size == 0 or not np.isfinite(ref_rr) or ref_rr <= 0:
        return True
    change_pct = abs(float(np.median(rr)) / ref_rr - 1.0) * 100.0
    return change_pct <= criteria.low_amplitude.rate_change_pct


def outside_stretches(breaths: BreathTable, spans: list[tuple[float, float]]) -> BreathTable:
    """The breath table with the breaths of the given stretches (s) marked not valid.

    Shape and level detectors (obstruction, EtCO2 fall) use it: inside a low-amplitude stretch
    the sampled EtCO2 and plateau shape say how the gas reached the cannula, not how the
    patient breathed.
    """
    valid = np.asarray(breaths.valid, dtype=bool).copy()
    for a, b in spans:
        valid &= ~((breaths.end_s >= a) & (breaths.start_s <= b))
    return dataclasses.replace(breaths, valid=valid)


def small_breath_runs(
    breaths: BreathTable,
    baseline: Baseline,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
) -> tuple[list[tuple[int, int]], np.ndarray]:
    """Runs of small valid breaths spanning at least ``min_duration_s`` and the small mask."""
    c = criteria.low_amplitude
    usual = usual_amplitude_mmHg(breaths, baseline)
    if len(breaths) == 0 or not (np.isfinite(usual) and usual > 0):
        return [], np.zeros(len(breaths), dtype=bool)
    with np.errstate(invalid="ignore"):
        small = breath_amplitude_mmHg(breaths) < c.amplitude_fraction * usual
    runs = breath_runs(
        breaths.start_s,
        breaths.end_s,
        small,
        breaths.valid,
        c.max_interruption_s,
        gap_starts,
        gap_ends,
    )
    long = [(f, z) for f, z in runs if breaths.end_s[z] - breaths.start_s[f] >= c.min_duration_s]
    return long, small


def detect_low_amplitude(
    breaths: BreathTable,
    baseline: Baseline,
    trends: Trends,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
) -> list[Finding]:
    """Low-amplitude stretches (kind ``low_amplitude``), from the first small breath to the last.

    Parameters
    ----------
    breaths : BreathTable
    baseline : Baseline
        The patient's usual amplitude comes from its window; without it nothing is assessed.
    trends : Trends
        Supplies the cleaned SpO2.
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s); a stretch never crosses one.
    criteria : Criteria
    """
    runs, small = small_breath_runs(breaths, baseline, gap_starts, gap_ends, criteria)
    c = criteria.low_amplitude
    spo2_t, spo2_v = usable_spo2(trends)
    usual = usual_amplitude_mmHg(breaths, baseline)
    amp = breath_amplitude_mmHg(breaths)
    out = []
    for first, last in runs:
        sel = np.zeros(len(breaths), dtype=bool)
        sel[first : last + 1] = True
        sel &= np.asarray(breaths.valid, dtype=bool) & small
        run_amp = float(np.median(amp[sel]))
        a, b = float(breaths.start_s[first]), float(breaths.end_s[last])
        if not is_abrupt(breaths, first, run_amp, criteria):
            continue
        if not rate_unchanged(breaths, sel, baseline, criteria):
            continue
        if spo2_fell(spo2_t, spo2_v, a, b, c.spo2_fall_pct):
            continue
        note = (
            f"{CHECK_TEXT} {int(sel.sum())} breaths with a median amplitude of {run_amp:.0f} mmHg "
            f"({run_amp / usual:.0%} of the usual {usual:.0f} mmHg), begun abruptly at an "
            "unchanged rate, SpO2 not falling: not read as hypoventilation."
        )
        out.append(Finding("low_amplitude", None, a, b, (note,)))
    return out
