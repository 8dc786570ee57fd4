"""``sedreport breaths SESSION [--format table|csv|json] [--criteria FILE]``.

The CSV header is the DESIGN.md contract; values are checked against the library result.
"""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from test_capnography_sessions import _write_session
from test_capnography_traces import TraceSpec, make_trace

from sedreport.capnography import CONTRACT_COLUMNS, find_breaths
from sedreport.cli import cli


@pytest.fixture(scope="module")
def session_dir(tmp_path_factory):
    cap, truth = make_trace(
        TraceSpec(fs_hz=25.0, duration_s=90.0, noise_sd_mmHg=0.3, gaps=[(41.2, 45.0)])
    )
    folder = tmp_path_factory.mktemp("cli") / "S1"
    _write_session(folder, cap, "mmHg")
    return folder, cap


def _run(*args):
    result = CliRunner().invoke(cli, list(args))
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    return result.stdout


def test_csv_contract(session_dir):
    folder, cap = session_dir
    out = _run("breaths", str(folder), "--format", "csv")
    assert out.splitlines()[0].startswith(",".join(CONTRACT_COLUMNS) + ",")
    frame = pd.read_csv(io.StringIO(out), keep_default_na=True)
    b = find_breaths(cap)
    assert len(frame) == len(b)
    assert np.allclose(frame["start_s"], b.start_s, atol=1e-3)
    assert np.allclose(frame["etco2_mmHg"], b.etco2_mmHg, atol=0.01)
    assert frame["valid"].tolist() == b.valid.tolist()
    assert frame["rr_per_min"].isna().sum() >= 2  # first breath and first after the gap


def test_json_fields(session_dir):
    folder, cap = session_dir
    doc = json.loads(_run("breaths", str(folder), "--format", "json"))
    assert doc["session_id"] == "UNITS-mmHg"
    assert doc["n_breaths"] == len(doc["breaths"]) == len(find_breaths(cap))
    assert list(doc["breaths"][0])[:7] == list(CONTRACT_COLUMNS)
    b = find_breaths(cap)
    assert doc["n_valid"] == int(b.valid.sum())
    assert doc["invalid_by_reason"].get("gap", 0) == sum("gap" in r for r in b.reason)
    assert "not an alarm" in doc["caution"]
    # breaths are cut at gaps by the criteria's gap rule, so the criteria used are named
    assert doc["criteria"]["name"] == "default"


def test_table_is_readable(session_dir):
    folder, _ = session_dir
    out = _run("breaths", str(folder))
    lines = out.splitlines()
    assert lines[0].startswith("session UNITS-mmHg:")
    assert "EtCO2" in lines[1] and "valid" in lines[1]
    assert "not an alarm" in lines[-1]


def test_criteria_option_checked(session_dir, tmp_path):
    folder, _ = session_dir
    bad = tmp_path / "bad.yaml"
    bad.write_text("this: [is not: a criteria file\n")
    result = CliRunner().invoke(cli, ["breaths", str(folder), "--criteria", str(bad)])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"error: {bad}:2: not a valid YAML file"]
    assert result.stdout == ""


def test_missing_session_is_exit_2():
    result = CliRunner().invoke(cli, ["breaths", "/nonexistent/S9"])
    assert result.exit_code == 2 and result.stdout == ""
    assert result.stderr == "error: S9: not a session folder (/nonexistent/S9 is not a directory)\n"
