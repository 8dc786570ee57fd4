"""The record with blood pressure, assessment and charting events: observations table, BP strip.

A demo session (invented) carrying BP, an assessment, depth scores, an oxygen change, a reversal
drug with its intervention, recovery scores, a discharge and (added here) an outcome is loaded,
analysed and rendered; the PDF read back with pdfplumber shows the observations with units and
clock times, each value re-computed here from the files by the rule stated under the table.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from click.testing import CliRunner
from record_pdf import norm, page_texts

from sedreport.analysis import analyse_session
from sedreport.cli import cli
from sedreport.demo import write_scenario
from sedreport.ingest import load_session
from sedreport.render.observations import observations
from sedreport.render.record import render_record


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("obs")
    folder = write_scenario(root, "radiology_opioid_hypoventilation", seed=0)
    doc = yaml.safe_load((folder / "session.yaml").read_text(encoding="utf-8"))
    doc["outcome"] = ["unplanned_admission"]
    (folder / "session.yaml").write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def rendered(folder, tmp_path_factory):
    analysis = analyse_session(load_session(folder))
    pdf = render_record(analysis, tmp_path_factory.mktemp("pdf") / "record.pdf")
    return analysis, pdf


def test_session_with_every_addition_loads_and_analyses(rendered):
    analysis, _ = rendered
    s = analysis.session
    assert s.bp is not None and s.bp.time_s.size >= 10
    assert s.assessment is not None and s.assessment.consent is True
    names = [e.event for e in s.events]
    for word in ("depth_score", "oxygen_flow", "reversal_agent", "recovery_score", "discharge"):
        assert word in names, word
    assert "naloxone" in s.drugs and s.outcome == ("unplanned_admission",)
    assert s.oxygen_course()[-1][1:] == (1.0, "nasal_cannula")
    assert any("unplanned_admission" in [o.text for o in e.outcome] for e in analysis.events)


def test_observation_values_by_the_stated_rule(folder, rendered):
    analysis, _ = rendered
    rows = observations(analysis)
    # marks every 5 min on the clock (the session starts 10:15:00): 0, 300, 600 ... s
    times = [r.time_s for r in rows]
    assert times[:3] == [0.0, 300.0, 600.0] and np.all(np.diff(times) == 300.0)
    bp = pd.read_csv(folder / "bp.csv")
    spo2 = pd.read_csv(folder / "spo2.csv")
    spo2_t = spo2["time"].to_numpy(float) + 3.0  # the scenario's clock_offset_s for SpO2
    checked = 0
    for r in rows:
        # BP: the reading nearest the mark within the 5 min before it (none twice: 3 min cuff)
        before = bp[(bp["time"] > r.time_s - 300) & (bp["time"] <= r.time_s)]
        if before.empty:
            assert r.systolic_mmHg is None
        else:
            last = before.iloc[-1]
            assert (r.systolic_mmHg, r.diastolic_mmHg) == (last["systolic"], last["diastolic"])
        # HR and SpO2: median over the minute before the mark (the demo has no artefacts here)
        window = (spo2_t > r.time_s - 60) & (spo2_t <= r.time_s)
        if window.any() and r.time_s > 60:
            assert r.heart_rate_bpm == pytest.approx(np.median(spo2["pulse"][window]))
            assert r.spo2_pct == pytest.approx(np.median(spo2["spo2"][window]))
            checked += 1
    assert checked == len(rows) - 1 >= 7  # every mark but the first (at 0 s)
    # depth score (MOAA/S 3 at 788 s) from the first mark after it; oxygen 2 then 1 L/min
    by_time = {r.time_s: r for r in rows}
    assert by_time[600.0].depth_score is None and by_time[900.0].depth_score == 3.0
    assert by_time[900.0].depth_scale == "MOAA/S" and by_time[900.0].oxygen_l_min == 2.0
    assert rows[-1].oxygen_l_min == 1.0  # weaned at 2272 s, last mark 2400 s


def test_pdf_shows_observations_with_units_and_clock_times(rendered):
    analysis, pdf = rendered
    text = norm(" ".join(page_texts(pdf)))
    assert "Observations" in text
    assert "Time BP mmHg HR /min SpO2 % RR /min EtCO2 mmHg Depth score O2 L/min" in text
    row = next(r for r in observations(analysis) if r.time_s == 900.0)
    hr, sp = f"{row.heart_rate_bpm:.0f}", f"{row.spo2_pct:.0f}"
    line = f"10:30 {row.systolic_mmHg:.0f}/{row.diastolic_mmHg:.0f} {hr} {sp}"
    assert line in text
    assert "median over the minute before the time shown" in text


def test_old_folder_without_bp_renders(tmp_path):
    src = write_scenario(tmp_path / "a", "quiet_colonoscopy", seed=0)
    old = tmp_path / "old" / src.name
    shutil.copytree(src, old)
    (old / "bp.csv").unlink()
    doc = yaml.safe_load((old / "session.yaml").read_text(encoding="utf-8"))
    del doc["sources"]["bp"], doc["assessment"]
    (old / "session.yaml").write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    analysis = analyse_session(load_session(old))
    assert analysis.session.bp is None
    rows = observations(analysis)
    assert rows and all(r.systolic_mmHg is None for r in rows)
    assert any(r.heart_rate_bpm is not None for r in rows)
    pdf = render_record(analysis, tmp_path / "old.pdf")
    text = norm(" ".join(page_texts(pdf)))
    assert "no blood pressure file in this session" in text and "Observations" in text


def test_cli_interval_option_and_refusal(folder, tmp_path):
    runner = CliRunner()
    out = tmp_path / "r10.pdf"
    res = runner.invoke(cli, ["record", str(folder), "-o", str(out), "--obs-interval-min", "10"])
    assert res.exit_code == 0, res.stderr
    text = norm(" ".join(page_texts(out)))
    assert "One row every 10 min on the clock" in text and "10:25 " not in text
    bad = tmp_path / "bad.pdf"
    res = runner.invoke(cli, ["record", str(folder), "-o", str(bad), "--obs-interval-min", "0"])
    assert res.exit_code == 2 and not bad.exists()
    (line,) = res.stderr.strip().splitlines()
    assert line.startswith("error: ") and "--obs-interval-min" in line and "0" in line


def test_library_refuses_a_zero_interval(rendered):
    with pytest.raises(ValueError, match="positive number of minutes, got 0"):
        observations(rendered[0], 0)
