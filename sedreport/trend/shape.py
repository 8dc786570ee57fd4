"""Waveform-shape indices of the time capnogram that need the raw samples: the phase II
regression slope, the alpha angle, and the representative averaged breath of a visit.

Definitions (time capnogram, breath start and end from :func:`sedreport.capnography.find_breaths`):

- **phase II slope** (mmHg/s): the rise between the crossings of ``low`` and ``high`` fractions
  (default 25 % and 75 %) of the breath's rise from the preceding inspired baseline to its
  EtCO2, divided by the time between the two crossings (read on the raw samples, linearly
  interpolated). On a straight upstroke this is its slope; it is the regression slope of the
  central upstroke used for the alpha angle (You et al., Eur Respir J 1994; from memory).
- **alpha angle** (degrees): the angle between the phase II and phase III lines, measured on
  a drawing in which 1 s of time is as long as ``k`` mmHg of CO2 (``k`` =
  ``shape.alpha_scale_mmHg_per_s``)::

      alpha = 180 - atan(s_II / k) + atan(s_III / k)      (angles in degrees)

  A square wave (vertical upstroke, flat plateau) gives 90 degrees; a slower upstroke or a
  steeper plateau, as in airway obstruction, widens it (You et al., Eur Respir J 1994;
  Hisamuddin et al., Int J Emerg Med 2009; from memory). Worked example (checked in
  ``tests/test_trend_shape.py``): s_II = 100 mmHg/s, s_III = 2 mmHg/s, k = 10 mmHg/s gives
  180 - 84.29 + 11.31 = 107.02 degrees. The value depends on ``k``, so angles from other tools
  or papers are not comparable with these.
- **upstroke (phase II) time** (s): the 10-90 % rise time of the phase II regression line,
  ``0.8 * (EtCO2 - inspired baseline) / s_II``. On a straight upstroke it equals the usual
  10-90 % rise time (common practice); unlike the detector's 10-90 % figure
  (:mod:`sedreport.capnography.metrics`), it does not run on into a steep phase III, which
  would hide a slower upstroke in obstruction.
- **averaged breath**: the valid breaths aligned at their phase II onset (breath start),
  sampled on a common grid by linear interpolation, point-wise median over breaths, each
  breath contributing only until the next breath starts.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.capnography.model import BreathTable
from sedreport.session import Capnogram

#: Longest stretch after the breath start searched for the upstroke crossings, s
#: (documented physiology: phase II lasts well under a second, even in obstruction).
_UPSTROKE_SEARCH_S = 2.0


@dataclass(frozen=True)
class AveragedBreath:
    """The representative breath of a visit.

    Attributes
    ----------
    time_s : ndarray
        Seconds from the phase II onset (negative: the end of the preceding inspiration).
    co2_mmHg : ndarray
        Point-wise median CO2 over the breaths, mmHg (NaN where fewer than half contribute).
    n_breaths : int
        Breaths averaged.
    """

    time_s: np.ndarray
    co2_mmHg: np.ndarray
    n_breaths: int


def alpha_angle_deg(phase2_slope_mmHg_s, phase3_slope_mmHg_s, scale_mmHg_per_s: float):
    """Alpha angle between phase II and phase III, degrees (module docstring).

    Parameters
    ----------
    phase2_slope_mmHg_s, phase3_slope_mmHg_s : float or ndarray
        Regression slopes of phase II and phase III, mmHg/s.
    scale_mmHg_per_s : float
        Drawing scale: mmHg of CO2 as long as 1 s of time.

    Examples
    --------
    >>> round(float(alpha_angle_deg(100.0, 2.0, 10.0)), 2)
    107.02
    """
    s2 = np.asarray(phase2_slope_mmHg_s, dtype=float) / scale_mmHg_per_s
    s3 = np.asarray(phase3_slope_mmHg_s, dtype=float) / scale_mmHg_per_s
    return 180.0 - np.degrees(np.arctan(s2)) + np.degrees(np.arctan(s3))


def _first_crossing(cap: Capnogram, t0: np.ndarray, t1: np.ndarray, level: np.ndarray):
    """Time each trace window ``[t0, t1)`` first reaches ``level`` (interpolated), s; NaN if never."""
    t, y = cap.time_s, cap.co2_mmHg
    width = max(2, int(np.ceil(_UPSTROKE_SEARCH_S * cap.sample_rate_hz)) + 2)
    i0 = np.searchsorted(t, t0, side="left")
    idx = np.minimum(i0[:, None] + np.arange(width)[None, :], t.size - 1)
    inside = t[idx] < t1[:, None]
    hit = (y[idx] >= level[:, None]) & inside
    found = hit.any(axis=1) & (i0 < t.size)
    j = idx[np.arange(idx.shape[0]), np.argmax(hit, axis=1)]
    jp = np.maximum(j - 1, 0)
    dy = y[j] - y[jp]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(dy > 0, (level - y[jp]) / dy, 0.0)
    out = t[jp] + np.clip(frac, 0.0, 1.0) * (t[j] - t[jp])
    return np.where(found, out, np.nan)


def phase2_slope_mmHg_s(
    cap: Capnogram, breaths: BreathTable, low_frac: float = 0.25, high_frac: float = 0.75
) -> np.ndarray:
    """Phase II slope of every breath, mmHg/s (module docstring); NaN where not measurable.

    Parameters
    ----------
    cap : Capnogram
        The raw capnogram (s, mmHg).
    breaths : BreathTable
        Breaths of that capnogram.
    low_frac, high_frac : float
        Fractions of the rise between which the slope is taken.
    """
    n = len(breaths)
    if n == 0:
        return np.empty(0)
    base = inspired_before(breaths)
    rise = breaths.etco2_mmHg - base
    lo = base + low_frac * rise
    hi = base + high_frac * rise
    stop = np.minimum(breaths.end_s, breaths.start_s + _UPSTROKE_SEARCH_S)
    t_lo = _first_crossing(cap, breaths.start_s, stop, lo)
    t_hi = _first_crossing(cap, breaths.start_s, stop, hi)
    dt = t_hi - t_lo
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where((dt > 0) & (rise > 0), (hi - lo) / dt, np.nan)


def phase2_time_s(etco2_mmHg, base_mmHg, phase2_slope) -> np.ndarray:
    """10-90 % rise time of the phase II regression line, s (module docstring).

    Examples
    --------
    >>> float(phase2_time_s(40.0, 0.0, 100.0))
    0.32
    """
    height = np.asarray(etco2_mmHg, dtype=float) - np.asarray(base_mmHg, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.asarray(phase2_slope) > 0, 0.8 * height / phase2_slope, np.nan)


def inspired_before(breaths: BreathTable) -> np.ndarray:
    """Inspired baseline before each breath: the FiCO2 of the previous breath, mmHg."""
    base = np.r_[breaths.fico2_mmHg[:1], breaths.fico2_mmHg[:-1]]
    return np.where(np.isfinite(base), base, breaths.fico2_mmHg)


def averaged_breath(
    cap: Capnogram, breaths: BreathTable, use: np.ndarray, grid_step_s: float = 0.02
) -> AveragedBreath:
    """Representative breath: point-wise median of the breaths in ``use`` aligned at onset.

    Parameters
    ----------
    cap : Capnogram
    breaths : BreathTable
    use : ndarray of bool
        Breaths to average (normally the valid ones).
    grid_step_s : float
        Time step of the result, s.
    """
    idx = np.flatnonzero(use)
    if idx.size == 0:
        return AveragedBreath(np.empty(0), np.empty(0), 0)
    starts = breaths.start_s
    next_start = np.r_[starts[1:], np.inf]
    cycle_s = np.minimum(next_start[idx], breaths.end_s[idx] + 10.0) - starts[idx]
    span_s = float(np.nanpercentile(cycle_s, 90))
    grid = np.arange(-0.3, span_s + 1e-9, grid_step_s)
    when = starts[idx, None] + grid[None, :]
    values = np.interp(when.ravel(), cap.time_s, cap.co2_mmHg).reshape(when.shape)
    prev_end = np.r_[-np.inf, breaths.end_s[:-1]][idx]
    own = (when < next_start[idx, None]) & (when >= prev_end[:, None])
    own &= (when >= cap.time_s[0]) & (when <= cap.time_s[-1])
    values = np.where(own, values, np.nan)
    count = own.sum(axis=0)
    with np.errstate(all="ignore"):
        med = np.where(count * 2 >= idx.size, _nanmedian_cols(values), np.nan)
    return AveragedBreath(grid, med, int(idx.size))


def _nanmedian_cols(values: np.ndarray) -> np.ndarray:
    """Column medians ignoring NaN (NaN for an all-NaN column, without a warning)."""
    out = np.full(values.shape[1], np.nan)
    ok = np.isfinite(values).any(axis=0)
    if ok.any():
        out[ok] = np.nanmedian(values[:, ok], axis=0)
    return out
