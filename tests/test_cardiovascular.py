"""Hypotension and bradycardia findings: thresholds against their sources, detection on planted
readings, World SIVA tier, and a session folder with BP analysed end to end."""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime

import numpy as np
import pytest

from sedreport.audit import rates
from sedreport.capnography.model import Trends
from sedreport.criteria import list_criteria_files, load_criteria
from sedreport.episodes import model
from sedreport.episodes.cardiovascular import (
    baseline_pulse_bpm,
    baseline_systolic_mmHg,
    detect_bradycardia,
    detect_hypotension,
)
from sedreport.episodes.severity import descriptor_tier
from sedreport.session import Assessment, Baseline, BloodPressure, Dose, Session

CRIT = load_criteria()
T0 = datetime(2026, 3, 14, 9, 0, tzinfo=UTC)


def _bp(times, systolic, diastolic=None) -> BloodPressure:
    s = np.asarray(systolic, dtype=float)
    d = np.asarray(diastolic, dtype=float) if diastolic is not None else s * 0.6
    return BloodPressure(np.asarray(times, dtype=float), s, d, d + (s - d) / 3)


def _dose(t: float) -> Dose:
    return Dose(t, "propofol", 40, "mg", "iv", "bolus", 40.0, 0.0, 2)


def _trends(pulse, step_s: float = 1.0) -> Trends:
    p = np.asarray(pulse, dtype=float)
    t = np.arange(p.size) * step_s
    e = np.array([])
    return Trends(e, e, e, e, e, t, np.full(p.size, 97.0), p, np.zeros(p.size, bool), 60.0)


@pytest.mark.parametrize("path", list_criteria_files(), ids=lambda p: p.name)
def test_thresholds_against_their_sources(path):
    items = {c.name: c for c in load_criteria(path).items if c.section == "cardiovascular"}
    # Systolic < 90 mmHg and pulse < 50/min as absolute limits: common practice.
    assert items["systolic_below_mmHg"].value == 90 and items["systolic_below_mmHg"].unit == "mmHg"
    assert items["systolic_below_mmHg"].source == "common practice"
    assert items["pulse_below_bpm"].value == 50 and items["pulse_below_bpm"].unit == "1/min"
    assert items["pulse_below_bpm"].source == "common practice"
    # World SIVA tool footnote "a change > 25 % from baseline" (Mason et al., Br J Anaesth
    # 2012; from memory).
    for key in ("systolic_fall_pct", "pulse_fall_pct"):
        assert items[key].value == 25 and items[key].unit == "%"
        assert "Mason" in items[key].source and "from memory" in items[key].source


def test_tiers_are_minor_descriptors_of_world_siva():
    # Mason et al., Br J Anaesth 2012, as reproduced in Trials 2022 Table 4: bradycardia and
    # hypotension are listed among the MINOR risk descriptors.
    assert descriptor_tier("hypotension", 300.0, None, CRIT)[0] == "minor"
    assert descriptor_tier("bradycardia", 60.0, None, CRIT)[0] == "minor"


def test_kinds_in_both_copies():
    assert "hypotension" in model.EPISODE_KINDS and "bradycardia" in model.EPISODE_KINDS
    assert rates.EPISODE_KINDS == model.EPISODE_KINDS


def test_hypotension_absolute_limit():
    s = Session("T", T0, bp=_bp([0, 180, 360, 540, 720], [120, 110, 88, 85, 112]))
    (f,) = detect_hypotension(replace(s, doses=(_dose(60.0),)), CRIT)
    # Baseline 120 (first reading before the first dose): 25 % below = 90; 110 is not low.
    assert (f.kind, f.start_s, f.end_s, f.resolved) == ("hypotension", 360.0, 720.0, True)
    assert "lowest systolic 85 mmHg" in f.notes[0]


def test_hypotension_relative_fall_from_assessment_baseline():
    # Baseline 160 mmHg: > 25 % fall means below 120 mmHg; 118 counts although above 90.
    a = Assessment(baseline=Baseline(systolic_mmHg=160.0, diastolic_mmHg=90.0))
    s = Session("T", T0, assessment=a, bp=_bp([0, 300, 600], [150, 118, 119]))
    (f,) = detect_hypotension(s, CRIT)
    assert (f.start_s, f.end_s, f.resolved) == (300.0, 600.0, False)
    assert baseline_systolic_mmHg(s) == (160.0, "the assessment's baseline")


def test_hypotension_no_baseline_when_first_reading_after_dose():
    s = Session("T", T0, doses=(_dose(0.0),), bp=_bp([60, 300], [100, 95]))
    assert baseline_systolic_mmHg(s)[0] is None
    assert detect_hypotension(s, CRIT) == []  # 100 and 95 are above the absolute 90


def test_bradycardia_sustained_only():
    pulse = np.r_[
        np.full(120, 70.0),
        np.full(20, 45.0),
        np.full(60, 70.0),
        np.full(40, 44.0),
        np.full(30, 70.0),
    ]
    s = Session("T", T0, doses=(_dose(120.0),))
    found = detect_bradycardia(s, _trends(pulse), CRIT)
    # The 20 s run is shorter than 30 s and is no finding; the 40 s run is one.
    assert [(f.start_s, f.end_s) for f in found] == [(200.0, 240.0)]
    assert baseline_pulse_bpm(s, _trends(pulse), CRIT) == 70.0


def test_bradycardia_relative_fall_and_missing_reading_ends_run():
    # Baseline 88/min: > 25 % fall means below 66/min; 60/min counts although above 50.
    pulse = np.r_[np.full(120, 88.0), np.full(40, 60.0), [np.nan], np.full(50, 60.0)]
    s = Session("T", T0, doses=(_dose(120.0),))
    found = detect_bradycardia(s, _trends(pulse), CRIT)
    assert [(f.start_s, f.end_s, f.resolved) for f in found] == [
        (120.0, 159.0, False),
        (161.0, 210.0, False),
    ]


def test_paced_pulse_on_one_value_is_a_reading():
    s = Session("T", T0, assessment=Assessment(baseline=Baseline(heart_rate_bpm=60.0)))
    assert detect_bradycardia(s, _trends(np.full(600, 60.0)), CRIT) == []
    (f,) = detect_bradycardia(s, _trends(np.full(600, 48.0)), CRIT)
    assert (f.start_s, f.end_s) == (0.0, 599.0)


def test_older_criteria_file_without_the_section_takes_the_default(tmp_path):
    import yaml

    from sedreport.criteria import DEFAULT_CRITERIA_FILE

    doc = yaml.safe_load(DEFAULT_CRITERIA_FILE.read_text(encoding="utf-8"))
    del doc["cardiovascular"]
    doc["name"] = "older"
    path = tmp_path / "older.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    crit = load_criteria(path)
    assert crit.cardiovascular == CRIT.cardiovascular
    item = crit.item("cardiovascular.systolic_below_mmHg")
    assert item.note.startswith("(from the shipped default.yaml: this criteria file has no")
