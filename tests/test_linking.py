"""Linking episodes to doses, interventions, lead time and severity; the JSON/csv contract.

The sessions here are built by hand (no ingest, no breath detection): planted breaths, SpO2
samples, doses and events with known times, so every expected number is simple arithmetic
from the planted values (stated beside each check).
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest

from sedreport.analysis import Analysis
from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import load_criteria
from sedreport.episodes import detect_episodes, lean_body_weight_kg, link_doses
from sedreport.episodes.summary import summarise_quality, summarise_session
from sedreport.render.csv_text import episodes_to_frame
from sedreport.render.json_text import episodes_to_dict
from sedreport.session import Capnogram, Dose, Event, OximetryTrend, Patient, Session

CRIT = load_criteria()


def breaths_at(starts, exp_s=2.4, etco2=38.0) -> BreathTable:
    s = np.asarray(starts, dtype=float)
    n = s.size
    et = np.broadcast_to(np.asarray(etco2, dtype=float), (n,)).copy()
    return BreathTable(
        start_s=s,
        end_s=s + exp_s,
        etco2_mmHg=et,
        fico2_mmHg=np.zeros(n),
        rr_per_min=np.r_[np.nan, 60.0 / np.diff(s)],
        upstroke_s=np.full(n, 0.2),
        phase3_slope_mmHg_s=np.full(n, 1.0),
        phase3_slope_norm_per_s=np.full(n, 0.03),
        valid=np.ones(n, dtype=bool),
        reason=("",) * n,
    )


def bolus(t, drug, mg, line):
    return Dose(t, drug, mg, "mg", "iv", "bolus", mg, 0.0, line)


def planted_session():
    """600 s at 1 Hz SpO2 and breaths every 4 s, an apnoea 200.0-240.0 s planted by a pause.

    SpO2 97 % except 85 % from 225 s to 270 s. Propofol 40 mg at 0 s and 30 mg at 180 s,
    an airway repositioning at 230 s, a verbal stimulus at 500 s (outside the 2-min window).
    """
    starts = np.r_[np.arange(0.0, 197.7, 4.0), np.arange(240.0, 600.0, 4.0)]
    # last breath before the pause starts at 196 s and ends at 198.4 s
    breaths = breaths_at(starts)
    t = np.arange(0.0, 600.0, 1.0)
    spo2 = np.where((t >= 225) & (t < 270), 85.0, 97.0)
    co2_t = np.arange(0.0, 600.0, 0.1)
    session = Session(
        session_id="LINK-1",
        started=datetime(2026, 3, 14, 9, 0, tzinfo=UTC),
        folder=Path("."),
        patient=Patient(ref="P-1", sex="male", weight_kg=80.0, height_cm=170.0),
        # sensor noise only (the breaths are planted in the table): a trace of exact zeros
        # would read as a CO2 channel that is not delivering
        co2=Capnogram(co2_t, np.abs(np.random.default_rng(1).normal(0, 0.2, co2_t.size)), 10.0),
        spo2=OximetryTrend(t, spo2, np.full(t.size, np.nan), 1.0),
        doses=(bolus(0.0, "propofol", 40.0, 2), bolus(180.0, "propofol", 30.0, 3)),
        events=(
            Event(230.0, "airway_repositioning", None, "", 2),
            Event(500.0, "verbal_stimulus", None, "", 3),
            Event(590.0, "procedure_end", None, "", 4),
        ),
    )
    z = np.empty(0)
    trends = Trends(z, z, z, z, z, t, spo2, np.full(t.size, np.nan), np.zeros(t.size, bool), 60.0)
    baseline = Baseline(38.0, 15.0, 0.03, 0.2, (0.0, 120.0), "planted", 30)
    return session, breaths, trends, baseline


def analysis_of(session, breaths, trends, baseline, criteria=CRIT) -> Analysis:
    episodes = detect_episodes(session, breaths, trends, baseline, criteria)
    quality = summarise_quality(session, breaths, trends, baseline, criteria)
    summary = summarise_session(session, breaths, trends, episodes, criteria, quality)
    return Analysis(session, criteria, breaths, trends, baseline, episodes, summary, quality)


# ----- lean body weight -------------------------------------------------------------------------
def test_lean_body_weight_check_value():
    # Janmahasatian et al., Clin Pharmacokinet 2005: male 80 kg, 170 cm -> 58.6 kg.
    assert lean_body_weight_kg(80.0, 170.0, "male") == pytest.approx(58.6, abs=0.05)


def test_lean_body_weight_female_formula_and_unknown_sex():
    # Janmahasatian 2005 female form 9270 W / (8780 + 244 BMI); 60 kg, 165 cm: BMI 22.04
    bmi = 60.0 / 1.65**2
    assert lean_body_weight_kg(60.0, 165.0, "female") == pytest.approx(
        9270 * 60 / (8780 + 244 * bmi)
    )
    assert lean_body_weight_kg(60.0, 165.0, "unknown") is None
    with pytest.raises(ValueError):
        lean_body_weight_kg(0.0, 165.0, "male")


# ----- doses and interventions ------------------------------------------------------------------
def test_link_doses_lookback_cumulative_and_per_kg():
    session, *_ = planted_session()
    linked = link_doses(session, 198.4, CRIT)
    assert [(d.time_s, d.dose) for d in linked] == [(0.0, 40.0), (180.0, 30.0)]
    assert linked[1].seconds_before_onset == pytest.approx(18.4)
    assert linked[1].dose_mg_per_kg == pytest.approx(30.0 / 80.0)
    assert linked[1].cumulative_mg == pytest.approx(70.0)
    assert linked[1].cumulative_mg_per_kg == pytest.approx(70.0 / 80.0)
    lbw = lean_body_weight_kg(80.0, 170.0, "male")
    assert linked[1].cumulative_mg_per_kg_lbw == pytest.approx(70.0 / lbw)
    # the 10-min look-back (common practice) drops the 0 s dose for an onset at 700 s
    assert [d.time_s for d in link_doses(session, 700.0, CRIT)] == [180.0]


def test_infusion_is_integrated_into_cumulative_dose():
    session, *_ = planted_session()
    inf = Dose(100.0, "propofol", 60.0, "mg/h", "iv", "infusion", 0.0, 60.0, 4)
    s2 = Session(**{**session.__dict__, "doses": (*session.doses, inf)})
    linked = link_doses(s2, 198.4, CRIT)
    # 40 + 30 mg boluses plus 60 mg/h for 98.4 s
    assert linked[-1].kind == "infusion" and linked[-1].dose_mg_per_kg is None
    assert linked[-1].cumulative_mg == pytest.approx(70.0 + 60.0 * 98.4 / 3600.0)


def test_episode_linking_end_to_end_on_planted_session():
    session, breaths, trends, baseline = planted_session()
    episodes = detect_episodes(session, breaths, trends, baseline, CRIT)
    kinds = [(e.id, e.kind) for e in episodes]
    assert kinds == [("E1", "apnoea"), ("E2", "desaturation")]
    apnoea, desat = episodes
    assert (apnoea.start_s, apnoea.end_s) == (pytest.approx(198.4), 240.0)
    assert [i.event for i in apnoea.interventions] == ["airway_repositioning"]
    assert apnoea.time_to_first_intervention_s == pytest.approx(230.0 - 198.4)
    assert apnoea.time_to_resolution_s == pytest.approx(240.0 - 198.4)
    # capnographic lead: first SpO2 < 90 % at 225 s, apnoea onset 198.4 s
    assert apnoea.capnographic_lead_s == pytest.approx(225.0 - 198.4)
    assert apnoea.severity == "minor"
    assert apnoea.start_time == "2026-03-14T09:03:18.400+00:00"
    assert (desat.start_s, desat.end_s) == (225.0, 270.0)
    assert desat.min_spo2_pct == 85.0
    assert desat.capnographic_lead_s is None
    # 85 % for 45 s: 75-90 % for <= 60 s is a minor descriptor (Mason 2012, as reproduced in
    # Trials 2022 Table 4); the apnoea and the desaturation it causes are one event, graded once
    assert desat.severity == "minor"
    assert apnoea.event == desat.event == "A1"
    # the airway repositioning at 230 s began 5 s after the desaturation's onset
    assert [i.event for i in desat.interventions] == ["airway_repositioning"]


# ----- output contract --------------------------------------------------------------------------
CONTRACT_TOP = {
    "session_id", "started", "criteria", "episodes", "events", "brief_dips", "summary", "quality",
}  # fmt: skip
CONTRACT_EPISODE = {
    "id", "kind", "subtype", "start_s", "end_s", "duration_s", "start_time", "severity",
    "peak_etco2_mmHg", "min_spo2_pct", "min_rr_per_min", "preceding_doses", "interventions",
    "notes", "time_to_first_intervention_s", "time_to_resolution_s", "capnographic_lead_s",
    "event", "infusions_at_onset", "doses_during", "cumulative_at_onset",
}  # fmt: skip
SUMMARY_KEYS = {
    "sedation_start_s", "sedation_end_s", "sedation_duration_s", "co2_coverage_pct",
    "spo2_coverage_pct", "episodes_by_kind", "episodes_by_severity", "longest_apnoea_s",
    "min_spo2_pct", "spo2_threshold_pct", "time_below_spo2_threshold_s", "max_etco2_mmHg", "median_rr_per_min", "n_breaths",
    "n_valid_breaths", "attention", "events_by_severity",
}  # fmt: skip
QUALITY_KEYS = {
    "sources", "findings", "warnings", "invalid_breaths", "spo2_artefact_samples", "criteria",
}  # fmt: skip


def test_json_contract_keys_and_valid_json():
    a = analysis_of(*planted_session())
    d = episodes_to_dict(a)
    assert set(d) == CONTRACT_TOP
    assert all(set(e) == CONTRACT_EPISODE for e in d["episodes"])
    assert SUMMARY_KEYS <= set(d["summary"])
    assert QUALITY_KEYS <= set(d["quality"])
    text = json.dumps(d, allow_nan=False)  # NaN would raise: must be null
    back = json.loads(text)
    assert back["episodes"][0]["preceding_doses"][0]["drug"] == "propofol"
    assert back["criteria"]["thresholds"]["apnoea"]["min_duration_s"]["value"] == 15.0


def test_summary_numbers_on_planted_session():
    a = analysis_of(*planted_session())
    s = a.summary.to_dict()
    # sedation from the first dose (0 s) to procedure_end (590 s)
    assert (s["sedation_start_s"], s["sedation_end_s"]) == (0.0, 590.0)
    assert s["co2_coverage_pct"] == pytest.approx(100.0)
    assert s["spo2_coverage_pct"] == pytest.approx(100.0)
    # 45 samples at 85 %, each held for 1 s
    assert (
        s["time_below_spo2_threshold_s"] == pytest.approx(45.0) and s["spo2_threshold_pct"] == 90.0
    )
    assert s["longest_apnoea_s"] == pytest.approx(240.0 - 198.4)
    assert s["episodes_by_kind"]["apnoea"] == 1
    assert s["min_spo2_pct"] == 85.0


def test_csv_frame_one_row_per_episode():
    a = analysis_of(*planted_session())
    frame = episodes_to_frame(a)
    assert list(frame["id"]) == ["E1", "E2"]
    assert frame.loc[0, "n_interventions"] == 1


def test_session_without_spo2_still_analyses():
    session, breaths, _, baseline = planted_session()
    s2 = Session(**{**session.__dict__, "spo2": None})
    z = np.empty(0)
    trends = Trends(z, z, z, z, z, z, z, z, np.empty(0, bool), 60.0)
    a = analysis_of(s2, breaths, trends, baseline)
    assert [e.kind for e in a.episodes] == ["apnoea"]
    assert a.summary.min_spo2_pct is None
    assert any("No SpO2 stream" in x for x in a.quality.limitations)
    json.dumps(episodes_to_dict(a), allow_nan=False)


def test_criteria_resolution_order(tmp_path):
    from sedreport.analysis import resolve_criteria
    from sedreport.criteria import CRITERIA_DIR

    session, *_ = planted_session()
    assert resolve_criteria(session, None).name == "default"
    (tmp_path / "mine.yaml").write_bytes((CRITERIA_DIR / "apnoea_30s.yaml").read_bytes())
    own = Session(**{**session.__dict__, "folder": tmp_path, "criteria_file": "mine.yaml"})
    assert resolve_criteria(own, None).apnoea.min_duration_s == 30.0
    # a file given on the command line wins over the session's own
    assert resolve_criteria(own, CRITERIA_DIR / "strict.yaml").name == "strict"
