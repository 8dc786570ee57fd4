"""Blood pressure source, ``assessment:`` block and the new events: reading and refusals."""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from click.testing import CliRunner
from test_ingest_support import make_session

from sedreport.cli import cli
from sedreport.errors import SessionError
from sedreport.ingest import load_session
from sedreport.session import Assessment, Baseline

BP_CSV = "time,systolic,diastolic,mean\n0,132,78,\n3,120,80,95\n6,,,\n9,118,70,\n"
BP_SOURCE = {"sources.bp": {"file": "bp.csv"}}
ASSESSMENT = {
    "mallampati": 2,
    "fasting_solids_h": 8,
    "fasting_clear_h": 2.5,
    "allergies": ["Latex"],
    "consent": True,
    "notes": "loose upper incisor",
    "baseline": {
        "systolic_mmHg": 132,
        "diastolic_mmHg": 78,
        "heart_rate_bpm": 72,
        "spo2_pct": 97,
        "resp_rate_per_min": 14,
    },
}


def test_bp_read_with_mean_computed_and_blank_row_counted(tmp_path):
    s = load_session(make_session(tmp_path, BP_SOURCE, {"bp.csv": BP_CSV}))
    np.testing.assert_array_equal(s.bp.time_s, [0.0, 3.0, 9.0])
    np.testing.assert_array_equal(s.bp.systolic_mmHg, [132.0, 120.0, 118.0])
    # One-third pulse-pressure approximation (common practice): 78 + 54/3 = 96; 70 + 48/3 = 86.
    # The written mean (95) is kept as given.
    np.testing.assert_allclose(s.bp.mean_mmHg, [96.0, 95.0, 86.0])
    assert any(
        f.kind == "dropped" and f.source == "bp" and "line 4" in f.message for f in s.findings
    )
    src = s.source("bp")
    assert src.rows == 4 and len(src.sha256) == 64 and src.units_in == "mmHg"


def test_bp_gz_and_clock_offset(tmp_path):
    body = gzip.compress(b"time,systolic,diastolic\n10,120,80\n20,110,70\n", mtime=0)
    changes = {"sources.bp": {"file": "bp.csv.gz", "clock_offset_s": -4}}
    s = load_session(make_session(tmp_path, changes, {"bp.csv.gz": body}))
    np.testing.assert_array_equal(s.bp.time_s, [6.0, 16.0])
    assert s.source("bp").reader == "csv.gz"


def test_old_folder_has_no_bp_no_assessment_and_no_new_finding(tmp_path):
    s = load_session(make_session(tmp_path))
    assert s.bp is None and s.assessment is None
    assert not any(f.source == "bp" for f in s.findings)


@pytest.mark.parametrize(
    ("body", "match"),
    [
        ("time,systolic,diastolic\n0,80,90\n", r"^T-0001/bp.csv:2: systolic 80 mmHg is not above "),
        (
            "time,systolic,diastolic\n0,120,80\n5,350,80\n",
            r"^T-0001/bp.csv:3: systolic pressure 350",
        ),
        ("time,systolic,diastolic\n0,120,10\n", r"^T-0001/bp.csv:2: diastolic pressure 10 mmHg"),
        ("time,systolic,diastolic,mean\n0,120,80,130\n", r"^T-0001/bp.csv:2: mean 130 mmHg is out"),
        ("time,systolic,diastolic\n0,120,80\n0,110,70\n", r"^T-0001/bp.csv:3: duplicate time"),
        ("time,systolic,diastolic\n0,abc,80\n", r"^T-0001/bp.csv:2: "),
        ("time,systolic\n0,120\n", r"^T-0001/bp.csv"),
        ("time,systolic,diastolic\n0,,\n", r"^T-0001/bp.csv: no row holds both"),
    ],
)
def test_bp_refusals_one_line(tmp_path, body, match):
    with pytest.raises(SessionError, match=match) as err:
        load_session(make_session(tmp_path, BP_SOURCE, {"bp.csv": body}))
    assert "\n" not in str(err.value)


def test_check_lists_bp_stream(tmp_path):
    folder = make_session(tmp_path, BP_SOURCE, {"bp.csv": BP_CSV})
    result = CliRunner().invoke(cli, ["check", str(folder)])
    assert result.exit_code == 0, result.output
    assert "bp.csv" in result.output


