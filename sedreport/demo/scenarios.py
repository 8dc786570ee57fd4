"""Named demo scenarios: invented cases, each a :class:`~sedreport.demo.case.CaseSpec` recipe.

Every scenario starts with more than 3 minutes of pre-dose breathing (the analysis takes the
patient's baseline from before the first sedative dose). Doses are in the usual adult ranges
for procedural sedation (common practice): propofol boluses 20-50 mg, midazolam 1-2 mg,
fentanyl 25-50 mcg. Codes for patients, providers and areas are invented.
"""

from __future__ import annotations

from sedreport.demo.case import (
    Apnoea,
    CaseSpec,
    Gap,
    Hypoventilation,
    LowBloodPressure,
    MouthBreathing,
    Obstruction,
    Physiology,
    ProbeOff,
    Rebreathing,
    SlowPulse,
    Spo2Artefact,
)
from sedreport.demo.charting import charted
from sedreport.demo.oximetry import OxygenParams
from sedreport.demo.scenarios_events import brief_deep_desaturation, outcome_unplanned_admission
from sedreport.demo.signal_scenarios import bite_block_gastroscopy, line_off_hyperventilation

#: Depth score note: the MOAA/S scale (Chernik et al., J Clin Psychopharmacol 1990).
_MOAAS = "MOAA/S"


def _quiet_colonoscopy() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-COLON-01",
        scenario="quiet_colonoscopy",
        description="Moderate sedation colonoscopy without respiratory events.",
        started="2026-03-10T09:05:00+01:00",
        duration_s=1680.0,
        area="endoscopy",
        procedure="colonoscopy",
        target_depth="moderate",
        patient={
            "ref": "P-D101",
            "age_years": 58,
            "sex": "female",
            "weight_kg": 68,
            "height_cm": 165,
            "asa_class": 2,
            "conditions": [],
        },
        team={"sedation_provider": "RN-07", "proceduralist": "DR-21"},
        physiology=Physiology(rr_per_min=16.0, etco2_alv_mmHg=41.0, hr_bpm=76.0),
        doses=(
            (210.0, "midazolam", 2.0, "mg", "iv"),
            (250.0, "fentanyl", 50.0, "mcg", "iv"),
            (900.0, "midazolam", 1.0, "mg", "iv"),
        ),
        events=(
            (300.0, "procedure_start", None, ""),
            (600.0, "depth_score", 4.0, _MOAAS),
            (1560.0, "procedure_end", None, ""),
        ),
        flow_l_min=2.0,
        co2_rate_hz=50.0,
    )


def _upper_gi_apnoea() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-UGI-02",
        scenario="upper_gi_apnoea",
        description="Deep sedation gastroscopy; apnoea after a propofol bolus, ended by airway "
        "repositioning; later a vagal slowing of the pulse (bradycardia).",
        started="2026-04-21T14:30:00+02:00",
        duration_s=1320.0,
        area="endoscopy",
        procedure="gastroscopy",
        target_depth="deep",
        patient={
            "ref": "P-D202",
            "age_years": 45,
            "sex": "male",
            "weight_kg": 82,
            "height_cm": 178,
            "asa_class": 1,
            "conditions": [],
        },
        team={"sedation_provider": "RN-14", "proceduralist": "DR-03"},
        physiology=Physiology(rr_per_min=14.0, etco2_alv_mmHg=42.0, hr_bpm=68.0),
        doses=(
            (200.0, "fentanyl", 25.0, "mcg", "iv"),
            (230.0, "propofol", 50.0, "mg", "iv"),
            (480.0, "propofol", 30.0, "mg", "iv"),
            (760.0, "propofol", 20.0, "mg", "iv"),
        ),
        events=(
            (280.0, "procedure_start", None, ""),
            (333.0, "airway_repositioning", None, "jaw thrust"),
            (1200.0, "procedure_end", None, ""),
        ),
        # A vagal slowing of the pulse to 44/min while the scope passes (a bradycardia).
        planted=(
            Apnoea(onset_s=312.0, pause_s=40.0),
            SlowPulse(start_s=620.0, duration_s=70.0, pulse_bpm=44.0),
        ),
        flow_l_min=3.0,
        co2_rate_hz=25.0,
        co2_units="kPa",
        co2_time_style="iso8601",
        spo2_time_style="iso8601",
        co2_offset_s=-4.0,
    )


