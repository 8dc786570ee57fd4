"""session.yaml field checks: each rule with its error text (DESIGN.md "The session folder").

Ranges are plausibility limits of the format (issue 2), not clinical thresholds.
"""

from __future__ import annotations

import os

import pytest
from test_ingest_support import make_session

from sedreport.errors import SessionError
from sedreport.ingest import load_session


@pytest.mark.parametrize(
    ("changes", "match"),
    [
        (
            {"format": "sedreport-session/2"},
            r"sess/session.yaml:format: must be 'sedreport-session/1'",
        ),
        ({"format": ...}, r"sess/session.yaml:format: must be"),
        ({"session_id": ...}, r"sess/session.yaml:session_id: missing"),
        (
            {"session_id": "ENDO 0412"},
            r"session.yaml:session_id: 'ENDO 0412' must be 1-64 characters",
        ),
        ({"session_id": "A" * 65}, r"session.yaml:session_id: 'A{65}' must be 1-64"),
        ({"session_id": 412}, r"session.yaml:session_id: must be text \(quote it"),
        ({"started": "2026-03-14T09:12:00"}, r"T-0001/session.yaml:started: .* has no UTC offset"),
        ({"started": "yesterday"}, r"session.yaml:started: 'yesterday' is not an ISO 8601"),
        ({"started": ...}, r"session.yaml:started: missing"),
        ({"patient.asa_class": 0}, r"session.yaml:patient.asa_class: 0 is outside 1 to 6"),
        ({"patient.asa_class": 7}, r"session.yaml:patient.asa_class: 7 is outside 1 to 6"),
        ({"patient.asa_class": 2.5}, r"patient.asa_class: must be a whole number"),
        ({"patient.asa_class": "III"}, r"patient.asa_class: must be a number, got 'III'"),
        ({"patient.weight_kg": 0}, r"patient.weight_kg: 0 is outside 1 to 400 kg"),
        ({"patient.weight_kg": 500}, r"patient.weight_kg: 500 is outside 1 to 400 kg"),
        ({"patient.weight_kg": True}, r"patient.weight_kg: must be a number, got True"),
        ({"patient.age_years": -1}, r"patient.age_years: -1 is outside 0 to 120 years"),
        ({"patient.age_years": 130}, r"patient.age_years: 130 is outside 0 to 120 years"),
        ({"patient.height_cm": 20}, r"patient.height_cm: 20 is outside 30 to 250 cm"),
        ({"patient.height_cm": 260}, r"patient.height_cm: 260 is outside 30 to 250 cm"),
        (
            {"patient.sex": "f"},
            r"patient.sex: 'f' is not one of female \| male \| other \| unknown",
        ),
        (
            {"target_depth": "heavy"},
            r"target_depth: 'heavy' is not one of minimal \| moderate \| deep",
        ),
        ({"barometric_mmHg": 300}, r"barometric_mmHg: 300 is outside 400 to 800 mmHg"),
        ({"oxygen.flow_l_min": 16}, r"oxygen.flow_l_min: 16 is outside 0 to 15 L/min"),
        ({"oxygen.flow_l_min": -1}, r"oxygen.flow_l_min: -1 is outside 0 to 15 L/min"),
        (
            {"sources.co2.units": "bar"},
            r"sources.co2.units: 'bar' is not one of mmHg \| kPa \| percent",
        ),
        (
            {"sources.co2.file": "co\n2.csv"},
            r"sources.co2.file: file name 'co\\n2.csv' contains control",
        ),
        (
            {"sources.spo2.units": "fraction"},
            r"sources.spo2.units: 'fraction': SpO2 is read in percent only",
        ),
        (
            {"sources.co2.file": "/etc/passwd"},
            r"sources.co2.file: absolute path '/etc/passwd' not allowed",
        ),
        ({"sources.co2.file": "../co2.csv"}, r"sources.co2.file: path '../co2.csv' contains '..'"),
        ({"sources.co2.file": "sub/../../x.csv"}, r"contains '..'"),
        ({"sources.co2.file": "nothere.csv"}, r"T-0001/nothere.csv: file not found"),
        ({"sources.co2.file": ...}, r"sources.co2.file: missing"),
        ({"sources.co2.clock_offset_s": "4 s"}, r"sources.co2.clock_offset_s: must be a number"),
        (
            {"sources.co2.clock_offset_s": 1e6},
            r"sources.co2.clock_offset_s: 1000000.0 is outside -86400 to 86400 s",
        ),
        ({"sources.spo2": "spo2.csv"}, r"sources.spo2: must be a mapping with a file: entry"),
        ({"patient": "P-1"}, r"session.yaml:patient: must be a mapping"),
        (
            {"criteria": "missing.yaml"},
            r"session.yaml:criteria: criteria file 'missing.yaml' not found",
        ),
        ({"criteria": "../c.yaml"}, r"session.yaml:criteria: path '../c.yaml' contains '..'"),
    ],
)
def test_yaml_field_rule(tmp_path, changes, match):
    folder = make_session(tmp_path, changes)
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_started_date_only(tmp_path):
    folder = make_session(tmp_path)
    text = (
        (folder / "session.yaml").read_text().replace("'2026-03-14T09:12:00+01:00'", "2026-03-14")
    )
    (folder / "session.yaml").write_text(text)
    with pytest.raises(SessionError, match=r"started: 2026-03-14 has no time of day"):
        load_session(folder)


