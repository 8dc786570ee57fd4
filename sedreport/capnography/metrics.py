"""Per-breath measurements from the hysteresis cycles: times, EtCO2, FiCO2, shape indices.

Definitions (time conventions of DESIGN.md; levels are fractions of the breath's own rise):

- start: where the smoothed CO2 last leaves the inspired baseline before the rise: the last
  crossing (linearly interpolated between samples) of a level twice the baseline's noise SD
  above it, kept between 3 % and 10 % of the rise;
- end: the first crossing of the same kind of level after the downstroke (back at baseline);
- EtCO2: median of the raw samples over the last 0.2 s of the plateau, ending 0.05 s before
  the plateau end (the last sample at >= 90 % of the rise), so neither a noise spike nor the
  downstroke sets it; the median is then advanced to the plateau end along the fitted
  phase III slope (0.15 s times the slope), so a steep plateau is not under-read;
- inspired baseline of a pause between breaths: mean of its smoothed samples lying below
  20 % of the rise above the pause minimum (robust to noise, unlike the minimum); FiCO2 is
  the inspired baseline of the inspiration that follows the breath;
- upstroke time (phase II): from the 10 % to the 90 % crossing of the rise from the inspired
  baseline to the breath's smoothed peak (the usual 10-90 % rise-time convention); with a
  steep phase III the 90 % point lies on the plateau, so the figure then includes part of
  phase III; times are read on the 0.15 s-smoothed trace, which lengthens a fast rise by a
  few hundredths of a second;
- phase III slope: least-squares slope of the raw samples in the middle of the alveolar
  plateau, from 50 % to 90 % of the time between start and plateau end, in mmHg/s, and the
  same divided by EtCO2 (1/s). The phase III slope is a capnographic shape index of airway
  obstruction (You et al., Eur Respir J 1994; Hisamuddin et al., Int J Emerg Med 2009); the
  exact fitting window is common practice, chosen here.

All of this is vectorised over breaths with range reductions (:mod:`._ranges`).
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography._ranges import (
    crossing_time,
    first_where,
    flat_ranges,
    last_where,
    range_reduce,
)
from sedreport.capnography.cycles import Cycles, DetectionSettings
from sedreport.capnography.model import BreathTable
from sedreport.session import Capnogram

#: Data whose smallest non-zero step is coarser than this (mmHg) are treated as quantised
#: (e.g. integer mmHg exports), where long runs of equal values are normal: no clip check.
_QUANTISED_STEP_MMHG = 0.05
#: Samples of a pause below this fraction of the rise (above the pause minimum) form its
#: inspired baseline.
_BASE_FRAC = 0.2


def _neighbours(c: Cycles) -> tuple[np.ndarray, np.ndarray]:
    """Previous fall and next rise of each cycle within its segment (segment edges else)."""
    n = c.rise.size
    prev_fall = c.seg_lo.copy()
    next_rise = c.seg_hi.copy()
    if n > 1:
        same = c.seg_lo[1:] == c.seg_lo[:-1]
        prev_fall[1:] = np.where(same, c.fall[:-1], c.seg_lo[1:])
        next_rise[:-1] = np.where(same, c.rise[1:], c.seg_hi[:-1])
    return prev_fall, next_rise


def _range_min(x: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Minimum of ``x[a:b]`` per range, NaN for empty ranges."""
    out = np.full(a.size, np.nan)
    ok = b > a
    out[ok] = range_reduce(np.minimum, x, a[ok], b[ok])
    return out


def _pause_level(xs: np.ndarray, resid: np.ndarray, a, b, peak: np.ndarray):
    """Inspired baseline of each pause ``[a, b)`` and the noise SD left on it, mmHg.

    The baseline is the mean of the pause's low samples, those below
    ``min + 0.2 * (peak - min)``: the flat part without the neighbouring up- and
    downstrokes. Unlike the minimum, this mean is not pulled down by noise. The noise SD of
    the smoothed trace is estimated from the RMS of ``resid`` (raw minus smoothed, already
    scaled by the caller) over the same samples. NaN for empty pauses.
    """
    low = _range_min(xs, a, b)
    mean = np.full(a.size, np.nan)
    sd = np.full(a.size, np.nan)
    ok = b > a
    if ok.any():
        level = low[ok] + _BASE_FRAC * (peak[ok] - low[ok])
        mean[ok], sd[ok] = _stats_below(xs, resid, a[ok], b[ok], level)
    return mean, sd


