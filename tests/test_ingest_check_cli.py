"""``sedreport check``: text and JSON output, exit codes, one stderr line per failing session."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner, Result
from test_ingest_support import make_session

from sedreport.cli import cli


def _run(*args: str) -> Result:
    """``sedreport ARGS`` in-process (click's test runner; stderr kept apart)."""
    return CliRunner().invoke(cli, list(args))


def test_check_text_for_a_good_session(tmp_path):
    folder = make_session(tmp_path)
    result = CliRunner().invoke(cli, ["check", str(folder)])
    assert result.exit_code == 0, result.output
    out = result.output
    assert "session T-0001  started 2026-03-14T09:12:00+01:00" in out
    assert "duration 30.0 s" in out  # events/doses/streams span 0-29.96 s
    assert "co2     co2.csv: csv, 750 rows, rate 25 Hz, span 0.00 to 29.96 s" in out
    assert "spo2    spo2.csv: csv, 30 rows, rate 1 Hz" in out
    assert "gaps: 0" in out
    assert "not an alarm or a diagnosis" in out


def test_check_json_co2_only_names_missing_streams(tmp_path):
    folder = make_session(
        tmp_path,
        drop=("spo2", "doses", "events"),
        files={"co2.csv": "time,co2\n0,1\n0.004,2\n3.0,3\n3.004,2\n"},
    )
    result = CliRunner().invoke(cli, ["check", "--format", "json", str(folder)])
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    assert doc["errors"] == []
    (desc,) = doc["sessions"]
    assert desc["session_id"] == "T-0001" and desc["duration_s"] == 3.004
    co2 = next(s for s in desc["streams"] if s["role"] == "co2")
    assert (
        co2["sample_rate_hz"] == pytest.approx(250.0)
        and co2["span_s"] == [0.0, 3.004]
        and co2["conversion"] == "none"
    )
    kinds = sorted((f["kind"], f["source"]) for f in desc["findings"])
    assert kinds == [
        ("gap", "co2"),
        ("missing_stream", "doses"),
        ("missing_stream", "events"),
        ("missing_stream", "spo2"),
    ]
    gap = next(f for f in desc["findings"] if f["kind"] == "gap")
    assert (gap["start_s"], gap["end_s"]) == (0.004, 3.0)
    assert len(desc["warnings"]) == 4  # three missing streams and the 250 Hz rate
    assert "co2: sample rate 250 Hz is outside the expected 10-200 Hz" in desc["warnings"]


def test_check_mixed_good_and_bad_exit_2(tmp_path):
    good = make_session(tmp_path, name="good")
    bad = make_session(tmp_path, files={"co2.csv": "time,co2\n0,1\n0.04,abc\n"}, name="bad")
    bad_yaml = make_session(tmp_path, {"patient.asa_class": 9}, name="bad2")
    proc = _run("check", str(good), str(bad), str(bad_yaml))
    assert proc.exit_code == 2
    assert "Traceback" not in proc.stderr + proc.stdout
    assert proc.stderr.splitlines() == [
        "error: T-0001/co2.csv:3: CO2 value 'abc' is not a finite number",
        "error: T-0001/session.yaml:patient.asa_class: 9 is outside 1 to 6",
    ]
    assert proc.stdout.count("session T-0001") == 1  # the good one is still reported


def test_check_missing_folder(tmp_path):
    proc = _run("check", str(tmp_path / "absent"))
    assert proc.exit_code == 2
    assert proc.stderr.splitlines() == [
        f"error: absent: not a session folder ({tmp_path / 'absent'} is not a directory)"
    ]


def test_check_multiline_cell_gives_one_stderr_line(tmp_path):
    folder = make_session(
        tmp_path, files={"doses.csv": 'time,drug,dose,unit,route\n0,"pro\npofol",1,tablets,iv\n'}
    )
    proc = _run("check", str(folder))
    assert proc.exit_code == 2 and len(proc.stderr.splitlines()) == 1
    assert proc.stderr.startswith("error: T-0001/doses.csv:2: unknown dose unit 'tablets'")


def test_check_needs_a_session(tmp_path):
    proc = _run("check")
    assert proc.exit_code == 2 and proc.stderr == "error: Missing argument 'SESSIONS...'.\n"


def test_check_text_lists_at_most_20_gaps(tmp_path):
    # 30 pairs of 25 Hz CO2 samples 2 s apart: 29 steps of 1.96 s > 1 s, i.e. 29 gap findings
    # (the median step stays 0.04 s, a waveform rate).
    co2 = "time,co2\n" + "".join(f"{2 * i},30\n{2 * i}.04,30\n" for i in range(30))
    folder = make_session(tmp_path, drop=("spo2", "doses", "events"), files={"co2.csv": co2})
    result = CliRunner().invoke(cli, ["check", str(folder)])
    assert result.exit_code == 0
    assert (
        "gaps: 29" in result.output
        and "... and 9 more (all of them in --format json)" in result.output
    )
    doc = json.loads(CliRunner().invoke(cli, ["check", "--format", "json", str(folder)]).stdout)
    assert sum(f["kind"] == "gap" for f in doc["sessions"][0]["findings"]) == 29
