"""The patient's own pre-sedation baseline: EtCO2, rate, plateau slope and upstroke time.

Episode criteria such as a rise of EtCO2 from baseline (Burton et al., Acad Emerg Med 2006)
and an abnormal plateau shape judged against the patient's own shape (DESIGN.md) need this.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.cycles import split_segments
from sedreport.capnography.model import Baseline, BreathTable
from sedreport.criteria import default_criteria
from sedreport.session import Session

#: Less pre-dose CO2 recording than this (seconds) is not enough for a baseline.
MIN_PREDOSE_S = 30.0
#: Fewest valid breaths that make a baseline window usable.
MIN_BREATHS = 3
#: Length of the fallback window of valid breathing when pre-dose data are too short, s.
FALLBACK_S = 120.0


def _median(values: np.ndarray) -> float:
    """Median of the finite values, NaN when there are none (no warning)."""
    v = values[np.isfinite(values)]
    return float(np.median(v)) if v.size else float("nan")


def _co2_seconds(session: Session, lo_s: float, hi_s: float, gap_s: float) -> float:
    """Seconds of gap-free CO2 recording inside ``[lo_s, hi_s]``."""
    if session.co2 is None or session.co2.time_s.size == 0:
        return 0.0
    t = np.asarray(session.co2.time_s, dtype=float)
    total = 0.0
    for a, b in split_segments(t, np.asarray(session.co2.co2_mmHg, dtype=float), gap_s):
        total += max(0.0, min(hi_s, t[b - 1]) - max(lo_s, t[a]))
    return total


def _first_dose(session: Session) -> tuple[float, str] | None:
    """Time and drug of the first dose line that gives drug (amount or rate > 0)."""
    given = [d for d in session.doses if d.amount_mg > 0 or d.rate_mg_per_h > 0]
    if not given:
        return None
    first = min(given, key=lambda d: d.time_s)
    return float(first.time_s), first.drug


def _summarise(b: BreathTable, sel: np.ndarray, window: tuple[float, float], method: str):
    return Baseline(
        etco2_mmHg=_median(b.etco2_mmHg[sel]),
        rr_per_min=_median(b.rr_per_min[sel]),
        phase3_slope_norm_per_s=_median(b.phase3_slope_norm_per_s[sel]),
        upstroke_s=_median(b.upstroke_s[sel]),
        window_s=window,
        method=method,
        n_breaths=int(sel.sum()),
    )


def _first_valid_window(b: BreathTable, length_s: float, why: str) -> Baseline:
    valid = np.asarray(b.valid, dtype=bool)
    if not valid.any():
        return _summarise(b, valid, (float("nan"), float("nan")), f"{why}; no valid breath")
    lo = float(b.start_s[valid][0])
    hi = lo + length_s
    sel = valid & (b.start_s >= lo) & (b.end_s <= hi)
    method = f"{why}; median of the valid breaths in the first {length_s:g} s of valid breathing"
    return _summarise(b, sel, (lo, hi), f"{method} ({lo:.1f}-{hi:.1f} s)")


def estimate_baseline(
    session: Session,
    breaths: BreathTable,
    window_s: float = 120.0,
    *,
    gap_s: float | None = None,
) -> Baseline:
    """The patient's own values before the first dose of any drug.

    Parameters
    ----------
    session : Session
        Gives the doses and the capnogram's coverage.
    breaths : BreathTable
        From :func:`sedreport.capnography.find_breaths`.
    window_s : float
        Length of the pre-dose window, seconds.
    gap_s : float, optional
        Longest CO2 sample step that is not a gap, seconds (the active criteria's
        ``signal_loss.co2_gap_s``); None takes the shipped default criteria's.

    Returns
    -------
    Baseline
        Medians over the valid breaths lying wholly inside ``[first dose - window_s, first
        dose]``. Fallbacks, stated in ``method``: with no dose at all, the first
        ``window_s`` of valid breathing; with less than 30 s of pre-dose CO2 recording or
        fewer than 3 valid pre-dose breaths, the first 120 s of valid breathing (which may lie
        after the first dose, so the baseline is then less trustworthy).
    """
    if window_s <= 0:
        raise ValueError(f"window_s must be positive, got {window_s}")
    first = _first_dose(session)
    if first is None:
        return _first_valid_window(breaths, window_s, "no dose recorded")
    t_dose, drug = first
    lo, hi = t_dose - window_s, t_dose
    valid = np.asarray(breaths.valid, dtype=bool)
    sel = valid & (breaths.start_s >= lo) & (breaths.end_s <= hi)
    if gap_s is None:
        gap_s = default_criteria().signal_loss.co2_gap_s
    covered = _co2_seconds(session, lo, hi, gap_s)
    if covered < MIN_PREDOSE_S or sel.sum() < MIN_BREATHS:
        why = (
            f"only {covered:.0f} s of CO2 and {int(sel.sum())} valid breaths before the first"
            f" dose ({drug} at {_when(session, t_dose)})"
        )
        return _first_valid_window(breaths, FALLBACK_S, why)
    method = (
        f"median of {int(sel.sum())} valid breaths in the {window_s:g} s before the first dose"
        f" ({drug} at {_when(session, t_dose)})"
    )
    return _summarise(breaths, sel, (lo, hi), method)


def _when(session: Session, t_s: float) -> str:
    """Clock time and session-clock seconds of a moment, for the method sentence."""
    return f"{session.clock_time(t_s):%H:%M:%S}, {t_s:.1f} s"