def _baselines(xs: np.ndarray, c: Cycles, resid: np.ndarray | None = None):
    """Peak, inspired baselines before/after each cycle and their noise SDs, mmHg."""
    if resid is None:
        resid = np.zeros_like(xs)
    prev_fall, next_rise = _neighbours(c)
    peak = range_reduce(np.maximum, xs, c.rise, c.fall)
    b_prev, sd_prev = _pause_level(xs, resid, prev_fall, c.rise, peak)
    b_next, sd_next = _pause_level(xs, resid, c.fall, next_rise, peak)
    return peak, (b_prev, sd_prev), (b_next, sd_next), prev_fall, next_rise


def _subset(c: Cycles, keep: np.ndarray) -> Cycles:
    return Cycles(*(getattr(c, f)[keep] for f in Cycles.__dataclass_fields__))


def filter_cycles(xs: np.ndarray, c: Cycles, s: DetectionSettings) -> Cycles:
    """Drop cycles rising less than ``min_amplitude_mmHg`` above the baseline on either side.

    Two passes, because removing a small cycle changes its neighbours' inspiratory pauses.
    """
    for _ in range(2):
        if c.rise.size == 0:
            return c
        peak, (b_prev, _), (b_next, _), _, _ = _baselines(xs, c)
        amp_prev = np.where(np.isnan(b_prev), np.inf, peak - b_prev)
        amp_next = np.where(np.isnan(b_next), np.inf, peak - b_next)
        keep = (amp_prev >= s.min_amplitude_mmHg) & (amp_next >= s.min_amplitude_mmHg)
        keep &= ~(np.isnan(b_prev) & np.isnan(b_next) & (peak < s.min_amplitude_mmHg))
        if keep.all():
            return c
        c = _subset(c, keep)
    return c


def _leave_margin(amp: np.ndarray, sd: np.ndarray, s: DetectionSettings) -> np.ndarray:
    """How far above the inspired baseline a breath starts / ends, mmHg.

    Twice the baseline's residual noise SD, kept between ``onset_min_frac`` and
    ``onset_frac`` of the rise: on a clean trace the start sits at the foot of the upstroke
    (3 % level), on a noisy one no lower than the noise allows (up to the 10 % level).
    """
    margin = np.where(np.isfinite(sd), 2.0 * sd, s.onset_frac * amp)
    return np.clip(margin, s.onset_min_frac * amp, s.onset_frac * amp)


def _le(a, b):
    return a <= b


def _ge(a, b):
    return a >= b


