"""Ground truth of a simulated case in the ``sedreport-truth/1`` format.

Everything is on the session clock (seconds, after ``clock_offset_s``) and follows the time
conventions of DESIGN.md. Episodes are what was PLANTED; where a planted episode ramps in
(hypoventilation, rebreathing) its edges are the first and last breath whose noise-free planted
value meets the default criterion (EtCO2 > 50 mmHg or >= 10 mmHg over the pre-dose baseline;
FiCO2 > 5 mmHg), so that scorers compare like with like. A ``signal_loss`` episode has the gap's source
(``co2`` / ``spo2``) as its subtype and repeats the entry of ``gaps``; a probe-off stretch of the
oximeter (readings of 0) whose step between readings exceeds the default SpO2 gap rule (10 s)
is an ``spo2`` signal loss too. ``artefacts`` lists motion, probe-off and start-up stretches.

The CO2 findings: ``low_amplitude`` from the first to the last breath of a planted
mouth-breathing stretch whose planted amplitude is below half the pre-dose amplitude;
``etco2_fall`` from the first to the last breath of a planted fall whose planted EtCO2 is at
least 10 mmHg under the pre-dose baseline; ``co2_signal_absent`` over a planted disconnection,
from the end of the last breath before it to the start of the first after it (the breaths in
between are not recorded).
"""

from __future__ import annotations

import numpy as np

from sedreport.criteria import default_criteria
from sedreport.demo.case import (
    CaseSpec,
    Etco2Fall,
    Gap,
    Hypoventilation,
    MouthBreathing,
    Obstruction,
    ProbeOff,
    Rebreathing,
    Spo2Artefact,
)
from sedreport.demo.haemodynamics import cardiovascular_truth
from sedreport.demo.monitor import probe_windows
from sedreport.demo.simulate import Signals, disconnected_spans
from sedreport.demo.truth_events import truth_events

TRUTH_FORMAT = "sedreport-truth/1"
#: Truth is labelled by the shipped default criteria, read from the file (one definition):
#: these values date the edges of ramped plants (see module doc).
_DEFAULT = default_criteria()
HYPERCAPNIA_MMHG = _DEFAULT.hypoventilation.etco2_high_mmHg
HYPERCAPNIA_RISE_MMHG = _DEFAULT.hypoventilation.rise_from_baseline_mmHg
BRADYPNOEA_PER_MIN = _DEFAULT.hypoventilation.bradypnoea_rr_per_min
REBREATHING_FICO2_MMHG = _DEFAULT.rebreathing.fico2_above_mmHg
DESATURATION_PCT = _DEFAULT.desaturation.spo2_below_pct
SPO2_GAP_S = _DEFAULT.signal_loss.spo2_gap_s
LOW_AMPLITUDE_FRACTION = _DEFAULT.low_amplitude.amplitude_fraction
ETCO2_FALL_MMHG = _DEFAULT.etco2_fall.fall_from_baseline_mmHg


def _r(x: float, nd: int = 3) -> float:
    return round(float(x), nd)


def gap_edges(spec: CaseSpec, sig: Signals) -> list[dict]:
    """Each planted gap from the last sample before it to the first sample after it."""
    out = []
    for g in spec.planted_of(Gap):
        t = sig.co2_time_s if g.source == "co2" else sig.spo2_time_s
        before = t[t < g.start_s]
        after = t[t >= g.start_s + g.duration_s]
        if before.size and after.size:
            out.append({"source": g.source, "start_s": _r(before[-1]), "end_s": _r(after[0])})
    return out


def recorded_breaths(spec: CaseSpec, sig: Signals, gaps: list[dict]) -> np.ndarray:
    """Mask of schedule breaths wholly inside recorded CO2 data."""
    s = sig.schedule
    keep = (s.start_s >= sig.co2_time_s[0]) & (s.end_s <= sig.co2_time_s[-1])
    for g in gaps:
        if g["source"] == "co2":
            keep &= (s.end_s < g["start_s"]) | (s.start_s > g["end_s"])
    for a, b in disconnected_spans(spec, s):
        keep &= (s.end_s <= a) | (s.start_s >= b)
    return keep


