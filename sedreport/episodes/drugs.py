"""Doses linked to an episode: what was given in the look-back window before its onset."""

from __future__ import annotations

from sedreport.criteria import Criteria
from sedreport.episodes.model import LinkedDose
from sedreport.session import Patient, Session


def lean_body_weight_kg(weight_kg: float, height_cm: float, sex: str) -> float | None:
    """Lean body weight by the formula of Janmahasatian et al., Clin Pharmacokinet 2005.

    ``LBW = 9270 W / (6680 + 216 BMI)`` for men and ``9270 W / (8780 + 244 BMI)`` for women,
    with W in kg and BMI in kg/m2.

    Parameters
    ----------
    weight_kg, height_cm : float
        Total body weight (kg) and height (cm); both must be positive.
    sex : str
        ``male`` or ``female``; any other value returns None (the formula is sex-specific).
    """
    if weight_kg <= 0 or height_cm <= 0:
        raise ValueError("weight_kg and height_cm must be positive")
    bmi = weight_kg / (height_cm / 100.0) ** 2
    if sex == "male":
        return 9270.0 * weight_kg / (6680.0 + 216.0 * bmi)
    if sex == "female":
        return 9270.0 * weight_kg / (8780.0 + 244.0 * bmi)
    return None


def patient_lbw_kg(patient: Patient) -> float | None:
    """The patient's lean body weight (kg), or None when weight, height or sex is unknown."""
    if not patient.weight_kg or not patient.height_cm:
        return None
    return lean_body_weight_kg(patient.weight_kg, patient.height_cm, patient.sex)


def _per(amount: float, kg: float | None) -> float | None:
    return amount / kg if kg else None


def link_doses(session: Session, onset_s: float, criteria: Criteria) -> tuple[LinkedDose, ...]:
    """Doses given from ``onset_s - dose_lookback_s`` up to and including ``onset_s``.

    Each carries seconds before onset, mg/kg for boluses (None for infusion lines or when the
    weight is unknown), and the drug's cumulative mg at onset (boluses plus integrated
    infusions, :meth:`Session.cumulative_mg`) per kg total and per kg lean body weight.
    """
    lookback = criteria.linking.dose_lookback_s
    weight = session.patient.weight_kg or None
    lbw = patient_lbw_kg(session.patient)
    out = []
    for d in session.doses:
        if not (onset_s - lookback <= d.time_s <= onset_s):
            continue
        cum = float(session.cumulative_mg(d.drug, onset_s))
        out.append(
            LinkedDose(
                drug=d.drug,
                dose=d.dose,
                unit=d.unit,
                route=d.route,
                kind=d.kind,
                time_s=d.time_s,
                seconds_before_onset=float(onset_s - d.time_s),
                dose_mg_per_kg=_per(d.amount_mg, weight) if d.kind == "bolus" else None,
                cumulative_mg=cum,
                cumulative_mg_per_kg=_per(cum, weight),
                cumulative_mg_per_kg_lbw=_per(cum, lbw),
            )
        )
    return tuple(out)
