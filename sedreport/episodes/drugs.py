"""Doses linked to an episode: what was given in the look-back window before its onset."""

from __future__ import annotations

from sedreport.criteria import Criteria
from sedreport.episodes.model import DrugTotal, LinkedDose, RunningInfusion
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


def _linked(session: Session, d, onset_s: float) -> LinkedDose:
    """One dose line as a :class:`LinkedDose` with its drug's cumulative amount at onset."""
    weight = session.patient.weight_kg or None
    cum = float(session.cumulative_mg(d.drug, onset_s))
    lbw = patient_lbw_kg(session.patient)
    return LinkedDose(
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


def doses_during(session: Session, onset_s: float, end_s: float) -> tuple[LinkedDose, ...]:
    """Doses given after ``onset_s`` up to and including ``end_s`` (seconds before onset < 0).

    The cumulative amounts are those at onset, like :func:`link_doses`.
    """
    return tuple(_linked(session, d, onset_s) for d in session.doses if onset_s < d.time_s <= end_s)


def cumulative_at(session: Session, t_s: float) -> tuple[DrugTotal, ...]:
    """Each drug given up to ``t_s`` with its cumulative mg and mg/kg (total body weight)."""
    weight = session.patient.weight_kg or None
    out = []
    for drug in session.drugs:
        mg = float(session.cumulative_mg(drug, t_s))
        if mg > 0:
            out.append(DrugTotal(drug, mg, _per(mg, weight)))
    return tuple(out)


def infusions_at(session: Session, t_s: float) -> tuple[RunningInfusion, ...]:
    """Infusions running at ``t_s``: the last infusion line of each drug at or before it,
    when its rate is above zero (rate as written and in mg/h).

    Examples
    --------
    >>> from datetime import datetime, timezone
    >>> from sedreport.session import Dose, Session
    >>> d = Dose(60.0, "propofol", 50.0, "mcg/kg/min", "iv", "infusion", 0.0, 240.0, 2)
    >>> s = Session("X", datetime(2026, 1, 1, tzinfo=timezone.utc), doses=(d,))
    >>> [(i.drug, i.rate, i.unit, i.rate_mg_per_h) for i in infusions_at(s, 300.0)]
    [('propofol', 50.0, 'mcg/kg/min', 240.0)]
    """
    last: dict[str, object] = {}
    for d in session.doses:
        if d.kind == "infusion" and d.time_s <= t_s:
            last[d.drug] = d
    return tuple(
        RunningInfusion(d.drug, d.dose, d.unit, d.rate_mg_per_h, d.time_s)
        for d in last.values()
        if d.rate_mg_per_h > 0
    )


def link_doses(session: Session, onset_s: float, criteria: Criteria) -> tuple[LinkedDose, ...]:
    """Doses given from ``onset_s - dose_lookback_s`` up to and including ``onset_s``.

    Each carries seconds before onset, mg/kg for boluses (None for infusion lines or when the
    weight is unknown), and the drug's cumulative mg at onset (boluses plus integrated
    infusions, :meth:`Session.cumulative_mg`) per kg total and per kg lean body weight.
    """
    lookback = criteria.linking.dose_lookback_s
    return tuple(
        _linked(session, d, onset_s)
        for d in session.doses
        if onset_s - lookback <= d.time_s <= onset_s
    )
