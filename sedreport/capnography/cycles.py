"""Hysteresis cycles of the raw capnogram: the first half of breath detection.

The method (common practice in time capnography; the numbers are this project's choices,
stated in :class:`DetectionSettings`):

1. The trace is split into segments at gaps (a sample step longer than the active
   criteria's ``signal_loss.co2_gap_s``) and at non-finite samples; no breath spans a segment boundary.
2. Each segment is smoothed lightly with a centred moving mean (0.15 s), which removes white
   noise and single-sample spikes but keeps the upstroke.
3. The patient's own levels are tracked in 1 s blocks: the inspired baseline is the 10th
   percentile of the block minima over a centred 30 s window, the plateau the smaller of
   the 80th percentiles of the block maxima over the 15 s before and the 15 s after, so the
   thresholds follow baseline drift, nasal-cannula dilution (plateaus of 10-20 mmHg) and an
   abrupt drop of the plateau (mouth breathing) from its first breath.
4. Hysteresis: a breath begins when the smoothed CO2 rises above
   ``baseline + max(0.35 * amplitude, 3 mmHg)`` and ends when it falls below
   ``baseline + max(0.3 * amplitude, 1.5 mmHg)``. The high level sits low enough that the
   shallow and partial breaths of clinical nasal capnography (40 % of the usual height) are
   found; the low level is kept so that a dip between the humps of one expiration does not
   split it. The absolute floors mean that noise or cardiogenic ripples on a flat trace
   cannot make breaths.
5. Cycles separated by less than 0.15 s below the low threshold are merged (a ripple on the
   plateau does not split a breath); cycles shorter than 0.1 s above it, or rising less than
   5 mmHg from the inspired baseline on either side, are not breaths (cardiogenic bumps of
   1-3 mmHg with sensor noise on top stay under it; mouth breathing gives 8-15 mmHg).

The cycles are measured into breaths by :mod:`sedreport.capnography.metrics`;
:func:`sedreport.capnography.breaths.find_breaths` runs both.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.capnography.filters import moving_mean, running_percentile
from sedreport.session import Capnogram


@dataclass(frozen=True)
class DetectionSettings:
    """Tuning of the breath detector, in physical units (converted to samples in one place).

    These are signal-processing choices of this project (common practice in capnogram
    processing, values chosen and checked here on synthetic traces), not clinical criteria;
    the clinical thresholds live in the criteria files.

    Attributes
    ----------
    smooth_s : float
        Centred moving-mean length, s.
    block_s, level_window_s : float
        Block length and centred window for the running baseline/plateau percentiles, s.
    baseline_pct, plateau_pct : float
        Percentiles of block minima / maxima taken as inspired baseline / plateau.
    high_frac, low_frac : float
        Hysteresis levels as fractions of the running amplitude above the baseline.
    high_floor_mmHg, low_floor_mmHg : float
        Smallest distance of the high / low level above the baseline, mmHg.
    min_low_s : float
        Shorter dips below the low level are merged into the surrounding breath, s.
    min_high_s : float
        Shorter excursions above the high level are not breaths, s.
    min_amplitude_mmHg : float
        Smallest rise above the inspired baseline (on both sides) that is a breath, mmHg.
    onset_frac, onset_min_frac : float
        The breath start / end level lies twice the baseline noise SD above the inspired
        baseline, clipped to between these fractions of the rise (3 % and 10 %); the
        upstroke time starts at the ``onset_frac`` (10 %) level.
    upper_frac : float
        Upper level of the upstroke time and plateau end (90 % level).
    etco2_window_s, etco2_lead_s : float
        EtCO2 is the median of the raw samples in a window of this length ending this long
        before the plateau end, s.
    min_duration_s : float
        Breaths shorter than this (start to end) are marked invalid ``short``, s.
    low_plateau_mmHg : float
        Breaths whose EtCO2 exceeds FiCO2 by less than this are marked ``low_plateau``, mmHg.
    clip_min_s : float
        A breath holding the trace maximum at least this long is marked ``clipped``, s.
    heart_rate_interval_s : float
        A breath starting less than this after the previous one and less than this before the
        next (in one segment), and rises less than ``heart_rate_max_rise_mmHg``, is at the
        heart rate, not a breathing rate, and is marked ``heart_rate`` (cardiogenic
        oscillations); 1.35 s is 44/min, above adult breathing rates (common practice) and
        below the 50-120/min of a heart, s.
    heart_rate_max_rise_mmHg : float
        Largest rise of such a deflection (cardiogenic oscillations of up to 12 mmHg are seen
        on recorded nasal traces), mmHg.
    """

    smooth_s: float = 0.15
    block_s: float = 1.0
    level_window_s: float = 30.0
    baseline_pct: float = 10.0
    plateau_pct: float = 80.0
    high_frac: float = 0.35
    low_frac: float = 0.3
    high_floor_mmHg: float = 3.0
    low_floor_mmHg: float = 1.5
    min_low_s: float = 0.15
    min_high_s: float = 0.1
    min_amplitude_mmHg: float = 5.0
    onset_frac: float = 0.1
    onset_min_frac: float = 0.03
    upper_frac: float = 0.9
    etco2_window_s: float = 0.2
    etco2_lead_s: float = 0.05
    min_duration_s: float = 0.5
    low_plateau_mmHg: float = 6.0
    clip_min_s: float = 0.3
    heart_rate_interval_s: float = 1.35
    heart_rate_max_rise_mmHg: float = 12.0


DEFAULT_SETTINGS = DetectionSettings()


@dataclass(frozen=True)
class Cycles:
    """Hysteresis cycles of the whole trace, as global sample indices.

    ``rise[k]`` is the first sample above the high level, ``fall[k]`` the first sample back
    below the low level (``seg_hi`` when the segment ends first); ``seg_lo``/``seg_hi`` bound
    the segment of cycle k; ``cut_start``/``cut_end`` mark cycles cut by a segment edge.
    """

    rise: np.ndarray
    fall: np.ndarray
    seg_lo: np.ndarray
    seg_hi: np.ndarray
    cut_start: np.ndarray
    cut_end: np.ndarray


def split_segments(time_s: np.ndarray, co2_mmHg: np.ndarray, gap_s: float) -> list[tuple[int, int]]:
    """Half-open index ranges of the gap-free, finite stretches of the trace.

    A step longer than ``gap_s`` (seconds; the criteria's ``signal_loss.co2_gap_s``) or a
    non-finite sample ends a segment; the non-finite samples themselves belong to no segment.
    """
    finite = np.isfinite(co2_mmHg) & np.isfinite(time_s)
    n = co2_mmHg.size
    brk = np.zeros(n + 1, dtype=bool)
    brk[0] = brk[n] = True
    if n > 1:
        brk[1:n] |= np.diff(time_s) > gap_s
    brk[:n] |= ~finite
    brk[1 : n + 1] |= ~finite
    edges = np.flatnonzero(brk)
    out = []
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        lo_i, hi_i = int(lo), int(hi)
        if not finite[lo_i]:
            lo_i += 1
        if hi_i > lo_i and finite[lo_i:hi_i].all():
            out.append((lo_i, hi_i))
    return out


def smooth(co2_mmHg: np.ndarray, fs_hz: float, settings: DetectionSettings) -> np.ndarray:
    """Centred moving mean of one segment (length ``settings.smooth_s``)."""
    width = max(1, int(round(settings.smooth_s * fs_hz)))
    if width == 1 or co2_mmHg.size < 2:
        return co2_mmHg.astype(float, copy=True)
    return moving_mean(co2_mmHg, width)


def _shift(x: np.ndarray, k: int) -> np.ndarray:
    """``x`` moved by ``k`` places (positive: later values come earlier), edges repeated."""
    if k == 0 or x.size == 0:
        return x
    if k > 0:
        return np.r_[x[k:], np.full(min(k, x.size), x[-1])][: x.size]
    return np.r_[np.full(min(-k, x.size), x[0]), x[:k]][: x.size]


def _one_sided_min(x: np.ndarray, pct: float, size: int) -> np.ndarray:
    """Smaller of the trailing and the leading running percentile over ``size`` blocks.

    Right after an abrupt drop of the plateau (mouth breathing past a cannula) the leading
    window already holds only small breaths, right before an abrupt rise the trailing one
    does: the level follows the drop at once instead of half a window late.
    """
    centred = running_percentile(x, pct, size)
    half = size // 2
    return np.minimum(_shift(centred, -half), _shift(centred, half))


def _levels(t: np.ndarray, x: np.ndarray, fs_hz: float, s: DetectionSettings):
    """Per-sample high and low hysteresis levels of one smoothed segment, mmHg."""
    n = x.size
    blk = max(1, int(round(s.block_s * fs_hz)))
    starts = np.arange(0, n, blk)
    bmax = np.maximum.reduceat(x, starts)
    bmin = np.minimum.reduceat(x, starts)
    size = max(1, int(round(s.level_window_s / s.block_s)))
    size = min(size | 1, (starts.size | 1))
    plateau = _one_sided_min(bmax, s.plateau_pct, size // 2 | 1)
    base = running_percentile(bmin, s.baseline_pct, size)
    centre = np.minimum(starts + blk // 2, n - 1)
    amp = np.clip(plateau - base, 0.0, None)
    high_b = base + np.maximum(s.high_frac * amp, s.high_floor_mmHg)
    low_b = base + np.maximum(s.low_frac * amp, s.low_floor_mmHg)
    if starts.size == 1:
        return np.full(n, high_b[0]), np.full(n, low_b[0])
    return np.interp(t, t[centre], high_b), np.interp(t, t[centre], low_b)


def _hysteresis_state(x: np.ndarray, high: np.ndarray, low: np.ndarray) -> np.ndarray:
    """Boolean "in expiration" state: set above ``high``, cleared below ``low``."""
    code = np.where(x > high, 1, np.where(x < low, -1, 0)).astype(np.int8)
    idx = np.where(code != 0, np.arange(x.size), -1)
    idx = np.maximum.accumulate(idx)
    return np.where(idx >= 0, code[np.maximum(idx, 0)] > 0, False)


def _segment_cycles(t: np.ndarray, x: np.ndarray, fs_hz: float, s: DetectionSettings):
    """Rise / fall indices (local to the segment) of the accepted cycles, with cut flags."""
    high, low = _levels(t, x, fs_hz, s)
    state = _hysteresis_state(x, high, low)
    n = x.size
    step = np.diff(state.astype(np.int8))
    rise = np.flatnonzero(step == 1) + 1
    fall = np.flatnonzero(step == -1) + 1
    if state[0]:
        rise = np.r_[0, rise]
    if state[-1]:
        fall = np.r_[fall, n]
    if rise.size == 0:
        return rise, fall
    # merge cycles separated by a too-short dip below the low level
    t_ext = np.r_[t, t[-1]]
    dip_s = t_ext[rise[1:]] - t_ext[fall[:-1]]
    keep_gap = dip_s >= s.min_low_s
    rise = rise[np.r_[True, keep_gap]]
    fall = fall[np.r_[keep_gap, True]]
    # drop excursions too short to be an expiration
    high_s = t_ext[np.maximum(fall - 1, rise)] - t[rise]
    ok = high_s >= s.min_high_s
    return rise[ok], fall[ok]


def find_cycles(
    capnogram: Capnogram, gap_s: float, settings: DetectionSettings = DEFAULT_SETTINGS
) -> tuple[Cycles, np.ndarray]:
    """Hysteresis cycles of the whole trace and the smoothed trace (NaN outside segments).

    ``gap_s`` is the longest CO2 sample step that is not a gap, seconds.
    """
    t, y = capnogram.time_s, capnogram.co2_mmHg
    fs = float(capnogram.sample_rate_hz)
    xs = np.full(y.size, np.nan)
    parts = []
    for lo, hi in split_segments(t, y, gap_s):
        x = smooth(y[lo:hi], fs, settings)
        xs[lo:hi] = x
        r, f = _segment_cycles(t[lo:hi], x, fs, settings)
        n = hi - lo
        parts.append((r + lo, f + lo, lo, hi, r == 0, f == n))
    if not parts:
        e_i, e_b = np.empty(0, dtype=np.int64), np.empty(0, dtype=bool)
        return Cycles(e_i, e_i, e_i, e_i, e_b, e_b), xs
    rise = np.concatenate([p[0] for p in parts]).astype(np.int64)
    fall = np.concatenate([p[1] for p in parts]).astype(np.int64)
    seg_lo = np.concatenate([np.full(p[0].size, p[2]) for p in parts]).astype(np.int64)
    seg_hi = np.concatenate([np.full(p[0].size, p[3]) for p in parts]).astype(np.int64)
    cut_start = np.concatenate([p[4] for p in parts]).astype(bool)
    cut_end = np.concatenate([p[5] for p in parts]).astype(bool)
    return Cycles(rise, fall, seg_lo, seg_hi, cut_start, cut_end), xs
