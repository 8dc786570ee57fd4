"""Hypotension (non-invasive BP) and bradycardia (cleaned oximeter pulse) findings.

Criteria (``cardiovascular`` section of the criteria file, each with its source):

- **hypotension**: a systolic reading below ``systolic_below_mmHg`` (90 mmHg, common practice)
  or more than ``systolic_fall_pct`` (25 %) below the baseline systolic (the World SIVA tool's
  footnote "a change > 25 % from baseline", Mason et al., Br J Anaesth 2012, from memory). The
  baseline is ``assessment.baseline.systolic_mmHg``, else the first reading before the first
  dose. Readings are judged one by one (each cuff reading is itself an average over a cuff
  cycle): a finding runs from the first low reading to the first reading back above both
  limits, or to the last low reading (unresolved) when none follows.
- **bradycardia**: a cleaned pulse below ``pulse_below_bpm`` (50/min, common practice) or more
  than ``pulse_fall_pct`` below the baseline pulse, sustained for ``bradycardia_min_duration_s``.
  The baseline is ``assessment.baseline.heart_rate_bpm``, else the median cleaned pulse over
  ``pulse_baseline_window_s`` before the first dose. A missing reading (NaN after
  :func:`sedreport.oximetry.mark_oximetry`) or a step longer than the gap rule ends a run; a
  paced pulse that sits on one value is a reading like any other.

Both are MINOR-risk descriptors of the World SIVA tool (:mod:`.severity`).
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.session import Session


def _first_dose_s(session: Session) -> float | None:
    return min((d.time_s for d in session.doses), default=None)


def baseline_systolic_mmHg(session: Session) -> tuple[float | None, str]:
    """Baseline systolic pressure, mmHg, and where it came from (None when there is none).

    ``assessment.baseline.systolic_mmHg`` when given, else the first BP reading when it was
    taken before the first dose (or there is no dose).
    """
    a = session.assessment
    if a is not None and a.baseline is not None and a.baseline.systolic_mmHg is not None:
        return a.baseline.systolic_mmHg, "the assessment's baseline"
    bp = session.bp
    if bp is None or bp.time_s.size == 0:
        return None, "no blood pressure readings"
    first_dose = _first_dose_s(session)
    if first_dose is not None and bp.time_s[0] >= first_dose:
        return None, "no reading before the first dose"
    return float(bp.systolic_mmHg[0]), "the first reading before the first dose"


def baseline_pulse_bpm(session: Session, trends: Trends, criteria: Criteria) -> float | None:
    """Baseline pulse, /min: the assessment's, else the median cleaned pulse over the
    criteria's ``pulse_baseline_window_s`` ending at the first dose (from the recording's
    start when there is no dose); None when no reading falls there."""
    a = session.assessment
    if a is not None and a.baseline is not None and a.baseline.heart_rate_bpm is not None:
        return a.baseline.heart_rate_bpm
    t = np.asarray(trends.spo2_time_s, dtype=float)
    pulse = np.asarray(trends.pulse_bpm, dtype=float)
    if t.size == 0:
        return None
    window_s = criteria.cardiovascular.pulse_baseline_window_s
    end = _first_dose_s(session)
    end = float(t[0]) + window_s if end is None else end
    sel = (t >= end - window_s) & (t < end) & np.isfinite(pulse)
    return float(np.median(pulse[sel])) if sel.any() else None


def _limit(absolute: float, baseline: float | None, fall_pct: float) -> tuple[float, float]:
    """The absolute limit and the relative one (baseline * (1 - fall); -inf without one)."""
    relative = -np.inf if baseline is None else baseline * (1.0 - fall_pct / 100.0)
    return absolute, relative


def detect_hypotension(session: Session, criteria: Criteria) -> list[Finding]:
    """Runs of low systolic readings (rules in the module docstring).

    Examples
    --------
    >>> from datetime import datetime, timezone
    >>> from sedreport.criteria import load_criteria
    >>> from sedreport.session import BloodPressure
    >>> t = np.array([0.0, 300.0, 480.0, 660.0])
    >>> sys_, dia = np.array([140.0, 100.0, 96.0, 120.0]), np.array([80.0, 60.0, 55.0, 70.0])
    >>> s = Session("NB", datetime(2026, 1, 1, tzinfo=timezone.utc),
    ...             bp=BloodPressure(t, sys_, dia, dia + (sys_ - dia) / 3))
    >>> [(f.start_s, f.end_s) for f in detect_hypotension(s, load_criteria())]
    [(300.0, 660.0)]
    """
    bp = session.bp
    if bp is None or bp.time_s.size == 0:
        return []
    c = criteria.cardiovascular
    base, whence = baseline_systolic_mmHg(session)
    absolute, relative = _limit(c.systolic_below_mmHg, base, c.systolic_fall_pct)
    sys_ = np.asarray(bp.systolic_mmHg, dtype=float)
    low = (sys_ < absolute) | (sys_ < relative)
    out = []
    for a, b in _runs(low):
        resolved = b < low.size
        end = float(bp.time_s[b]) if resolved else float(bp.time_s[b - 1])
        limit = f"< {absolute:g} mmHg"
        if base is not None:
            limit += f" or < {relative:.0f} mmHg ({c.systolic_fall_pct:g} % below {base:g} mmHg, {whence})"
        notes = [f"lowest systolic {sys_[a:b].min():g} mmHg; limit {limit}"]
        if base is None:
            notes.append(f"No baseline systolic ({whence}); judged on the absolute limit only.")
        if not resolved:
            notes.append("No reading back above the limits before the recording ended.")
        out.append(Finding("hypotension", None, float(bp.time_s[a]), end, tuple(notes), resolved))
    return out


def detect_bradycardia(session: Session, trends: Trends, criteria: Criteria) -> list[Finding]:
    """Sustained runs of low cleaned pulse (rules in the module docstring)."""
    t = np.asarray(trends.spo2_time_s, dtype=float)
    pulse = np.asarray(trends.pulse_bpm, dtype=float)
    if t.size == 0 or not np.isfinite(pulse).any():
        return []
    c = criteria.cardiovascular
    base = baseline_pulse_bpm(session, trends, criteria)
    absolute, relative = _limit(c.pulse_below_bpm, base, c.pulse_fall_pct)
    with np.errstate(invalid="ignore"):
        low = np.isfinite(pulse) & ((pulse < absolute) | (pulse < relative))
    # A step longer than the gap rule splits a run: the sample after it starts a new one.
    split = np.r_[False, np.diff(t) > criteria.signal_loss.spo2_gap_s]
    out = []
    for a, b in _runs(low, split):
        resolved = b < t.size and np.isfinite(pulse[b]) and not split[b]
        end = float(t[b]) if resolved else float(t[b - 1])
        if end - float(t[a]) < c.bradycardia_min_duration_s:
            continue
        limit = f"< {absolute:g}/min" + (
            f" or < {relative:.0f}/min ({c.pulse_fall_pct:g} % below {base:.0f}/min)"
            if base is not None
            else ""
        )
        notes = [f"lowest pulse {np.nanmin(pulse[a:b]):g}/min; limit {limit}"]
        if not resolved:
            notes.append("The run ended without a reading back above the limits.")
        out.append(Finding("bradycardia", None, float(t[a]), end, tuple(notes), bool(resolved)))
    return out


def _runs(flag: np.ndarray, split: np.ndarray | None = None) -> list[tuple[int, int]]:
    """(first, one past last) index of each run of True; ``split`` starts a new run."""
    f = np.asarray(flag, dtype=bool)
    starts = f & ~np.r_[False, f[:-1]]
    if split is not None:
        starts |= f & split
    first = np.flatnonzero(starts)
    out = []
    for a in first:
        b = a + 1
        while b < f.size and f[b] and not (split is not None and split[b]):
            b += 1
        out.append((int(a), int(b)))
    return out