def test_started_unquoted_yaml_timestamp_with_offset(tmp_path):
    # YAML 1.1 timestamps are parsed by PyYAML into aware datetimes; both forms must work.
    folder = make_session(tmp_path)
    text = (
        (folder / "session.yaml")
        .read_text()
        .replace("'2026-03-14T09:12:00+01:00'", "2026-03-14T09:12:00+01:00")
    )
    (folder / "session.yaml").write_text(text)
    s = load_session(folder)
    assert s.started.utcoffset().total_seconds() == 3600


def test_missing_session_yaml(tmp_path):
    folder = make_session(tmp_path)
    (folder / "session.yaml").unlink()
    with pytest.raises(SessionError, match=r"^sess/session.yaml: file not found"):
        load_session(folder)


def test_not_a_folder(tmp_path):
    with pytest.raises(SessionError, match=r"nope: not a session folder"):
        load_session(tmp_path / "nope")


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("format: [unclosed\n", r"sess/session.yaml: not valid YAML \(line 2\)"),
        ("- just\n- a list\n", r"sess/session.yaml: must be a YAML mapping of fields, got list"),
        ("", r"sess/session.yaml: file is empty"),
    ],
)
def test_yaml_not_a_mapping(tmp_path, text, match):
    folder = make_session(tmp_path)
    (folder / "session.yaml").write_text(text)
    with pytest.raises(SessionError, match=match):
        load_session(folder)


def test_yaml_not_utf8(tmp_path):
    folder = make_session(tmp_path)
    raw = (folder / "session.yaml").read_bytes().replace(b"colonoscopy", b"coloscopie \xe9")
    (folder / "session.yaml").write_bytes(raw)
    with pytest.raises(
        SessionError, match=r"sess/session.yaml:\d+: bytes that are not UTF-8 \(0xe9"
    ):
        load_session(folder)


def test_symlink_leaving_the_folder(tmp_path):
    outside = tmp_path / "outside.csv"
    outside.write_text("time,co2\n0,1\n1,2\n")
    folder = make_session(tmp_path, {"sources.co2.file": "link.csv"})
    os.symlink(outside, folder / "link.csv")
    with pytest.raises(
        SessionError, match=r"sources.co2.file: 'link.csv' resolves outside the session folder"
    ):
        load_session(folder)


def test_symlink_inside_the_folder_is_fine(tmp_path):
    folder = make_session(tmp_path, {"sources.co2.file": "link.csv"})
    os.symlink(folder / "co2.csv", folder / "link.csv")
    assert load_session(folder).co2.time_s.size == 750


def test_unknown_keys_warn_but_load(tmp_path):
    folder = make_session(
        tmp_path, {"ward": "B3", "patient.eye_colour": "brown", "sources.ecg": {"file": "ecg.csv"}}
    )
    s = load_session(folder)
    assert "session.yaml: unknown field ward ignored" in s.warnings
    assert "session.yaml: unknown field patient.eye_colour ignored" in s.warnings
    assert any("unknown source sources.ecg ignored" in w for w in s.warnings)


def test_fields_reach_the_session(tmp_path):
    s = load_session(make_session(tmp_path))
    assert s.session_id == "T-0001"
    assert s.patient.weight_kg == 72 and s.patient.asa_class == 3 and s.patient.sex == "female"
    assert s.patient.conditions == ("copd",)
    assert s.team.sedation_provider == "RN-12" and s.oxygen.flow_l_min == 2
    assert s.target_depth == "moderate" and s.barometric_mmHg == 760
    assert s.started.isoformat() == "2026-03-14T09:12:00+01:00"


def test_criteria_inside_folder(tmp_path):
    folder = make_session(tmp_path, {"criteria": "crit.yaml"}, files={"crit.yaml": "name: x\n"})
    assert load_session(folder).criteria_file == "crit.yaml"