def _radiology_opioid_hypoventilation() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-IR-03",
        scenario="radiology_opioid_hypoventilation",
        description="Opioid-heavy biliary drainage; bradypnoeic hypoventilation with rising EtCO2 "
        "while SpO2 stays normal on oxygen; stimulation and naloxone.",
        started="2026-05-06T10:15:00+02:00",
        duration_s=2400.0,
        area="interventional_radiology",
        procedure="percutaneous biliary drainage",
        target_depth="moderate",
        patient={
            "ref": "P-D303",
            "age_years": 71,
            "sex": "male",
            "weight_kg": 76,
            "height_cm": 172,
            "asa_class": 3,
            "conditions": ["hypertension"],
        },
        team={"sedation_provider": "RN-22", "proceduralist": "DR-11"},
        physiology=Physiology(rr_per_min=14.0, etco2_alv_mmHg=40.0, hr_bpm=80.0),
        doses=(
            (200.0, "midazolam", 1.0, "mg", "iv"),
            (220.0, "fentanyl", 50.0, "mcg", "iv"),
            (600.0, "fentanyl", 50.0, "mcg", "iv"),
            (860.0, "fentanyl", 50.0, "mcg", "iv"),
            (1100.0, "midazolam", 1.0, "mg", "iv"),
            (1500.0, "naloxone", 100.0, "mcg", "iv"),
        ),
        events=(
            (300.0, "procedure_start", None, ""),
            (1380.0, "verbal_stimulus", None, "no response"),
            (1430.0, "physical_stimulus", None, ""),
            (1500.0, "reversal_agent", None, "naloxone 100 mcg iv"),
            (2250.0, "procedure_end", None, ""),
        ),
        planted=(
            Hypoventilation(
                start_s=1000.0, duration_s=600.0, rr_per_min=5.8, etco2_rise_mmHg=18.0, ramp_s=150.0
            ),
        ),
        flow_l_min=2.0,
        co2_rate_hz=20.0,
        spo2_offset_s=3.0,
    )


def _copd_sloped_plateau() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-BRONCH-04",
        scenario="copd_sloped_plateau",
        description="COPD patient with a sloped baseline plateau and a stretch of obstructive "
        "(shark-fin) breaths during bronchoscopy.",
        started="2026-06-17T08:40:00+02:00",
        duration_s=2100.0,
        area="bronchoscopy",
        procedure="EBUS bronchoscopy",
        target_depth="moderate",
        patient={
            "ref": "P-D404",
            "age_years": 68,
            "sex": "female",
            "weight_kg": 58,
            "height_cm": 158,
            "asa_class": 3,
            "conditions": ["copd"],
        },
        team={"sedation_provider": "RN-05", "proceduralist": "DR-17"},
        physiology=Physiology(
            rr_per_min=18.0,
            etco2_alv_mmHg=44.0,
            slope_mmHg_s=3.5,
            upstroke_s=0.3,
            curvature=1.5,
            hr_bpm=88.0,
            oxygen=OxygenParams(aa_gradient_mmHg=40.0),
        ),
        doses=(
            (200.0, "midazolam", 1.0, "mg", "iv"),
            (230.0, "fentanyl", 25.0, "mcg", "iv"),
            (700.0, "midazolam", 1.0, "mg", "iv"),
        ),
        events=(
            (320.0, "procedure_start", None, ""),
            (960.0, "suction", None, ""),
            (980.0, "procedure_paused", None, "wheeze"),
            (1000.0, "oxygen_increase", 3.0, ""),
            (1150.0, "note", None, "procedure resumed"),
            (1980.0, "procedure_end", None, ""),
        ),
        planted=(Obstruction(start_s=900.0, duration_s=240.0),),
        flow_l_min=1.0,
        co2_rate_hz=40.0,
        co2_units="percent",
        co2_time_style="iso8601",
        spo2_time_style="iso8601",
        co2_offset_s=2.5,
        barometric_mmHg=745.0,
    )


def _rebreathing_under_drapes() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-CARD-05",
        scenario="rebreathing_under_drapes",
        description="Device implantation under drapes; raised inspired CO2 baseline until the "
        "oxygen flow is raised and the drapes lifted.",
        started="2026-07-02T13:20:00+02:00",
        duration_s=1080.0,
        area="cardiology",
        procedure="pacemaker implantation",
        target_depth="minimal",
        patient={
            "ref": "P-D505",
            "age_years": 79,
            "sex": "male",
            "weight_kg": 70,
            "height_cm": 170,
            "asa_class": 3,
            "conditions": ["heart_failure"],
        },
        team={"sedation_provider": "RN-31", "proceduralist": "DR-08"},
        physiology=Physiology(rr_per_min=15.0, etco2_alv_mmHg=39.0, hr_bpm=70.0),
        doses=(
            (200.0, "midazolam", 1.0, "mg", "iv"),
            (215.0, "fentanyl", 25.0, "mcg", "iv"),
            (700.0, "fentanyl", 25.0, "mcg", "iv"),
        ),
        events=(
            (280.0, "procedure_start", None, ""),
            (820.0, "oxygen_increase", 5.0, "drapes lifted"),
            (1020.0, "procedure_end", None, ""),
        ),
        planted=(Rebreathing(start_s=560.0, duration_s=270.0, fico2_mmHg=9.0, ramp_s=6.0),),
        flow_l_min=2.0,
        co2_rate_hz=100.0,
        co2_units="kPa",
        spo2_offset_s=-2.0,
        spo2_update_s=4,
        paced_bpm=70.0,
    )


