"""Absent CO2 signal: a flat trace that is not reported as an apnoea.

Two rules, both choices of this tool (criteria section ``co2_signal``; no published source
gives one):

* **no variation**: CO2 samples that do not change at all for ``flat_exact_s`` (identical
  values, no sensor noise; e.g. exact zeros from a channel that is not delivering). A breathing
  pause measured by a running sensor still shows its noise.
* **too long**: a pause without breaths longer than ``max_apnoea_s`` during which (or up to
  30 s after which, the delay of a finger probe) SpO2 does not fall by ``spo2_fall_pct`` points
  (or no SpO2 was recorded): a patient does not go minutes without breathing and without a
  fall in SpO2; the line is off the nose.

A third kind of pause is neither: rhythmic CO2 waves of at least ``small_wave_mmHg`` (a
displaced cannula, deep mouth breathing) at a breathing rhythm (``apnoea.rhythm_rate_*``),
too small to be measured as breaths. It is reported as a ``low_amplitude`` finding (subtype
``waves_only``), not an apnoea; bumps at the heart rate are faster than that rhythm.

Either absent-signal finding (kind ``co2_signal_absent``) reads "no CO2 signal: disconnected or displaced
line, or apnoea - check" and replaces the apnoea over that pause. It runs over the pause (from
the end of the last breath to the start of the next) or, for a flat run outside any pause, over
the run itself.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.filters import moving_mean
from sedreport.capnography.model import BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes._intervals import Finding
from sedreport.episodes.apnoea import find_pauses
from sedreport.episodes.linking import usable_spo2
from sedreport.session import Session

CHECK_TEXT = "No CO2 signal: disconnected or displaced line, or apnoea - check."
#: SpO2 before a pause is the median over this window, s (choice of this tool).
SPO2_REFERENCE_S = 60.0
#: A fall of finger SpO2 shows this long after its cause (circulation delay of a finger probe,
#: a few tens of seconds; from memory): SpO2 up to this long after the pause counts, s.
SPO2_LAG_S = 30.0


def flat_runs(
    time_s: np.ndarray, co2_mmHg: np.ndarray, min_s: float, gap_s: float
) -> tuple[np.ndarray, np.ndarray]:
    """Start and end times (s) of runs of identical CO2 samples lasting at least ``min_s``.

    A run never spans a gap (a sample step longer than ``gap_s``) or a non-finite sample.

    Examples
    --------
    >>> t = np.arange(0, 30, 0.1)
    >>> y = np.where(t < 12, 0.0, np.sin(t))
    >>> flat_runs(t, y, 10.0, 1.0)[0].round(1).tolist()
    [0.0]
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(co2_mmHg, dtype=float)
    if t.size < 2:
        return np.empty(0), np.empty(0)
    same = (np.diff(y) == 0) & (np.diff(t) <= gap_s)
    edges = np.diff(np.r_[0, same.astype(np.int8), 0])
    first = np.flatnonzero(edges == 1)
    last = np.flatnonzero(edges == -1)  # index of the last sample of the run
    starts, ends = t[first], t[last]
    keep = (ends - starts) >= min_s
    return starts[keep], ends[keep]


def spo2_fell(spo2_t: np.ndarray, spo2_v: np.ndarray, a: float, b: float, fall_pct: float) -> bool:
    """True when SpO2 in [a, b] falls ``fall_pct`` points below the minute before ``a``.

    Without SpO2 in the window the answer is False (no fall seen).
    """
    inside = (spo2_t >= a) & (spo2_t <= b)
    if not inside.any():
        return False
    before = (spo2_t >= a - SPO2_REFERENCE_S) & (spo2_t < a)
    ref = float(np.median(spo2_v[before])) if before.any() else float(spo2_v[inside][0])
    return ref - float(spo2_v[inside].min()) >= fall_pct


#: Moving-mean length for the small-wave search, s (light smoothing; choice of this tool).
WAVE_SMOOTH_S = 0.3
#: Hysteresis levels of the small-wave search, fractions of the 10-90 % range of the pause.
WAVE_UP, WAVE_DOWN = 0.6, 0.3
#: Share of the wave intervals that must lie at a breathing rhythm.
WAVE_REGULAR_SHARE = 0.8