def baseline_etco2_mmHg(spec: CaseSpec, sig: Signals) -> float:
    """Median planted EtCO2 of the breaths before the first sedative dose."""
    s = sig.schedule
    pre = s.etco2_mmHg[s.end_s < spec.first_dose_s]
    return float(np.median(pre)) if pre.size else float("nan")


def _episode(kind: str, subtype: str | None, start_s: float, end_s: float) -> dict:
    return {"kind": kind, "subtype": subtype, "start_s": _r(start_s), "end_s": _r(end_s)}


def _apnoeas(sig: Signals) -> list[dict]:
    s = sig.schedule
    return [
        _episode("apnoea", None, s.end_s[i - 1], s.start_s[i])
        for i in sig.apnoea_resume_index
        if 0 < i < len(s)
    ]


def _hypoventilations(spec: CaseSpec, sig: Signals) -> list[dict]:
    s = sig.schedule
    base = baseline_etco2_mmHg(spec, sig)
    out = []
    for h in spec.planted_of(Hypoventilation):
        window = (s.start_s >= h.start_s) & (s.start_s <= h.start_s + h.duration_s + h.ramp_s)
        high = (s.etco2_mmHg > HYPERCAPNIA_MMHG) | (s.etco2_mmHg >= base + HYPERCAPNIA_RISE_MMHG)
        idx = np.flatnonzero(window & high)
        if idx.size:
            sub = "bradypnoeic" if h.rr_per_min < BRADYPNOEA_PER_MIN else "hypercapnic"
            out.append(_episode("hypoventilation", sub, s.start_s[idx[0]], s.end_s[idx[-1]]))
    return out


def _rebreathings(spec: CaseSpec, sig: Signals) -> list[dict]:
    s = sig.schedule
    out = []
    for r in spec.planted_of(Rebreathing):
        window = (s.start_s >= r.start_s - 30.0) & (
            s.start_s <= r.start_s + r.duration_s + r.ramp_s
        )
        idx = np.flatnonzero(window & (s.fico2_mmHg > REBREATHING_FICO2_MMHG))
        if idx.size:
            last = idx[-1]
            # The breath that closes the last raised inspiration is the next one.
            end = s.start_s[last + 1] if last + 1 < len(s) else s.end_s[last]
            out.append(_episode("rebreathing", None, s.start_s[idx[0]], end))
    return out


def _sloped_plateaus(spec: CaseSpec, sig: Signals) -> list[dict]:
    s = sig.schedule
    out = []
    for o in spec.planted_of(Obstruction):
        window = (s.start_s >= o.start_s) & (s.start_s < o.start_s + o.duration_s)
        idx = np.flatnonzero(window & s.obstructed)
        if idx.size:
            out.append(_episode("sloped_plateau", None, s.start_s[idx[0]], s.end_s[idx[-1]]))
    return out


def _planted_runs(spec: CaseSpec, sig: Signals, kind: str, plant: type, test) -> list[dict]:
    """First to last breath inside each planted window whose planted values pass ``test``."""
    s = sig.schedule
    out = []
    for m in spec.planted_of(plant):
        window = (s.start_s >= m.start_s) & (s.start_s <= m.start_s + m.duration_s + 30.0)
        idx = np.flatnonzero(window & test(s))
        if idx.size:
            out.append(_episode(kind, None, s.start_s[idx[0]], s.end_s[idx[-1]]))
    return out


def _co2_findings(spec: CaseSpec, sig: Signals) -> list[dict]:
    """Low-amplitude stretches, EtCO2 falls and disconnections (see the module doc)."""
    base = baseline_etco2_mmHg(spec, sig)
    out = _planted_runs(
        spec,
        sig,
        "low_amplitude",
        MouthBreathing,
        lambda s: (s.etco2_mmHg - s.fico2_mmHg) < LOW_AMPLITUDE_FRACTION * base,
    )
    out += _planted_runs(
        spec, sig, "etco2_fall", Etco2Fall, lambda s: s.etco2_mmHg <= base - ETCO2_FALL_MMHG
    )
    out += [
        _episode("co2_signal_absent", None, a, b) for a, b in disconnected_spans(spec, sig.schedule)
    ]
    return out


