"""Invented blood pressure and pulse responses of the demo physiology.

Non-invasive cuff readings every ``CaseSpec.bp_interval_s`` around the resting pressure
``CaseSpec.bp_mmHg``: the sedative drugs lower systolic and diastolic by up to 15 % of rest
as their effect builds (propofol most; an invented, qualitative model of the usual fall in
pressure after induction, common practice), with reading-to-reading noise of SD 2 mmHg
(clipped to +-4 mmHg). :class:`~sedreport.demo.case.LowBloodPressure` plants a further fall
(a hypotension), :class:`~sedreport.demo.case.SlowPulse` draws the pulse down (a bradycardia).
"""

from __future__ import annotations

import numpy as np

from sedreport.demo.case import CaseSpec, LowBloodPressure, SlowPulse
from sedreport.demo.pharmacology import respiratory_effect

#: Largest background fall of pressure from the drugs, fraction of rest (invented).
DRUG_FALL_FRACTION = 0.15
#: First cuff reading, seconds after the start of the recording.
FIRST_READING_S = 30.0


def _trapezoid(t_s: np.ndarray, start_s: float, end_s: float, ramp_s: float) -> np.ndarray:
    up = np.clip((t_s - start_s) / max(ramp_s, 1e-9), 0.0, 1.0)
    down = np.clip(1.0 - (t_s - end_s) / max(ramp_s, 1e-9), 0.0, 1.0)
    return np.minimum(up, down)


def reading_times_s(spec: CaseSpec) -> np.ndarray:
    """Cuff reading times, seconds on the session clock (empty without ``bp_interval_s``)."""
    if spec.bp_interval_s is None:
        return np.array([])
    return np.arange(FIRST_READING_S, spec.duration_s, float(spec.bp_interval_s))


def blood_pressure(
    spec: CaseSpec, rng: np.random.Generator
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Cuff readings ``(time_s, systolic_mmHg, diastolic_mmHg)``, whole mmHg."""
    t = reading_times_s(spec)
    if t.size == 0:
        return t, t, t
    doses = [(d[0], d[1], d[2], d[3]) for d in spec.doses]
    propofol = [d for d in doses if d[1] == "propofol"]
    others = [d for d in doses if d[1] != "propofol"]
    fall = DRUG_FALL_FRACTION * (
        0.8 * respiratory_effect(propofol, t, spec.weight_kg)[0]
        + 0.2 * respiratory_effect(others, t, spec.weight_kg)[0]
    )
    for p in spec.planted_of(LowBloodPressure):
        fall = fall + p.fall_pct / 100.0 * _trapezoid(
            t, p.start_s, p.start_s + p.duration_s, p.ramp_s
        )
    noise = np.clip(rng.normal(0.0, 2.0, (2, t.size)), -4.0, 4.0)
    sys_rest, dia_rest = spec.bp_mmHg
    systolic = np.rint(sys_rest * (1.0 - fall) + noise[0])
    diastolic = np.rint(dia_rest * (1.0 - fall) + noise[1])
    return t, systolic, diastolic


def with_slow_pulse(spec: CaseSpec, grid_s: np.ndarray, pulse_bpm: np.ndarray) -> np.ndarray:
    """The pulse drawn towards each :class:`SlowPulse`'s rate inside its window."""
    out = np.asarray(pulse_bpm, dtype=float)
    for p in spec.planted_of(SlowPulse):
        w = _trapezoid(grid_s, p.start_s, p.start_s + p.duration_s, p.ramp_s)
        out = out * (1.0 - w) + p.pulse_bpm * w
    return out


def cardiovascular_truth(spec: CaseSpec, bp_time_s: np.ndarray) -> list[dict]:
    """Truth episodes of the planted hypotension and bradycardia.

    Hypotension runs from the first cuff reading at or after the end of the fall's ramp to the
    first reading after the window's end and its ramp back (readings are discrete: the
    scenarios put no reading on a ramp); bradycardia from the plant's start plus half its ramp
    to its end plus half its ramp (the pulse crosses the limit mid-ramp).
    """
    out = []
    for p in spec.planted_of(LowBloodPressure):
        inside = bp_time_s[bp_time_s >= p.start_s + p.ramp_s]
        after = bp_time_s[bp_time_s >= p.start_s + p.duration_s + p.ramp_s]
        if inside.size and after.size:
            out.append(_episode("hypotension", float(inside[0]), float(after[0])))
    for p in spec.planted_of(SlowPulse):
        half = p.ramp_s / 2.0
        out.append(_episode("bradycardia", p.start_s + half, p.start_s + p.duration_s + half))
    return out


def _episode(kind: str, start_s: float, end_s: float) -> dict:
    return {"kind": kind, "subtype": None, "start_s": round(start_s, 3), "end_s": round(end_s, 3)}
