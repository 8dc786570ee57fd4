"""Pulse-oximeter trend cleaning: artefact marking, never silent removal.

Samples are marked, counted and set to NaN in the returned copies; the input is not modified.
The rules and their values (each a plain, stated rule; none of them diagnoses anything):

1. **Impossible value**: SpO2 <= 0 % (probe off / no signal, which many oximeters export as
   0) or SpO2 > 100 %. Common practice.
2. **Impossible jump**: a change of at least ``JUMP_MIN_PCT`` (4 %) between consecutive
   samples at more than ``JUMP_RATE_PCT_S`` (5 %/s). Displayed SpO2 is an average over
   several seconds, and even during apnoea it falls over tens of seconds, not in one step;
   a step like 97 -> 70 % within a second is motion or probe artefact (common practice;
   values chosen here). The samples from the jump until the trend comes back within
   ``RETURN_PCT`` (3 %) of the level before the jump are marked, when that return happens
   within ``RETURN_MAX_S`` (60 s); otherwise only the jump sample is marked, because a new
   level that persists cannot be called an artefact by this rule.
3. **Flat-lined probe**: SpO2 and pulse both exactly unchanged (or pulse absent) for at
   least ``FLAT_S`` (60 s); a frozen display repeats its last value while a living pulse
   rate moves by a beat or two (common practice; value chosen here). When the file has no
   pulse column at all, a run of identical SpO2 must last ``FLAT_NO_PULSE_S`` (120 s) and
   be below 100 %, because a steady 100 % is the expected reading on supplemental oxygen.

Pulse values <= 0 or > 300 bpm are set to NaN in the pulse output (not counted as SpO2
artefact); pulse is also NaN wherever SpO2 is marked as artefact.
"""

from __future__ import annotations

import numpy as np

from sedreport.session import OximetryTrend

JUMP_MIN_PCT = 4.0
JUMP_RATE_PCT_S = 5.0
RETURN_PCT = 3.0
RETURN_MAX_S = 60.0
FLAT_S = 60.0
FLAT_NO_PULSE_S = 120.0
PULSE_MAX_BPM = 300.0


def _impossible(spo2: np.ndarray) -> np.ndarray:
    """Rule 1: finite SpO2 outside (0, 100] %."""
    finite = np.isfinite(spo2)
    return finite & ((spo2 <= 0.0) | (spo2 > 100.0))


def _jumps(t: np.ndarray, spo2: np.ndarray, usable: np.ndarray) -> np.ndarray:
    """Rule 2 on the usable samples; returns a mask over all samples.

    The loop runs over detected jumps (rare events), not over samples.
    """
    mask = np.zeros(spo2.size, dtype=bool)
    idx = np.flatnonzero(usable)
    if idx.size < 2:
        return mask
    tv, sv = t[idx], spo2[idx]
    step = np.diff(sv)
    rate = np.abs(step) / np.maximum(np.diff(tv), 1e-9)
    jump_at = np.flatnonzero((np.abs(step) >= JUMP_MIN_PCT) & (rate > JUMP_RATE_PCT_S)) + 1
    covered_until = -1
    for j in jump_at:
        if j <= covered_until:
            continue
        before = sv[j - 1]
        later = np.flatnonzero(np.abs(sv[j:] - before) <= RETURN_PCT)
        if later.size and tv[j + later[0]] - tv[j] <= RETURN_MAX_S:
            stop = j + later[0]
            mask[idx[j:stop]] = True
            covered_until = stop  # the step back closes this artefact
        else:
            mask[idx[j]] = True
    return mask


def _runs(values: np.ndarray) -> np.ndarray:
    """Run id of each sample: a new run starts where the value changes (NaN == NaN)."""
    same = (values[1:] == values[:-1]) | (np.isnan(values[1:]) & np.isnan(values[:-1]))
    return np.r_[0, np.cumsum(~same)]


def _flat(t: np.ndarray, spo2: np.ndarray, pulse: np.ndarray) -> np.ndarray:
    """Rule 3: long runs of identical SpO2 with a frozen or absent pulse."""
    n = spo2.size
    if n < 2:
        return np.zeros(n, dtype=bool)
    no_pulse_file = not np.isfinite(pulse).any()
    p = np.where(np.isfinite(pulse) & (pulse > 0), pulse, np.nan)
    run_s = _runs(spo2)
    run_p = _runs(p) if not no_pulse_file else np.zeros(n, dtype=np.int64)
    joint = np.r_[0, np.cumsum((run_s[1:] != run_s[:-1]) | (run_p[1:] != run_p[:-1]))]
    first = np.r_[0, np.flatnonzero(np.diff(joint)) + 1]
    last = np.r_[first[1:] - 1, n - 1]
    dur = t[last] - t[first]
    limit = FLAT_NO_PULSE_S if no_pulse_file else FLAT_S
    bad = (dur >= limit) & np.isfinite(spo2[first])
    if no_pulse_file:
        bad &= spo2[first] < 100.0
    return bad[joint]


def clean_oximetry(trend: OximetryTrend) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mark oximeter artefacts and return cleaned copies of the trend.

    Parameters
    ----------
    trend : OximetryTrend
        SpO2 (%) and pulse (bpm) on the session clock, seconds. Not modified.

    Returns
    -------
    spo2_pct : ndarray
        SpO2 with artefact samples set to NaN, %.
    pulse_bpm : ndarray
        Pulse with artefact samples and impossible pulse values set to NaN, bpm.
    artefact_mask : ndarray of bool
        True where SpO2 was marked by rule 1, 2 or 3 of the module docstring. Non-finite
        input samples are missing data, not artefacts: they stay NaN and are not marked.
    """
    t = np.asarray(trend.time_s, dtype=float)
    spo2 = np.asarray(trend.spo2_pct, dtype=float)
    pulse = np.asarray(trend.pulse_bpm, dtype=float)
    if pulse.shape != spo2.shape:
        pulse = np.full(spo2.shape, np.nan)
    bad = _impossible(spo2)
    usable = np.isfinite(spo2) & ~bad
    bad |= _jumps(t, spo2, usable)
    bad |= _flat(t, spo2, pulse) & np.isfinite(spo2)
    spo2_out = np.where(bad, np.nan, spo2)
    pulse_ok = np.isfinite(pulse) & (pulse > 0) & (pulse <= PULSE_MAX_BPM)
    pulse_out = np.where(bad | ~pulse_ok, np.nan, pulse)
    return spo2_out, pulse_out, bad
