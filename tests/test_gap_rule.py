"""One gap rule: the criteria file's ``signal_loss.co2_gap_s`` / ``spo2_gap_s`` alone decide what
a gap is, for breath segmentation, episode detection, coverage, quality findings and drawing.

The session is the invented quiet colonoscopy of the demo with a 3 s hole cut in its CO2 in the
middle of steady breathing. With the shipped default (a CO2 step over 1 s is a gap: common
practice, DESIGN.md) the hole is a gap everywhere; with a criteria file that sets 5 s it is a gap
nowhere.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from sedreport.analysis import analyse_session
from sedreport.criteria import DEFAULT_CRITERIA_FILE, load_criteria
from sedreport.demo import write_scenario
from sedreport.ingest import load_session
from sedreport.session import Capnogram

HOLE_S = (600.0, 603.0)


@pytest.fixture(scope="module")
def holed(tmp_path_factory):
    folder = write_scenario(tmp_path_factory.mktemp("gap"), "quiet_colonoscopy", seed=0)
    s = load_session(folder)
    t, y = s.co2.time_s, s.co2.co2_mmHg
    keep = (t <= HOLE_S[0]) | (t >= HOLE_S[1])
    co2 = Capnogram(t[keep], y[keep], s.co2.sample_rate_hz)
    assert np.diff(co2.time_s).max() > 2.9  # the hole is there, and it is the only big step
    assert np.sort(np.diff(co2.time_s))[-2] < 1.0
    return dataclasses.replace(s, co2=co2)


@pytest.fixture(scope="module")
def lenient(tmp_path_factory) -> Path:
    text = DEFAULT_CRITERIA_FILE.read_text(encoding="utf-8")
    head, sep, tail = text.partition("  co2_gap_s:\n    value: 1\n")
    assert sep, "default.yaml's co2_gap_s entry moved; update this test"
    path = tmp_path_factory.mktemp("crit") / "gap5.yaml"
    path.write_text(head + "  co2_gap_s:\n    value: 5\n" + tail, encoding="utf-8")
    return path


def _hole_breaths(analysis):
    b = analysis.breaths
    near = (b.end_s >= HOLE_S[0] - 10) & (b.start_s <= HOLE_S[1] + 10)
    return [r for r, n in zip(b.reason, near, strict=True) if n]


def test_default_rule_makes_the_hole_a_gap_everywhere(holed):
    a = analyse_session(holed)
    assert a.quality.co2_gap_s == 1.0
    gaps = [(f.start_s, f.end_s) for f in a.quality.gaps if f.source == "co2"]
    assert len(gaps) == 1 and gaps[0][0] <= HOLE_S[0] and gaps[0][1] >= HOLE_S[1]
    assert any("gap" in r for r in _hole_breaths(a))  # breaths beside the hole are cut
    assert a.summary.co2_coverage_pct < 100.0
    # 3 s is under the 10 s shortest signal-loss episode (a choice of the criteria file)
    assert not [e for e in a.episodes if e.kind == "signal_loss"]
    assert not [e for e in a.episodes if e.kind == "apnoea"]  # a hole is never an apnoea


def test_a_5_s_rule_makes_the_hole_a_gap_nowhere(holed, lenient):
    crit = load_criteria(lenient)
    assert crit.signal_loss.co2_gap_s == 5.0
    a = analyse_session(holed, crit)
    assert a.quality.co2_gap_s == 5.0
    assert [f for f in a.quality.gaps if f.source == "co2"] == []
    assert not any("gap" in r for r in a.breaths.reason)
    assert not [e for e in a.episodes if e.kind == "signal_loss"]
    assert a.summary.co2_coverage_pct == pytest.approx(100.0)
    assert "a CO2 sample step longer than 5 s" in _quality_text(a)


def _quality_text(analysis) -> str:
    from sedreport.render.quality import findings_flowables

    return " ".join(f.text for f in findings_flowables(analysis, 400.0) if hasattr(f, "text"))