def test_assessment_read(tmp_path):
    s = load_session(make_session(tmp_path, {"assessment": ASSESSMENT}))
    assert s.assessment == Assessment(
        mallampati=2,
        fasting_solids_h=8.0,
        fasting_clear_h=2.5,
        allergies=("latex",),
        consent=True,
        notes="loose upper incisor",
        baseline=Baseline(132.0, 78.0, 72.0, 97.0, 14.0),
    )


def test_assessment_none_known_allergies(tmp_path):
    s = load_session(make_session(tmp_path, {"assessment": {"allergies": []}}))
    assert s.assessment.allergies == () and s.assessment.baseline is None


@pytest.mark.parametrize(
    ("key", "value", "match"),
    [
        ("mallampati", 5, r"assessment.mallampati: 5 is outside 1 to 4$"),
        ("mallampati", 2.5, r"assessment.mallampati: must be a whole number, got 2.5$"),
        ("fasting_solids_h", -1, r"assessment.fasting_solids_h: -1 is outside 0 to 168 h$"),
        ("fasting_clear_h", "two", r"assessment.fasting_clear_h: must be a number, got 'two'$"),
        ("allergies", "latex", r"assessment.allergies: must be a list of words"),
        ("consent", "yes", r"assessment.consent: must be true or false, got 'yes'$"),
        ("notes", 12, r"assessment.notes: must be text, got 12$"),
        ("baseline", {"spo2_pct": 120}, r"assessment.baseline.spo2_pct: 120 is outside 50 to 100"),
        (
            "baseline",
            {"systolic_mmHg": 70, "diastolic_mmHg": 80},
            r"assessment.baseline.systolic_mmHg: systolic 70 mmHg is not above diastolic 80",
        ),
    ],
)
def test_assessment_refusals(tmp_path, key, value, match):
    with pytest.raises(SessionError, match=r"^T-0001/session.yaml:" + match) as err:
        load_session(make_session(tmp_path, {"assessment": {key: value}}))
    assert "\n" not in str(err.value)


def test_assessment_refusal_exit_2_on_cli(tmp_path):
    folder = make_session(tmp_path, {"assessment": {"mallampati": 7}})
    result = CliRunner().invoke(cli, ["check", str(folder)])
    assert result.exit_code == 2
    assert result.stderr.strip() == (
        "error: T-0001/session.yaml:assessment.mallampati: 7 is outside 1 to 4"
    )


EVENTS = (
    "time,event,value,note\n2,procedure_start,,\n5,oxygen_flow,4,face_mask\n"
    "15,oxygen_increase,6,after desaturation\n20,reversal_agent,,flumazenil\n"
    "28,procedure_end,,\n40,recovery_score,9,modified Aldrete\n50,discharge,,ward\n"
)


def test_new_events_and_oxygen_course(tmp_path):
    changes = {"oxygen": {"device": "nasal_cannula", "flow_l_min": 2}}
    s = load_session(make_session(tmp_path, changes, {"events.csv": EVENTS}))
    assert [e.event for e in s.interventions] == ["oxygen_increase", "reversal_agent"]
    assert s.oxygen_course() == (
        (None, 2.0, "nasal_cannula"),
        (5.0, 4.0, "face_mask"),
        (15.0, 6.0, "face_mask"),
    )
    recovery = [e for e in s.events if e.event == "recovery_score"][0]
    assert (recovery.value, recovery.note) == (9.0, "modified Aldrete")
    assert [e.note for e in s.events if e.event == "discharge"] == ["ward"]


@pytest.mark.parametrize(
    ("line", "match"),
    [
        ("5,oxygen_flow,,mask", r"^T-0001/events.csv:2: oxygen_flow needs a value"),
        ("5,oxygen_flow,20,mask", r"^T-0001/events.csv:2: oxygen_flow flow 20 L/min is outside"),
        ("5,recovery_score,,Aldrete", r"^T-0001/events.csv:2: recovery_score needs a value"),
        ("5,recovery_score,-1,Aldrete", r"^T-0001/events.csv:2: recovery_score -1 is outside"),
    ],
)
def test_new_event_refusals(tmp_path, line, match):
    body = "time,event,value,note\n" + line + "\n"
    with pytest.raises(SessionError, match=match):
        load_session(make_session(tmp_path, files={"events.csv": body}))