def _desaturations(sig: Signals) -> list[dict]:
    """Runs from the first SpO2 sample < 90 % to the first back >= 90 % (artefacts excluded)."""
    t = sig.spo2_time_s[~sig.spo2_artefact]
    low = sig.spo2_pct[~sig.spo2_artefact] < DESATURATION_PCT
    out = []
    k = 0
    while k < low.size:
        if low[k]:
            j = k
            while j < low.size and low[j]:
                j += 1
            end = t[j] if j < low.size else t[-1]
            out.append(_episode("desaturation", None, t[k], end))
            k = j
        k += 1
    return out


def _runs(t: np.ndarray, mask: np.ndarray) -> list[tuple[float, float]]:
    """First and last time of each run of True."""
    edges = np.diff(np.r_[0, mask.astype(np.int8), 0])
    starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    return [(t[a], t[b - 1]) for a, b in zip(starts, stops, strict=True)]


def _artefacts(spec: CaseSpec, sig: Signals) -> list[dict]:
    t = sig.spo2_time_s
    out = []
    for a in spec.planted_of(Spo2Artefact):
        inside = t[(t >= a.start_s) & (t < a.start_s + a.duration_s)]
        if inside.size:
            out.append(
                {
                    "source": "spo2",
                    "start_s": _r(inside[0]),
                    "end_s": _r(inside[-1]),
                    "kind": a.kind,
                }
            )
    if t.size:
        off, startup = probe_windows(spec, t, float(t[0]))
        for kind, mask in (("probe_off", off), ("acquisition", startup)):
            out += [
                {"source": "spo2", "start_s": _r(a), "end_s": _r(b), "kind": kind}
                for a, b in _runs(t, mask)
            ]
    return sorted(out, key=lambda x: x["start_s"])


def probe_off_gaps(spec: CaseSpec, sig: Signals) -> list[dict]:
    """Each probe-off stretch whose step between readings exceeds the default SpO2 gap rule:
    from the last reading before it to the first reading after it (``gaps`` entries)."""
    out = []
    t, v = sig.spo2_time_s, sig.spo2_pct
    for p in spec.planted_of(ProbeOff):
        before = t[(t < p.start_s) & (v > 0)]
        after = t[(t >= p.start_s + p.duration_s) & (v > 0)]
        if before.size and after.size and after[0] - before[-1] > SPO2_GAP_S:
            out.append({"source": "spo2", "start_s": _r(before[-1]), "end_s": _r(after[0])})
    return out


def build_truth(spec: CaseSpec, sig: Signals, seed: int) -> dict:
    """The truth dictionary of one simulated case (JSON-ready)."""
    gaps = gap_edges(spec, sig) + probe_off_gaps(spec, sig)
    keep = recorded_breaths(spec, sig, gaps)
    s = sig.schedule.select(keep)
    episodes = (
        _apnoeas(sig)
        + _hypoventilations(spec, sig)
        + _rebreathings(spec, sig)
        + _sloped_plateaus(spec, sig)
        + _co2_findings(spec, sig)
        + _desaturations(sig)
        + [_episode("signal_loss", g["source"], g["start_s"], g["end_s"]) for g in gaps]
        + cardiovascular_truth(spec, sig.bp[0])
    )
    episodes.sort(key=lambda e: (e["start_s"], e["kind"]))
    return {
        "format": TRUTH_FORMAT,
        "session_id": spec.session_id,
        "scenario": spec.scenario,
        "seed": int(seed),
        "breaths": {
            "start_s": [_r(x) for x in s.start_s],
            "end_s": [_r(x) for x in s.end_s],
            "etco2_mmHg": [_r(x, 2) for x in s.etco2_mmHg],
            "fico2_mmHg": [_r(x, 2) for x in s.fico2_mmHg],
        },
        "episodes": episodes,
        "events": truth_events(spec, sig, episodes),
        "outcome": list(spec.outcome),
        "gaps": gaps,
        "artefacts": _artefacts(spec, sig),
    }
