"""Breath detection on whole sessions read by ``sedreport.ingest.load_session``.

1. The demo scenarios (``sedreport.demo``, invented data with planted truth): recall and
   precision >= 0.99 and a median EtCO2 error <= 1 mmHg on each (project done-when figures),
   also after adding white noise, baseline drift, resampling to 20 and 200 Hz and cutting
   gaps out of the trace.
2. Our own synthetic trace written as a session folder in mmHg, kPa and percent: the same
   breaths come back through the unit conversions of ingest.
"""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from test_capnography_traces import TraceSpec, make_trace, score

from sedreport import demo, ingest
from sedreport.capnography import find_breaths
from sedreport.session import Capnogram

#: 1 kPa = 1000 Pa / 133.322387415 Pa per mmHg (conventional millimetre of mercury).
MMHG_PER_KPA = 1000.0 / 133.322387415


@pytest.fixture(scope="module")
def demo_cases(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    cases = {}
    for name in demo.SCENARIOS:
        folder = demo.write_scenario(out, name, seed=0)
        truth = json.loads(Path(str(folder) + ".truth.json").read_text())
        breaths = {k: np.asarray(v, dtype=float) for k, v in truth["breaths"].items()}
        cases[name] = (ingest.load_session(folder), breaths)
    return cases


def _check(breaths, truth):
    s = score(breaths, truth)
    assert s["recall"] >= 0.99, s
    assert s["precision"] >= 0.99, s
    assert s["etco2_err_median_mmHg"] <= 1.0, s
    return s


def test_demo_scenarios_figures(demo_cases):
    units = set()
    for name, (session, truth) in demo_cases.items():
        units.add(session.source("co2").units_in)
        _check(find_breaths(session.co2), truth)
        assert name  # every scenario scored
    assert {"mmHg", "kPa", "percent"} <= units  # unit conversions exercised via ingest


def _with(cap: Capnogram, t: np.ndarray, y: np.ndarray, fs: float) -> Capnogram:
    return replace(cap, time_s=t, co2_mmHg=y, sample_rate_hz=fs)


def test_demo_with_added_white_noise(demo_cases):
    rng = np.random.default_rng(5)
    for session, truth in demo_cases.values():
        cap = session.co2
        noisy = cap.co2_mmHg + 1.5 * rng.standard_normal(cap.co2_mmHg.size)
        _check(find_breaths(_with(cap, cap.time_s, noisy, cap.sample_rate_hz)), truth)


def test_demo_with_baseline_drift(demo_cases):
    for session, truth in demo_cases.values():
        cap = session.co2
        drift = 4.0 * np.sin(2 * np.pi * cap.time_s / 150.0)
        b = find_breaths(_with(cap, cap.time_s, cap.co2_mmHg + drift, cap.sample_rate_hz))
        t_end = truth["start_s"] + 0.45 * (truth["end_s"] - truth["start_s"])
        shifted = {
            **truth,
            "etco2_mmHg": truth["etco2_mmHg"] + 4.0 * np.sin(2 * np.pi * t_end / 150.0),
        }
        s = score(b, shifted)
        assert s["recall"] >= 0.99 and s["precision"] >= 0.99, s
        # the drift moves during the plateau, so the reference (read mid-breath) is approximate
        assert s["etco2_err_median_mmHg"] <= 1.0, s


@pytest.mark.parametrize("fs_hz", [20.0, 200.0])
def test_demo_resampled(demo_cases, fs_hz):
    for session, truth in demo_cases.values():
        cap = session.co2
        segs = np.flatnonzero(np.diff(cap.time_s) > 1.0)
        t_new = np.arange(cap.time_s[0], cap.time_s[-1], 1.0 / fs_hz)
        # keep the gaps: drop new samples that fall inside one
        for i in segs:
            t_new = t_new[(t_new <= cap.time_s[i]) | (t_new >= cap.time_s[i + 1])]
        y_new = np.interp(t_new, cap.time_s, cap.co2_mmHg)
        _check(find_breaths(_with(cap, t_new, y_new, fs_hz)), truth)


def test_demo_with_cut_gaps(demo_cases):
    """Cut 20 s out every 4 minutes; breaths touching a cut leave the scoring on both sides."""
    for session, truth in demo_cases.values():
        cap = session.co2
        cuts = [(t0, t0 + 20.0) for t0 in np.arange(cap.time_s[0] + 200.0, cap.time_s[-1], 240.0)]
        keep = np.ones(cap.time_s.size, dtype=bool)
        tkeep = np.ones(truth["start_s"].size, dtype=bool)
        for a, b in cuts:
            keep &= (cap.time_s < a) | (cap.time_s > b)
            tkeep &= (truth["end_s"] < a) | (truth["start_s"] > b)
        cut = _with(cap, cap.time_s[keep], cap.co2_mmHg[keep], cap.sample_rate_hz)
        b = find_breaths(cut)
        _check(b, {k: v[tkeep] for k, v in truth.items()})
        for a, e in cuts:
            assert not np.any((b.start_s < a) & (b.end_s > e))


def _write_session(folder: Path, cap: Capnogram, units: str) -> None:
    folder.mkdir()
    if units == "kPa":
        values = cap.co2_mmHg / MMHG_PER_KPA
    elif units == "percent":
        values = cap.co2_mmHg / 760.0 * 100.0
    else:
        values = cap.co2_mmHg
    lines = ["time,co2"] + [f"{t:.3f},{v:.6f}" for t, v in zip(cap.time_s, values, strict=True)]
    (folder / "co2.csv").write_text("\n".join(lines) + "\n")
    (folder / "session.yaml").write_text(
        "format: sedreport-session/1\n"
        f"session_id: UNITS-{units}\n"
        "started: 2026-03-14T09:12:00+01:00\n"
        "patient: {ref: P-0001}\n"
        f"sources:\n  co2: {{file: co2.csv, units: {units}, clock_offset_s: 0}}\n"
        "barometric_mmHg: 760\n"
    )


@pytest.mark.parametrize("units", ["mmHg", "kPa", "percent"])
def test_units_through_ingest(tmp_path, units):
    cap, truth = make_trace(TraceSpec(fs_hz=50.0, duration_s=120.0, noise_sd_mmHg=0.5))
    _write_session(tmp_path / units, cap, units)
    session = ingest.load_session(tmp_path / units)
    assert np.allclose(session.co2.co2_mmHg, cap.co2_mmHg, atol=1e-3)
    s = _check(find_breaths(session.co2), truth)
    assert s["etco2_err_median_mmHg"] <= 0.3
