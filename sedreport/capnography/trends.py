"""Per-breath values as trends on the session clock, with the cleaned oximeter trend."""

from __future__ import annotations

import numpy as np

from sedreport.capnography.cycles import split_segments
from sedreport.capnography.model import BreathTable, Trends
from sedreport.criteria import Criteria, default_criteria
from sedreport.oximetry import clean_oximetry
from sedreport.session import Session

#: A trailing window must hold at least this fraction of CO2 data to give a rate.
MIN_COVERAGE_FRAC = 0.5


def _covered_before(t_s: np.ndarray, seg_start: np.ndarray, seg_end: np.ndarray) -> np.ndarray:
    """Seconds of CO2 recording before each time in ``t_s`` (segments as time spans)."""
    order = np.argsort(seg_start)
    seg_start, seg_end = seg_start[order], seg_end[order]
    length = seg_end - seg_start
    done = np.r_[0.0, np.cumsum(length)]
    k = np.searchsorted(seg_start, t_s, side="right")  # segments starting at or before t
    prev = np.maximum(k - 1, 0)
    partial = np.where(k > 0, np.clip(t_s - seg_start[prev], 0.0, length[prev]), 0.0)
    return done[prev] * (k > 0) + partial


def _inside(t_s: np.ndarray, seg_start: np.ndarray, seg_end: np.ndarray) -> np.ndarray:
    k = np.searchsorted(seg_start, t_s, side="right") - 1
    ok = k >= 0
    kk = np.maximum(k, 0)
    return ok & (t_s <= seg_end[kk])


def rate_trend(
    breath_start_s: np.ndarray,
    seg_start_s: np.ndarray,
    seg_end_s: np.ndarray,
    window_s: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Respiratory rate on a 1 s grid from the breath starts in a trailing window.

    Parameters
    ----------
    breath_start_s : ndarray
        Start times of the breaths counted, seconds, sorted.
    seg_start_s, seg_end_s : ndarray
        Time spans of the gap-free CO2 segments, seconds, sorted.
    window_s : float
        Trailing window length, seconds (> 0).

    Returns
    -------
    grid_s, rr_per_min : ndarray
        Whole seconds from the first to the last CO2 sample, and
        ``breaths in (t - window, t] * 60 / seconds of CO2 data in that window``; NaN inside
        a gap and where less than half of the window holds CO2 data. A pause in breathing
        with the signal present correctly gives a falling rate, down to 0.
    """
    if window_s <= 0:
        raise ValueError(f"rr_window_s must be positive, got {window_s}")
    if seg_start_s.size == 0:
        return np.empty(0), np.empty(0)
    grid = np.arange(np.ceil(seg_start_s[0]), np.floor(seg_end_s[-1]) + 1.0, 1.0)
    count = np.searchsorted(breath_start_s, grid, side="right") - np.searchsorted(
        breath_start_s, grid - window_s, side="right"
    )
    covered = _covered_before(grid, seg_start_s, seg_end_s) - _covered_before(
        grid - window_s, seg_start_s, seg_end_s
    )
    ok = (covered >= MIN_COVERAGE_FRAC * window_s) & _inside(grid, seg_start_s, seg_end_s)
    with np.errstate(divide="ignore", invalid="ignore"):
        rr = np.where(ok, count * 60.0 / covered, np.nan)
    return grid, rr


#: Invalid breaths with these reasons are doubtful deflections, not breaths, for the rate.
DOUBTFUL_REASONS: frozenset[str] = frozenset({"short", "low_plateau", "heart_rate"})


def counted_breaths(breaths: BreathTable) -> np.ndarray:
    """Breaths that count for the rate: valid ones, and invalid ones whose only faults are a
    gap cut or a clipped plateau (real breaths whose values are unusable); not ``short``,
    ``low_plateau`` or ``heart_rate`` deflections, which can be ripples in a pause."""
    return np.array(
        [not (set(r.split(";")) & DOUBTFUL_REASONS) for r in breaths.reason], dtype=bool
    ).reshape(-1)


def compute_trends(
    session: Session,
    breaths: BreathTable,
    rr_window_s: float = 60.0,
    *,
    gap_s: float | None = None,
    criteria: Criteria | None = None,
) -> Trends:
    """EtCO2, FiCO2 and rate trends from the breaths, plus the cleaned SpO2/pulse trend.

    Parameters
    ----------
    session : Session
        The session (its capnogram gives the gap structure, its oximeter trend is cleaned by
        :func:`sedreport.oximetry.clean_oximetry`).
    breaths : BreathTable
        From :func:`sedreport.capnography.find_breaths` on ``session.co2``.
    rr_window_s : float
        Trailing window of the rate trend, seconds.
    gap_s : float, optional
        Longest CO2 sample step that is not a gap, seconds (the active criteria's
        ``signal_loss.co2_gap_s``); None takes the shipped default criteria's.
    criteria : Criteria, optional
        The active criteria: their ``oximetry`` rules clean the SpO2/pulse trend (None: the
        shipped default's).

    Returns
    -------
    Trends
        EtCO2 / FiCO2 of each valid breath stamped at its end; rate on a 1 s grid counting
        the breaths of :func:`counted_breaths`; cleaned oximetry.
    """
    valid = np.asarray(breaths.valid, dtype=bool)
    grid = rr = np.empty(0)
    if session.co2 is not None and session.co2.time_s.size:
        t = np.asarray(session.co2.time_s, dtype=float)
        if gap_s is None:
            gap_s = default_criteria().signal_loss.co2_gap_s
        segs = split_segments(t, np.asarray(session.co2.co2_mmHg, dtype=float), gap_s)
        seg_start = np.array([t[a] for a, _ in segs])
        seg_end = np.array([t[b - 1] for _, b in segs])
        starts = np.sort(np.asarray(breaths.start_s, dtype=float)[counted_breaths(breaths)])
        grid, rr = rate_trend(starts, seg_start, seg_end, rr_window_s)
    if session.spo2 is not None and session.spo2.time_s.size:
        spo2, pulse, artefact = clean_oximetry(session.spo2, criteria)
        spo2_t = np.asarray(session.spo2.time_s, dtype=float)
    else:
        spo2 = pulse = spo2_t = np.empty(0)
        artefact = np.empty(0, dtype=bool)
    return Trends(
        breath_time_s=np.asarray(breaths.end_s)[valid],
        etco2_mmHg=np.asarray(breaths.etco2_mmHg)[valid],
        fico2_mmHg=np.asarray(breaths.fico2_mmHg)[valid],
        rr_time_s=grid,
        rr_per_min=rr,
        spo2_time_s=spo2_t,
        spo2_pct=spo2,
        pulse_bpm=pulse,
        spo2_artefact=artefact,
        rr_window_s=float(rr_window_s),
    )