def _gap_and_probe_artefact() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-COLON-06",
        scenario="gap_and_probe_artefact",
        description="Propofol colonoscopy with a disconnected CO2 sampling line, an SpO2 probe "
        "motion artefact, low start-up readings, the oximeter probe off twice (0 exported) and "
        "a deep mouth-breathing stretch (a low-amplitude capnogram); no respiratory episode.",
        started="2026-09-15T11:00:00+02:00",
        duration_s=1500.0,
        area="endoscopy",
        procedure="colonoscopy",
        target_depth="moderate",
        patient={
            "ref": "P-D606",
            "age_years": 36,
            "sex": "female",
            "weight_kg": 61,
            "height_cm": 168,
            "asa_class": 1,
            "conditions": [],
        },
        team={"sedation_provider": "RN-07", "proceduralist": "DR-26"},
        physiology=Physiology(rr_per_min=16.0, etco2_alv_mmHg=40.0, hr_bpm=72.0),
        doses=(
            (190.0, "fentanyl", 50.0, "mcg", "iv"),
            (220.0, "propofol", 30.0, "mg", "iv"),
            (420.0, "propofol", 20.0, "mg", "iv"),
            (700.0, "propofol", 20.0, "mg", "iv"),
            (1000.0, "propofol", 20.0, "mg", "iv"),
        ),
        events=(
            (260.0, "procedure_start", None, ""),
            (900.0, "note", None, "CO2 sampling line reconnected"),
            (1420.0, "procedure_end", None, ""),
        ),
        planted=(
            Gap(source="co2", start_s=822.0, duration_s=75.0),
            Spo2Artefact(start_s=1050.0, duration_s=30.0),
            ProbeOff(start_s=942.0, duration_s=8.0, startup_s=8.0, startup_low_pct=9.0),
            ProbeOff(start_s=1142.0, duration_s=4.0, startup_s=4.0, startup_low_pct=7.0),
            MouthBreathing(start_s=1200.0, duration_s=120.0, dilution=0.3),
        ),
        flow_l_min=2.0,
        co2_rate_hz=40.0,
        co2_time_style="iso8601",
        spo2_time_style="iso8601",
        co2_offset_s=-1.5,
        spo2_offset_s=2.0,
        spo2_update_s=4,
        spo2_startup_s=40.0,
        spo2_startup_low_pct=12.0,
    )


def _desaturation_bag_mask() -> CaseSpec:
    return CaseSpec(
        session_id="DEMO-ERCP-07",
        scenario="desaturation_bag_mask",
        description="Deep propofol sedation for ERCP in an obese patient with OSA; apnoea with "
        "desaturation needing bag-mask ventilation; later a fall in blood pressure under the "
        "infusion (hypotension).",
        started="2026-10-08T15:45:00+02:00",
        duration_s=1650.0,
        area="endoscopy",
        procedure="ERCP",
        target_depth="deep",
        patient={
            "ref": "P-D707",
            "age_years": 62,
            "sex": "male",
            "weight_kg": 118,
            "height_cm": 175,
            "asa_class": 3,
            "conditions": ["obesity", "osa"],
        },
        team={"sedation_provider": "RN-14", "proceduralist": "DR-09"},
        physiology=Physiology(
            rr_per_min=16.0,
            etco2_alv_mmHg=40.0,
            hr_bpm=84.0,
            oxygen=OxygenParams(aa_gradient_mmHg=15.0, apnoea_drop_mmHg_s=1.6, wash_in_s=60.0),
        ),
        doses=(
            (200.0, "fentanyl", 50.0, "mcg", "iv"),
            (230.0, "propofol", 40.0, "mg", "iv"),
            (240.0, "propofol", 75.0, "mcg/kg/min", "iv"),
            (560.0, "propofol", 20.0, "mg", "iv"),
            (700.0, "propofol", 50.0, "mcg/kg/min", "iv"),
            (1450.0, "propofol", 0.0, "mcg/kg/min", "iv"),
        ),
        events=(
            (300.0, "procedure_start", None, ""),
            (665.0, "airway_repositioning", None, "chin lift"),
            (690.0, "procedure_paused", None, ""),
            (700.0, "bag_mask_ventilation", None, ""),
            (900.0, "note", None, "procedure resumed"),
            (1500.0, "procedure_end", None, ""),
        ),
        # Pressure falls under the propofol infusion (a hypotension) from about 1050 s; cuff
        # readings at 1110 and 1290 s are low, the one at 1470 s after the infusion stops is not.
        planted=(
            Apnoea(onset_s=640.0, pause_s=72.0, bag_mask=True, assist_s=60.0),
            LowBloodPressure(start_s=1050.0, duration_s=300.0, fall_pct=22.0),
        ),
        flow_l_min=2.0,
        co2_rate_hz=50.0,
        co2_units="percent",
    )


SCENARIOS: dict[str, CaseSpec] = {
    spec.scenario: charted(spec)
    for spec in (
        _quiet_colonoscopy(),
        _upper_gi_apnoea(),
        _radiology_opioid_hypoventilation(),
        _copd_sloped_plateau(),
        _rebreathing_under_drapes(),
        _gap_and_probe_artefact(),
        _desaturation_bag_mask(),
        bite_block_gastroscopy(),
        line_off_hyperventilation(),
        brief_deep_desaturation(),
        outcome_unplanned_admission(),
    )
}
