"""Waveform-shape episodes: rebreathing (raised inspired CO2) and sloped plateau.

A sloped plateau ("prolonged phase III", the shark fin) is a lower-airway shape index; it is
not the upper-airway obstruction of the World SIVA tool (Mason et al., Br J Anaesth 2012).

A sloped plateau is judged against the patient's own baseline shape, never an absolute slope alone:
a COPD patient's sloped plateau is their baseline (DESIGN.md). The shape indices follow the
phase III slope and phase II upstroke of You et al., Eur Respir J 1994 and Hisamuddin et al.,
Int J Emerg Med 2009; the ratios that call a shape abnormal are criteria-file choices.
"""

from __future__ import annotations

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from sedreport.capnography.model import Baseline, BreathTable
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding, breath_runs, touches_gap


def detect_rebreathing(
    breaths: BreathTable, gap_starts: np.ndarray, gap_ends: np.ndarray, criteria: Criteria
) -> list[Finding]:
    """Sustained FiCO2 above ``criteria.rebreathing.fico2_above_mmHg`` (kind ``rebreathing``).

    The episode runs from the first breath followed by a raised inspired baseline to the start
    of the breath that closes the last raised inspiration (its end when no breath follows).
    """
    c = criteria.rebreathing
    if len(breaths) == 0:
        return []
    with np.errstate(invalid="ignore"):
        raised = breaths.fico2_mmHg > c.fico2_above_mmHg
    runs = breath_runs(
        breaths.start_s, breaths.end_s, raised, breaths.valid, c.max_interruption_s,
        gap_starts, gap_ends,
    )  # fmt: skip
    valid_idx = np.flatnonzero(np.asarray(breaths.valid, dtype=bool))
    out = []
    for first, last in runs:
        later = valid_idx[valid_idx > last]
        end = float(breaths.start_s[later[0]]) if later.size else float(breaths.end_s[last])
        start = float(breaths.start_s[first])
        if end - start < c.min_duration_s:
            continue
        peak = float(np.nanmax(breaths.fico2_mmHg[first : last + 1]))
        note = f"Inspired CO2 above {c.fico2_above_mmHg:g} mmHg (highest {peak:.1f} mmHg)."
        out.append(Finding("rebreathing", None, start, end, (note,)))
    return out


def running_median(x: np.ndarray, n: int) -> np.ndarray:
    """Centred running median over ``n`` values (rounded up to odd), NaN-aware, same length.

    Windows are truncated at the ends; a window without a finite value gives NaN.
    """
    x = np.asarray(x, dtype=float)
    half = int(n) // 2
    if half == 0 or x.size == 0:
        return x.copy()
    windows = sliding_window_view(np.pad(x, half, constant_values=np.nan), 2 * half + 1)
    ok = np.isfinite(windows).any(axis=1)
    out = np.full(x.size, np.nan)
    if ok.any():
        out[ok] = np.nanmedian(windows[ok], axis=1)
    return out


def sloped_plateau_mask(
    breaths: BreathTable, baseline: Baseline, criteria: Criteria, smooth: bool = True
) -> np.ndarray:
    """Breaths whose shape departs from the patient's baseline (bool array).

    The obstructive ("shark-fin") shape has both a steeper plateau and a slower upstroke, so
    a valid breath qualifies when, as running medians over ``smoothing_breaths`` valid
    breaths, its normalised phase III slope is at least ``slope_ratio`` times the baseline
    slope (taken as at least ``slope_floor_per_s``) and its phase II upstroke is at least
    ``upstroke_ratio`` times the baseline upstroke. Requiring both keeps noisy, diluted
    breathing (mouth breathing past the cannula) from firing. Without a baseline slope and
    upstroke nothing qualifies. ``smooth=False`` judges each breath's own values.
    """
    c = criteria.sloped_plateau
    mask = np.zeros(len(breaths), dtype=bool)
    base_slope, base_up = baseline.phase3_slope_norm_per_s, baseline.upstroke_s
    if not (np.isfinite(base_slope) and np.isfinite(base_up) and base_up > 0):
        return mask
    valid = np.flatnonzero(np.asarray(breaths.valid, dtype=bool))
    ref = max(float(base_slope), c.slope_floor_per_s)
    n = c.smoothing_breaths if smooth else 1
    slope = running_median(breaths.phase3_slope_norm_per_s[valid], n)
    up = running_median(breaths.upstroke_s[valid], n)
    with np.errstate(invalid="ignore"):
        mask[valid] = (slope >= c.slope_ratio * ref) & (up >= c.upstroke_ratio * base_up)
    return mask


def detect_sloped_plateau(
    breaths: BreathTable,
    baseline: Baseline,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
) -> list[Finding]:
    """Sustained abnormal-shape breaths (kind ``sloped_plateau``), first to last such breath.

    The smoothed indices decide that a run exists; its edges are then dated by the breaths'
    own values: each edge moves outward over adjacent breaths that qualify on their own
    values, stepping over at most one that does not, within half a smoothing window (so a
    noisy breath next to the onset does not delay it).
    """
    c = criteria.sloped_plateau
    if len(breaths) == 0:
        return []
    mask = sloped_plateau_mask(breaths, baseline, criteria)
    raw = sloped_plateau_mask(breaths, baseline, criteria, smooth=False)
    runs = breath_runs(
        breaths.start_s, breaths.end_s, mask, breaths.valid, c.max_interruption_s,
        gap_starts, gap_ends,
    )  # fmt: skip
    valid_idx = np.flatnonzero(np.asarray(breaths.valid, dtype=bool))
    half = int(c.smoothing_breaths) // 2
    out = []
    for run in runs:
        first, last = _widen(run, raw, valid_idx, half, breaths, (gap_starts, gap_ends))
        start, end = float(breaths.start_s[first]), float(breaths.end_s[last])
        if end - start < c.min_duration_s:
            continue
        note = (
            "Waveform shape departs from this patient's own baseline (phase III slope >= "
            f"{c.slope_ratio:g}x and upstroke >= {c.upstroke_ratio:g}x baseline); a shape "
            "index (prolonged phase III), not a diagnosis of airway obstruction."
        )
        out.append(Finding("sloped_plateau", None, start, end, (note,)))
    return out


def _widen(
    run: tuple[int, int],
    raw: np.ndarray,
    valid_idx: np.ndarray,
    half: int,
    breaths: BreathTable,
    gaps: tuple[np.ndarray, np.ndarray],
) -> tuple[int, int]:
    """Move each edge of a run outward over adjacent valid breaths that qualify on their own
    values, stepping over at most one that does not, within ``half`` breaths and never
    across a CO2 gap."""

    def reach(start: int, step: int) -> int:
        best, misses = start, 0
        for k in range(start + step, start + step * (half + 1), step):
            if not 0 <= k < valid_idx.size:
                break
            a, b = sorted((valid_idx[k], valid_idx[k - step]))
            if touches_gap(breaths.end_s[a], breaths.start_s[b], *gaps)[0]:
                break
            if raw[valid_idx[k]]:
                best, misses = k, 0
            else:
                misses += 1
                if misses > 1:
                    break
        return best

    lo = reach(int(np.searchsorted(valid_idx, run[0])), -1)
    hi = reach(int(np.searchsorted(valid_idx, run[1])), +1)
    return int(valid_idx[lo]), int(valid_idx[hi])
