"""Demo scenarios for adverse-event grading: a brief deep desaturation and an event with an
outcome. Invented cases (codes made up); doses in the usual adult ranges for procedural sedation
(common practice). The apnoea -> desaturation -> bag-mask event is ``desaturation_bag_mask`` in
:mod:`sedreport.demo.scenarios`.
"""

from __future__ import annotations

from sedreport.demo.case import Apnoea, CaseSpec, Physiology, Spo2Dip


def brief_deep_desaturation() -> CaseSpec:
    """A short airway obstruction (seen as a pause of about 22 s in the CO2) and an SpO2 dip to 72 %
    that stays below 90 % for under 30 s: a sentinel descriptor by the World SIVA tool
    (SpO2 < 75 % at any time), though shorter than the desaturation listing minimum."""
    return CaseSpec(
        session_id="DEMO-EUS-08",
        scenario="brief_deep_desaturation",
        description="Deep propofol sedation for endoscopic ultrasound; a short obstruction with "
        "a brief deep SpO2 dip to 72 %, relieved by jaw thrust.",
        started="2026-11-12T10:20:00+01:00",
        duration_s=1380.0,
        area="endoscopy",
        procedure="endoscopic ultrasound",
        target_depth="deep",
        patient={
            "ref": "P-D808",
            "age_years": 71,
            "sex": "female",
            "weight_kg": 64,
            "height_cm": 158,
            "asa_class": 2,
            "conditions": [],
        },
        team={"sedation_provider": "RN-03", "proceduralist": "DR-11"},
        physiology=Physiology(rr_per_min=15.0, etco2_alv_mmHg=39.0, hr_bpm=78.0),
        doses=(
            (200.0, "fentanyl", 25.0, "mcg", "iv"),
            (225.0, "propofol", 40.0, "mg", "iv"),
            (520.0, "propofol", 20.0, "mg", "iv"),
            (900.0, "propofol", 20.0, "mg", "iv"),
        ),
        events=(
            (270.0, "procedure_start", None, ""),
            (560.0, "airway_repositioning", None, "jaw thrust"),
            (1290.0, "procedure_end", None, ""),
        ),
        planted=(
            Apnoea(onset_s=540.0, pause_s=25.0),
            Spo2Dip(start_s=566.0, duration_s=36.0, nadir_pct=72.0, ramp_s=14.0),
        ),
        flow_l_min=2.0,
        co2_rate_hz=25.0,
        spo2_offset_s=-3.0,
    )


def outcome_unplanned_admission() -> CaseSpec:
    """A desaturation to 85 % for about 40 s (minor descriptor) after vomiting, treated with
    suction and more oxygen (minor interventions); the patient was admitted overnight for
    observation (unplanned hospitalisation, moderate): the outcome raises the event's tier."""
    return CaseSpec(
        session_id="DEMO-UGI-09",
        scenario="outcome_unplanned_admission",
        description="Moderate sedation gastroscopy; retching and a desaturation to 85 % treated "
        "with suction and oxygen; unplanned overnight admission (outcome recorded).",
        started="2026-12-03T13:10:00+01:00",
        duration_s=1320.0,
        area="endoscopy",
        procedure="gastroscopy",
        target_depth="moderate",
        patient={
            "ref": "P-D909",
            "age_years": 79,
            "sex": "male",
            "weight_kg": 70,
            "height_cm": 172,
            "asa_class": 3,
            "conditions": [],
        },
        team={"sedation_provider": "RN-05", "proceduralist": "DR-02"},
        physiology=Physiology(rr_per_min=16.0, etco2_alv_mmHg=40.0, hr_bpm=82.0),
        doses=(
            (210.0, "midazolam", 2.0, "mg", "iv"),
            (240.0, "fentanyl", 50.0, "mcg", "iv"),
        ),
        events=(
            (290.0, "procedure_start", None, ""),
            (700.0, "note", None, "retching"),
            (712.0, "suction", None, "oropharynx"),
            (724.0, "oxygen_increase", 6.0, "nasal cannula"),
            (1200.0, "procedure_end", None, ""),
        ),
        planted=(Spo2Dip(start_s=706.0, duration_s=58.0, nadir_pct=85.0, ramp_s=10.0),),
        flow_l_min=2.0,
        co2_rate_hz=20.0,
        outcome=("unplanned_admission",),
    )
