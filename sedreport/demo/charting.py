"""What a sedation nurse charts around the signals, added to an invented demo case.

:func:`charted` gives a scenario a cuff blood pressure every few minutes, a pre-sedation
assessment, depth-of-sedation scores during the procedure (MOAA/S, Chernik et al.,
J Clin Psychopharmacol 1990), the oxygen weaned after the procedure (an ``oxygen_flow``
event), two recovery scores on the modified Aldrete scale (Aldrete, J Clin Anesth 1995) and
the discharge from the recovery area. Every value is invented.
"""

from __future__ import annotations

from dataclasses import replace

from sedreport.demo.case import CaseSpec

#: A MOAA/S score of the target depth (5 awake ... 0 no response; deep sedation answers only
#: to repeated or painful stimulation; common practice reading of the scale).
_DEPTH_SCORE = {"minimal": 5.0, "moderate": 3.0, "deep": 2.0}


def _procedure_window(spec: CaseSpec) -> tuple[float, float]:
    times = {e[1]: e[0] for e in spec.events if e[1] in ("procedure_start", "procedure_end")}
    return times.get("procedure_start", 0.0), times.get("procedure_end", spec.duration_s)


def charting_events(spec: CaseSpec) -> tuple:
    """Depth scores, oxygen weaning, recovery scores and the discharge of a case."""
    start, end = _procedure_window(spec)
    after = spec.duration_s - end
    score = _DEPTH_SCORE.get(spec.target_depth, 4.0)
    depth = [
        (float(round(start + f * (end - start))), "depth_score", score, "MOAA/S")
        for f in (0.25, 0.75)
    ]
    recovery = [
        (float(round(end + 0.15 * after)), "oxygen_flow", 1.0, spec.oxygen_device),
        (float(round(end + 0.4 * after)), "recovery_score", 8.0, "modified Aldrete"),
        (float(round(end + 0.8 * after)), "recovery_score", 9.0, "modified Aldrete"),
        (float(round(end + 0.95 * after)), "discharge", None, "recovery area to ward"),
    ]
    return tuple(depth + recovery)


def assessment_of(spec: CaseSpec) -> dict:
    """An invented pre-sedation assessment consistent with the case's resting values."""
    systolic, diastolic = spec.bp_mmHg
    return {
        "mallampati": 3 if "obesity" in spec.patient.get("conditions", []) else 2,
        "fasting_solids_h": 8,
        "fasting_clear_h": 2,
        "allergies": [],
        "consent": True,
        "notes": "invented demo assessment",
        "baseline": {
            "systolic_mmHg": systolic,
            "diastolic_mmHg": diastolic,
            # a paced heart sits on its pacing rate
            "heart_rate_bpm": round(spec.paced_bpm or spec.physiology.hr_bpm),
            "spo2_pct": 97,
            "resp_rate_per_min": round(spec.physiology.rr_per_min),
        },
    }


def charted(spec: CaseSpec, bp_interval_s: float = 180.0) -> CaseSpec:
    """The case with BP readings, assessment and charting events (see the module)."""
    with_bp = replace(spec, bp_interval_s=bp_interval_s)
    events = tuple(sorted(spec.events + charting_events(spec), key=lambda e: e[0]))
    return replace(with_bp, events=events, assessment=assessment_of(with_bp))
