"""Demo scenarios of what recorded nasal capnograms do that clean traces don't.

Invented cases (codes, doses and timings made up) carrying, with ground truth: deep
mouth-breathing stretches with a bite block (a low-amplitude capnogram at an unchanged rate),
cardiogenic oscillations in an apnoeic pause, oxygen-flow dilution, stepped and two-hump
expirations, a disconnected sampling line (exact zeros), and a fall of EtCO2 from
hyperventilation. Doses are in the usual adult ranges for procedural sedation (common
practice).
"""

from __future__ import annotations

from sedreport.demo.case import (
    Apnoea,
    CaseSpec,
    Disconnection,
    Etco2Fall,
    MouthBreathing,
    Physiology,
)


def bite_block_gastroscopy() -> CaseSpec:
    """Mouth breathing round a bite block, an apnoea with cardiogenic oscillations, more O2."""
    return CaseSpec(
        session_id="DEMO-UGI-08",
        scenario="bite_block_mouth_breathing",
        description="Propofol gastroscopy with a bite block: two deep mouth-breathing stretches "
        "(low-amplitude capnogram, not hypoventilation), an apnoea with cardiogenic "
        "oscillations ended by a jaw thrust, oxygen raised to 6 L/min; stepped and two-hump "
        "expirations throughout.",
        started="2026-11-03T08:40:00+01:00",
        duration_s=1500.0,
        area="endoscopy",
        procedure="gastroscopy",
        target_depth="deep",
        patient={
            "ref": "P-D808",
            "age_years": 52,
            "sex": "female",
            "weight_kg": 70,
            "height_cm": 166,
            "asa_class": 2,
            "conditions": [],
        },
        team={"sedation_provider": "RN-03", "proceduralist": "DR-04"},
        physiology=Physiology(
            rr_per_min=15.0,
            etco2_alv_mmHg=40.0,
            hr_bpm=78.0,
            stepped_fraction=0.25,
            hump_fraction=0.2,
        ),
        doses=(
            (220.0, "fentanyl", 25.0, "mcg", "iv"),
            (240.0, "propofol", 40.0, "mg", "iv"),
            (560.0, "propofol", 30.0, "mg", "iv"),
            (960.0, "propofol", 20.0, "mg", "iv"),
        ),
        events=(
            (280.0, "procedure_start", None, ""),
            (620.0, "airway_repositioning", None, "jaw thrust"),
            (1000.0, "oxygen_increase", 6.0, "nasal cannula"),
            (1400.0, "procedure_end", None, ""),
        ),
        planted=(
            MouthBreathing(start_s=360.0, duration_s=150.0, dilution=0.25),
            Apnoea(onset_s=590.0, pause_s=40.0, cardiogenic_mmHg=2.5),
            MouthBreathing(start_s=1120.0, duration_s=120.0, dilution=0.3),
        ),
        flow_l_min=2.0,
        co2_rate_hz=20.0,
    )


def line_off_hyperventilation() -> CaseSpec:
    """A disconnected sampling line and a fall of EtCO2 from hyperventilation."""
    return CaseSpec(
        session_id="DEMO-IR-09",
        scenario="line_off_etco2_fall",
        description="Midazolam-fentanyl biliary drainage: the CO2 sampling line is disconnected "
        "for about 80 s (exact zeros, the patient breathing on), and EtCO2 falls by 16 mmHg for "
        "about 2 min with faster breathing during a painful step; stepped expirations.",
        started="2026-11-17T13:10:00+01:00",
        duration_s=1560.0,
        area="interventional_radiology",
        procedure="biliary drainage",
        target_depth="moderate",
        patient={
            "ref": "P-D909",
            "age_years": 71,
            "sex": "male",
            "weight_kg": 77,
            "height_cm": 174,
            "asa_class": 3,
            "conditions": [],
        },
        team={"sedation_provider": "RN-12", "proceduralist": "DR-11"},
        physiology=Physiology(
            rr_per_min=14.0, etco2_alv_mmHg=41.0, hr_bpm=70.0, stepped_fraction=0.3
        ),
        doses=(
            (230.0, "fentanyl", 50.0, "mcg", "iv"),
            (250.0, "midazolam", 2.0, "mg", "iv"),
            (900.0, "fentanyl", 25.0, "mcg", "iv"),
        ),
        events=(
            (300.0, "procedure_start", None, ""),
            (700.0, "note", None, "CO2 sampling line reconnected"),
            (1450.0, "procedure_end", None, ""),
        ),
        planted=(
            Disconnection(start_s=600.0, duration_s=80.0),
            Etco2Fall(start_s=960.0, duration_s=150.0, fall_mmHg=16.0, ramp_s=12.0),
        ),
        flow_l_min=3.0,
        co2_rate_hz=25.0,
    )