def rhythmic_waves(
    time_s: np.ndarray, co2_mmHg: np.ndarray, a: float, b: float, criteria: Criteria
) -> tuple[float, float] | None:
    """Height (mmHg) and rate (/min) of rhythmic small waves filling the pause [a, b], or None.

    The pause's samples are smoothed (``WAVE_SMOOTH_S``); a wave starts where the trace rises
    above 60 % of its 10-90 % range after having been below 30 %. The waves fill the pause when
    the range is at least ``co2_signal.small_wave_mmHg``, there are ``apnoea.rhythm_breaths`` or
    more, no stretch of the pause without a wave is as long as ``apnoea.min_duration_s``, and
    80 % of the wave intervals lie at the breathing rhythm of the apnoea criteria.
    """
    sel = (time_s > a) & (time_s < b)
    t, y = time_s[sel], co2_mmHg[sel]
    if t.size < 8:
        return None
    fs = (t.size - 1) / max(t[-1] - t[0], 1e-9)
    x = moving_mean(y, max(1, int(round(WAVE_SMOOTH_S * fs))))
    lo, hi = np.percentile(x, [10.0, 90.0])
    if hi - lo < criteria.co2_signal.small_wave_mmHg:
        return None
    code = np.where(
        x > lo + WAVE_UP * (hi - lo), 1, np.where(x < lo + WAVE_DOWN * (hi - lo), -1, 0)
    )
    idx = np.maximum.accumulate(np.where(code != 0, np.arange(x.size), -1))
    state = np.where(idx >= 0, code[np.maximum(idx, 0)] > 0, False)
    rises = t[1:][np.diff(state.astype(np.int8)) == 1]
    ap = criteria.apnoea
    if rises.size < ap.rhythm_breaths:
        return None
    edges = np.diff(np.r_[a, rises, b])
    if edges.max() >= ap.min_duration_s:
        return None
    step = np.diff(rises)
    rhythmic = (step >= 60.0 / ap.rhythm_rate_max_per_min) & (
        step <= 60.0 / ap.rhythm_rate_min_per_min
    )
    if rhythmic.mean() < WAVE_REGULAR_SHARE:
        return None
    return float(hi - lo), 60.0 / float(np.median(step))


def _overlap_s(a: float, b: float, starts: np.ndarray, ends: np.ndarray) -> float:
    return float(np.clip(np.minimum(ends, b) - np.maximum(starts, a), 0.0, None).max(initial=0.0))


def detect_co2_signal_absent(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    gap_starts: np.ndarray,
    gap_ends: np.ndarray,
    criteria: Criteria,
) -> list[Finding]:
    """Flat stretches reported as an absent CO2 signal (kind ``co2_signal_absent``).

    Parameters
    ----------
    session : Session
        Supplies the raw CO2 samples.
    breaths : BreathTable
    trends : Trends
        Supplies the cleaned SpO2.
    gap_starts, gap_ends : ndarray
        Merged CO2 gaps (s).
    criteria : Criteria

    Returns
    -------
    list of Finding
        Kind ``co2_signal_absent`` (subtype ``no_variation`` or ``too_long``) or
        ``low_amplitude`` (subtype ``waves_only``).
    """
    if session.co2 is None or session.co2.time_s.size < 2:
        return []
    c = criteria.co2_signal
    t, y = session.co2.time_s, session.co2.co2_mmHg
    fs, fe = flat_runs(t, y, c.flat_exact_s, criteria.signal_loss.co2_gap_s)
    p = find_pauses(breaths, gap_starts, gap_ends, criteria, float(t[-1]))
    spo2_t, spo2_v = usable_spo2(trends)
    out: list[Finding] = []
    used = np.zeros(fs.size, dtype=bool)
    for a, b in zip(p.start_s.tolist(), p.end_s.tolist(), strict=True):
        flat_s = _overlap_s(a, b, fs, fe)
        if flat_s >= c.flat_exact_s:
            used |= (fs < b) & (fe > a)
            out.append(_no_variation(a, b, flat_s))
        elif (waves := rhythmic_waves(t, y, a, b, criteria)) is not None:
            out.append(_waves_only(a, b, *waves))
        elif b - a > c.max_apnoea_s and not spo2_fell(
            spo2_t, spo2_v, a, b + SPO2_LAG_S, c.spo2_fall_pct
        ):
            out.append(_too_long(a, b, criteria, bool(((spo2_t >= a) & (spo2_t <= b)).any())))
    for a, b in zip(fs[~used].tolist(), fe[~used].tolist(), strict=True):
        out.append(_no_variation(a, b, b - a))
    return sorted(out, key=lambda f: f.start_s)


def _waves_only(a: float, b: float, height_mmHg: float, rate_per_min: float) -> Finding:
    note = (
        "Low-amplitude capnogram: mouth breathing, a displaced cannula or shallow breathing - "
        f"check against the clinical notes. Rhythmic CO2 waves of about {height_mmHg:.0f} mmHg "
        f"at {rate_per_min:.0f}/min, too small to measure as breaths, fill {b - a:.0f} s: not "
        "read as apnoea."
    )
    return Finding("low_amplitude", "waves_only", a, b, (note,))


def _no_variation(a: float, b: float, flat_s: float) -> Finding:
    note = (
        f"{CHECK_TEXT} The CO2 samples did not change at all for {flat_s:.0f} s (no sensor "
        "noise): a channel that is not delivering or a disconnected line, not read as apnoea."
    )
    return Finding("co2_signal_absent", "no_variation", a, b, (note,))


def _too_long(a: float, b: float, criteria: Criteria, has_spo2: bool) -> Finding:
    c = criteria.co2_signal
    why = (
        f"SpO2 did not fall by {c.spo2_fall_pct:g} points"
        if has_spo2
        else "no SpO2 was recorded to confirm an apnoea"
    )
    note = (
        f"{CHECK_TEXT} No breath for {b - a:.0f} s, longer than {c.max_apnoea_s:g} s, and {why}: "
        "read as a line off the nose rather than apnoea (rule of this tool)."
    )
    return Finding("co2_signal_absent", "too_long", a, b, (note,))
