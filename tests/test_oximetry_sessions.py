"""SpO2 as real oximeters export it, through the whole analysis (issue 9, SpO2 half).

Invented 1 Hz traces with 4-s held display updates and the monitor's ``0`` for "no reading",
the shapes counted in 128 recorded sedation cases (/work/shared/real-oximetry/README.md).
Desaturation: SpO2 < 90 % for >= 30 s (Cravero et al., Pediatrics 2006). Expected values are
worked out by hand beside each check.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from sedreport.analysis import analyse_session
from sedreport.criteria import default_criteria
from sedreport.session import OximetryTrend, Patient, Session


def _session(spo2, pulse=None) -> Session:
    spo2 = np.asarray(spo2, dtype=float)
    t = np.arange(spo2.size, dtype=float)
    pulse = np.full(t.size, 72.0) + (np.arange(t.size) // 8) % 3 if pulse is None else pulse
    return Session(
        session_id="OXI-1",
        started=datetime(2026, 3, 14, 9, 0, tzinfo=UTC),
        folder=Path("."),
        patient=Patient(ref="P-1", sex="female", weight_kg=70.0, height_cm=165.0),
        spo2=OximetryTrend(t, spo2, np.asarray(pulse, dtype=float), 1.0),
    )


def _held(values, update_s=4):
    return np.repeat(np.asarray(values, dtype=float), update_s)


def _kinds(analysis, kind):
    return [(e.start_s, e.end_s) for e in analysis.episodes if e.kind == kind]


def test_zeros_inside_a_shallow_dip_never_join_two_dips():
    """Two shallow dips (89-88 %, 40 s each) with a 40-s probe-off stretch of zeros between
    them, the readings on either side below 90 %: two desaturations and an SpO2 signal loss
    between them, never one episode across the zeros (issue 9)."""
    dip = [89, 88, 88, 88, 88, 88, 88, 88, 88, 89]  # 40 s below 90 %
    s = _held(np.r_[[97] * 30, [93], dip, [0] * 10, dip, [93], [97] * 30])
    a = analyse_session(_session(s))
    # first dip 124-164 s, zeros 164-204 s, second dip 204-244 s; back at 93 % at 244 s.
    assert _kinds(a, "desaturation") == [(124.0, 164.0), (204.0, 244.0)]
    assert _kinds(a, "signal_loss") == [(163.0, 204.0)]
    assert a.quality.spo2_no_reading_samples == 40
    # the acquisition rule keeps 88 % after the zeros: it is the level that follows
    assert a.quality.spo2_artefact_by_rule["acquisition"] == 0
    assert a.summary.min_spo2_pct == 88.0


def test_a_short_flicker_of_zeros_is_not_bridged_either():
    """A single 4-s zero update inside a 70-s low stretch: two pieces of 32 s and 34 s."""
    low = [88] * 8 + [0] + [88] * 9
    s = _held(np.r_[[97] * 30, low, [97] * 30])
    a = analyse_session(_session(s))
    assert _kinds(a, "desaturation") == [(120.0, 152.0), (156.0, 192.0)]
    assert _kinds(a, "signal_loss") == []  # 5 s between readings: not a gap (10 s rule)
    # 68 s of low readings, each held 1 s; the 4 s without a reading are not counted
    assert a.summary.time_below_spo2_threshold_s == 68.0


def test_case_of_zeros_has_no_nadir_and_reports_signal_loss():
    """Zero throughout, then ``1`` % for 7 s (as one real export): no reading at all."""
    s = np.r_[np.zeros(4140), np.ones(7)]
    a = analyse_session(_session(s))
    assert a.summary.min_spo2_pct is None
    assert a.summary.time_below_spo2_threshold_s is None
    assert _kinds(a, "desaturation") == []
    assert _kinds(a, "signal_loss") == [(0.0, 4146.0)]
    assert a.quality.spo2_no_reading_samples == 4147 and a.quality.spo2_samples == 4147
    assert a.summary.spo2_coverage_pct in (None, 0.0)


def test_leading_and_trailing_no_reading_are_signal_loss():
    s = np.r_[np.zeros(300), _held([97, 96, 97] * 20), np.full(200, np.nan)]
    a = analyse_session(_session(s))
    assert _kinds(a, "signal_loss") == [(0.0, 300.0), (539.0, 739.0)]
    assert a.quality.spo2_blank_samples == 200
    d = a.quality.to_dict()
    assert d["spo2_no_reading_samples"] == 500 and d["spo2_artefact_by_rule"]["spike"] == 0


def test_start_up_readings_are_not_a_nadir_nor_a_desaturation():
    """The probe acquires reading 81-87 % for 12 s, then the case's 97 %."""
    s = _held(np.r_[[81, 84, 87], [97, 96, 97, 98] * 20])
    a = analyse_session(_session(s))
    assert a.summary.min_spo2_pct == 96.0
    assert a.quality.spo2_artefact_by_rule["acquisition"] == 12
    assert _kinds(a, "desaturation") == []


def test_fast_recovery_ends_the_desaturation_where_it_happened():
    """86 % held 40 s, then 95 % in one display update: one episode ending at the step."""
    s = _held(np.r_[[97] * 20, [93, 90], [86] * 10, [95] * 20, [97] * 20])
    a = analyse_session(_session(s))
    assert _kinds(a, "desaturation") == [(88.0, 128.0)]
    assert a.quality.spo2_artefact_samples == 0


def test_two_short_dips_around_a_recovery_stay_apart():
    """Dips of 28 s below 90 % with a 20-s recovery to 95 % between (each 86 -> 95 % in one
    update): the old jump rule deleted the recovery and joined them into one episode of more
    than a minute; each is now a dip below 30 s."""
    dip = [93, 89, 86, 86, 86, 86, 86, 87]
    s = _held(np.r_[[97] * 20, dip, [95] * 5, dip, [95], [97] * 20])
    a = analyse_session(_session(s))
    assert _kinds(a, "desaturation") == []
    assert a.quality.spo2_artefact_samples == 0


def test_paced_pulse_keeps_its_readings():
    """Pulse at exactly 60/min (paced) for 30 min with SpO2 at 99-100 %: nothing marked."""
    s = _held(np.tile([99, 100, 100, 100, 99, 99], 75))
    a = analyse_session(_session(s, np.full(s.size, 60.0)))
    assert a.quality.spo2_artefact_samples == 0
    assert a.summary.min_spo2_pct == 99.0


def test_rules_come_from_the_active_criteria():
    """A criteria file with min_reading_pct 1 reads the final 1 % as a (very low) reading."""
    import dataclasses

    c = default_criteria()
    loose = dataclasses.replace(
        c, oximetry=dataclasses.replace(c.oximetry, min_reading_pct=1.0, acquisition_s=0.0)
    )
    s = np.r_[_held([97] * 30), np.ones(7)]
    a = analyse_session(_session(s), loose)
    assert a.summary.min_spo2_pct == 1.0
    assert analyse_session(_session(s)).summary.min_spo2_pct == 97.0