def _lsq_slope(t: np.ndarray, y: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Least-squares slope of ``y`` against ``t`` over each range ``[a, b)`` (>= 3 samples)."""
    out = np.full(a.size, np.nan)
    ok = (b - a) >= 3
    if not ok.any():
        return out
    aa, bb = a[ok], b[ok]
    n = (bb - aa).astype(float)
    tm = range_reduce(np.add, t, aa, bb) / n
    ym = range_reduce(np.add, y, aa, bb) / n
    flat, offsets = flat_ranges(aa, bb)
    tc = t[flat] - np.repeat(tm, bb - aa)
    yc = y[flat] - np.repeat(ym, bb - aa)
    sxx = np.add.reduceat(tc * tc, offsets)
    sxy = np.add.reduceat(tc * yc, offsets)
    with np.errstate(divide="ignore", invalid="ignore"):
        out[ok] = np.where(sxx > 0, sxy / sxx, np.nan)
    return out


def _etco2(y: np.ndarray, rise: np.ndarray, e: np.ndarray, fs: float, s: DetectionSettings):
    """Median of the raw samples in the end-of-plateau window of each breath, mmHg."""
    k = max(1, int(round(s.etco2_window_s * fs)))
    lead = int(round(s.etco2_lead_s * fs))
    last = np.maximum(e - lead, rise)
    idx = last[:, None] - np.arange(k)[None, :]
    idx = np.maximum(idx, rise[:, None])
    return np.median(y[idx], axis=1)


def _stats_below(xs, resid, a: np.ndarray, b: np.ndarray, level: np.ndarray):
    """Mean of ``xs`` and RMS of ``resid`` over the samples with ``xs <= level`` per range."""
    flat, offsets = flat_ranges(a, b)
    vals = xs[flat]
    mask = vals <= np.repeat(level, b - a)
    count = np.maximum(np.add.reduceat(mask.astype(np.int64), offsets), 1)
    mean = np.add.reduceat(np.where(mask, vals, 0.0), offsets) / count
    r = np.where(mask, resid[flat], 0.0)
    rms = np.sqrt(np.add.reduceat(r * r, offsets) / count)
    return mean, rms


def _smoothed_noise(y: np.ndarray, xs: np.ndarray, fs: float, s: DetectionSettings):
    """Raw-minus-smoothed residual scaled to the noise SD of the smoothed trace.

    For white noise of SD sigma and a moving mean of w samples, the residual has SD
    ``sigma * sqrt(1 - 1/w)`` and the smoothed noise ``sigma / sqrt(w)``: their ratio is
    ``sqrt(w - 1)`` (arithmetic of the moving mean). Smooth ramps leave almost no residual,
    so up- and downstroke samples do not inflate the estimate.
    """
    w = max(1, int(round(s.smooth_s * fs)))
    resid = np.nan_to_num(y - xs, nan=0.0)
    return resid / np.sqrt(max(w - 1, 1))


def _clipped(y: np.ndarray, c: Cycles, fs: float, s: DetectionSettings) -> np.ndarray:
    """Breaths holding the trace maximum for at least ``clip_min_s`` (continuous data only).

    A monitor that saturates shows every breath above its range cut flat at one value. In
    quantised exports (integer mmHg) equal values are normal, so no clip is inferred there.
    """
    out = np.zeros(c.rise.size, dtype=bool)
    finite = y[np.isfinite(y)]
    if c.rise.size == 0 or finite.size < 2:
        return out
    steps = np.abs(np.diff(finite))
    steps = steps[steps > 0]
    if steps.size == 0 or steps.min() >= _QUANTISED_STEP_MMHG:
        return out
    at_max = np.r_[0, np.cumsum(y == finite.max())]
    held_s = (at_max[c.fall] - at_max[c.rise]) / fs
    out = held_s >= s.clip_min_s
    if out.sum() < 2:
        return np.zeros_like(out)
    return out


def _rates(start_s: np.ndarray, c: Cycles) -> np.ndarray:
    """60 / (start - previous start); NaN at segment starts and next to cut starts."""
    rr = np.full(start_s.size, np.nan)
    if start_s.size > 1:
        same = c.seg_lo[1:] == c.seg_lo[:-1]
        ok = same & ~c.cut_start[1:] & ~c.cut_start[:-1]
        with np.errstate(divide="ignore", invalid="ignore"):
            rr[1:] = np.where(ok, 60.0 / np.diff(start_s), np.nan)
    return rr


def _heart_rate(start_s: np.ndarray, rise_mmHg: np.ndarray, c: Cycles, s: DetectionSettings):
    """Small breaths closer than ``heart_rate_interval_s`` to both neighbours in their segment."""
    n = start_s.size
    close = np.zeros(n + 1, dtype=bool)  # close[k]: breath k-1 and k are at the heart rate
    if n > 1:
        close[1:n] = (np.diff(start_s) < s.heart_rate_interval_s) & (c.seg_lo[1:] == c.seg_lo[:-1])
    return close[:n] & close[1:] & (rise_mmHg < s.heart_rate_max_rise_mmHg)


def _reasons(flags: dict[str, np.ndarray], n: int) -> tuple[str, ...]:
    """Join the names of the raised flags per breath with ``;`` ('' when none)."""
    out = []
    for i in range(n):
        out.append(";".join(name for name, f in flags.items() if f[i]))
    return tuple(out)


def _empty_table() -> BreathTable:
    e = np.empty(0)
    return BreathTable(e, e, e, e, e, e, e, e, np.empty(0, dtype=bool), ())


def _start_end(t, xs, c: Cycles, prev_fall, next_rise, lvl_on, lvl_off):
    """Start / end times of each breath, the start sample and the gap-cut flags.

    The start is the last crossing of ``lvl_on`` in the pause before the rise, the end the
    first crossing of ``lvl_off`` after the fall; a breath whose pause is not seen (segment
    edge) is cut.
    """
    has_prev = c.rise > prev_fall
    js = np.full(c.rise.size, -1, dtype=np.int64)
    js[has_prev] = last_where(_le, xs, prev_fall[has_prev], c.rise[has_prev], lvl_on[has_prev])
    cut_start = c.cut_start | (js < 0) | (js == c.seg_lo)
    js = np.where(js < 0, c.rise, js)
    start_s = np.where(js == c.rise, t[c.rise], crossing_time(t, xs, js, lvl_on))
    has_next = next_rise > c.fall
    je = np.full(c.rise.size, -1, dtype=np.int64)
    je[has_next] = first_where(_le, xs, c.fall[has_next], next_rise[has_next], lvl_off[has_next])
    cut_end = c.cut_end | (je < 0)
    last_in = np.minimum(c.fall, c.seg_hi) - 1
    end_s = np.where(je < 0, t[last_in], crossing_time(t, xs, np.maximum(je - 1, 0), lvl_off))
    return start_s, end_s, js, cut_start, cut_end, last_in


def _upstroke(t, xs, c: Cycles, js, lvl_10, lvl_90, cut_start) -> np.ndarray:
    """10 -> 90 % rise time of each breath, s (NaN for breaths cut at their start)."""
    i90 = first_where(_ge, xs, js, np.maximum(c.fall, js + 1), lvl_90)
    t90 = np.where(i90 > js, crossing_time(t, xs, np.maximum(i90 - 1, 0), lvl_90), np.nan)
    j10 = last_where(_le, xs, js, np.maximum(c.rise, js + 1), lvl_10)
    t10 = np.where(j10 >= 0, crossing_time(t, xs, np.maximum(j10, 0), lvl_10), np.nan)
    return np.where(cut_start, np.nan, t90 - t10)


def measure_breaths(
    cap: Capnogram, xs: np.ndarray, cycles: Cycles, s: DetectionSettings
) -> BreathTable:
    """Measure every accepted cycle as a breath (see the module docstring for definitions).

    Parameters
    ----------
    cap : Capnogram
        The raw trace (times s, CO2 mmHg).
    xs : ndarray
        The smoothed trace (NaN outside gap-free segments).
    cycles : Cycles
        Hysteresis cycles from :func:`sedreport.capnography.breaths.find_cycles`.
    s : DetectionSettings
        Detector tuning.
    """
    t, y, fs = cap.time_s, cap.co2_mmHg, float(cap.sample_rate_hz)
    c = filter_cycles(xs, cycles, s)
    if c.rise.size == 0:
        return _empty_table()
    resid = _smoothed_noise(y, xs, fs, s)
    peak, (b_prev, sd_prev), (b_next, sd_next), prev_fall, next_rise = _baselines(xs, c, resid)
    base_prev = np.where(np.isnan(b_prev), b_next, b_prev)
    base_next = np.where(np.isnan(b_next), b_prev, b_next)
    base_prev = np.where(np.isnan(base_prev), 0.0, base_prev)
    base_next = np.where(np.isnan(base_next), 0.0, base_next)
    lvl_on = base_prev + _leave_margin(peak - base_prev, sd_prev, s)
    lvl_off = base_next + _leave_margin(peak - base_next, sd_next, s)
    lvl_10 = base_prev + s.onset_frac * (peak - base_prev)
    lvl_up = base_prev + s.upper_frac * (peak - base_prev)
    lvl_top = base_next + s.upper_frac * (peak - base_next)

    start_s, end_s, js, cut_start, cut_end, last_in = _start_end(
        t, xs, c, prev_fall, next_rise, lvl_on, lvl_off
    )
    e = last_where(_ge, xs, c.rise, c.fall, lvl_top)
    e = np.where(e < 0, last_in, e)
    upstroke_s = _upstroke(t, xs, c, js, lvl_10, lvl_up, cut_start)
    te = t[e]
    ia = np.searchsorted(t, start_s + 0.5 * (te - start_s), side="left")
    ib = np.searchsorted(t, start_s + 0.9 * (te - start_s), side="right")
    slope = _lsq_slope(t, y, ia, np.maximum(ib, ia))

    etco2 = _etco2(y, c.rise, e, fs, s)
    # advance the window median to the plateau end along the fitted phase III line
    advance_s = s.etco2_lead_s + 0.5 * s.etco2_window_s
    etco2 = etco2 + np.where(np.isfinite(slope), slope * advance_s, 0.0)
    fico2 = b_next
    with np.errstate(divide="ignore", invalid="ignore"):
        slope_norm = np.where(etco2 > 0, slope / etco2, np.nan)

    final = Cycles(c.rise, c.fall, c.seg_lo, c.seg_hi, cut_start, cut_end)
    rr = _rates(start_s, final)
    rise_height = etco2 - np.where(np.isfinite(fico2), fico2, base_prev)
    flags = {
        "gap": cut_start | cut_end,
        "short": (end_s - start_s) < s.min_duration_s,
        "low_plateau": rise_height < s.low_plateau_mmHg,
        "clipped": _clipped(y, c, fs, s),
        "heart_rate": _heart_rate(start_s, rise_height, c, s),
    }
    reason = _reasons(flags, c.rise.size)
    valid = ~np.logical_or.reduce(list(flags.values()))
    return BreathTable(
        start_s=start_s,
        end_s=end_s,
        etco2_mmHg=etco2,
        fico2_mmHg=fico2,
        rr_per_min=rr,
        upstroke_s=upstroke_s,
        phase3_slope_mmHg_s=slope,
        phase3_slope_norm_per_s=slope_norm,
        valid=valid,
        reason=reason,
    )
