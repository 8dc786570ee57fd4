"""Scenarios and their truth: format, time conventions, clock offsets, clear-cut plants.

The thresholds in these checks are the default criteria the planted episodes must clearly
exceed (apnoea >= 15 s without a breath, EtCO2 > 50 mmHg or >= 10 mmHg over baseline, SpO2 < 90 %,
FiCO2 > 5 mmHg for >= 60 s); they are set in the project's criteria file, whose sources are
named there. Here they only check that each plant is far from its threshold.
"""

from __future__ import annotations

import gzip
from datetime import datetime, timedelta

import numpy as np
import pytest
import yaml

from sedreport.demo import SCENARIOS, case_rng, load_truth, write_scenario
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import baseline_etco2_mmHg, build_truth
from sedreport.errors import SedreportError, SessionError

EPISODE_KINDS = {
    "apnoea",
    "hypoventilation",
    "desaturation",
    "rebreathing",
    "sloped_plateau",
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
    "hypotension",
    "bradycardia",
}


@pytest.fixture(scope="module")
def runs():
    out = {}
    for name, spec in SCENARIOS.items():
        sig = simulate_case(spec, case_rng(0, spec.session_id))
        out[name] = (spec, sig, build_truth(spec, sig, 0))
    return out


def _windows(truth, kind):
    return [(e["start_s"], e["end_s"]) for e in truth["episodes"] if e["kind"] == kind]


def _outside(times, windows, margin_s):
    keep = np.ones(np.shape(times), dtype=bool)
    for a, b in windows:
        keep &= (times < a - margin_s) | (times > b + margin_s)
    return keep


def test_seven_scenarios_with_distinct_ids_and_variety():
    assert len(SCENARIOS) >= 7
    ids = [s.session_id for s in SCENARIOS.values()]
    assert len(set(ids)) == len(ids) and all(i.startswith("DEMO-") for i in ids)
    assert {s.co2_units for s in SCENARIOS.values()} == {"mmHg", "kPa", "percent"}
    assert {s.co2_time_style for s in SCENARIOS.values()} == {"seconds", "iso8601"}
    rates = [s.co2_rate_hz for s in SCENARIOS.values()]
    assert min(rates) >= 20 and max(rates) <= 100 and len(set(rates)) >= 4
    assert len({(s.co2_offset_s, s.spo2_offset_s) for s in SCENARIOS.values()}) >= 4
    assert any("/" in d[3] for s in SCENARIOS.values() for d in s.doses)  # an infusion
    for s in SCENARIOS.values():
        assert 15 * 60 <= s.duration_s <= 45 * 60
        assert s.first_dose_s >= 180.0  # >= 3 min of pre-dose baseline
        names = [e[1] for e in s.events]
        assert "procedure_start" in names and "procedure_end" in names


def test_doses_in_usual_adult_ranges():
    # Usual adult procedural-sedation boluses (common practice): propofol 20-50 mg,
    # midazolam 1-2 mg, fentanyl 25-50 mcg.
    ranges = {
        ("propofol", "mg"): (20, 50),
        ("midazolam", "mg"): (1, 2),
        ("fentanyl", "mcg"): (25, 50),
    }
    for s in SCENARIOS.values():
        for _, drug, dose, unit, route in s.doses:
            if (drug, unit) in ranges:
                lo, hi = ranges[(drug, unit)]
                assert lo <= dose <= hi, (s.session_id, drug, dose)
            assert route == "iv"


def test_truth_format_and_time_order(runs):
    for spec, _, truth in runs.values():
        assert list(truth) == [
            "format",
            "session_id",
            "scenario",
            "seed",
            "breaths",
            "episodes",
            "events",
            "outcome",
            "gaps",
            "artefacts",
        ]
        assert truth["format"] == "sedreport-truth/1" and truth["session_id"] == spec.session_id
        b = truth["breaths"]
        assert list(b) == ["start_s", "end_s", "etco2_mmHg", "fico2_mmHg"]
        st, en = np.array(b["start_s"]), np.array(b["end_s"])
        assert len({len(v) for v in b.values()}) == 1
        assert np.all(en > st) and np.all(st[1:] > en[:-1])
        for e in truth["episodes"]:
            assert e["kind"] in EPISODE_KINDS and e["end_s"] > e["start_s"]
            assert set(e) == {"kind", "subtype", "start_s", "end_s"}


def test_planted_episodes_per_scenario(runs):
    expected = {
        "quiet_colonoscopy": [],
        "upper_gi_apnoea": ["apnoea", "bradycardia"],
        "radiology_opioid_hypoventilation": ["hypoventilation"],
        "copd_sloped_plateau": ["sloped_plateau"],
        "rebreathing_under_drapes": ["rebreathing"],
        "gap_and_probe_artefact": ["signal_loss", "low_amplitude"],
        "desaturation_bag_mask": ["apnoea", "desaturation", "hypotension"],
        "bite_block_mouth_breathing": ["low_amplitude", "apnoea", "low_amplitude"],
        "line_off_etco2_fall": ["co2_signal_absent", "etco2_fall"],
        "brief_deep_desaturation": ["apnoea", "desaturation"],
        "outcome_unplanned_admission": ["desaturation"],
    }
    for name, kinds in expected.items():
        assert [e["kind"] for e in runs[name][2]["episodes"]] == kinds, name


def test_truth_events_graded_after_world_siva(runs):
    """Truth events from the planted episodes, graded after Mason et al., Br J Anaesth 2012
    (as reproduced in Trials 2022 Table 4): highest of descriptor, intervention, outcome."""
    got = {
        name: [(e["episodes"], e["severity"], e["outcome"]) for e in truth["events"]]
        for name, (_, _, truth) in runs.items()
    }
    assert got["quiet_colonoscopy"] == [] and got["gap_and_probe_artefact"] == []
    # apnoea > 60 s (sentinel) -> desaturation -> bag-mask ventilation (moderate): one event
    # ... and a later hypotension (a minor descriptor) is an event of its own
    assert got["desaturation_bag_mask"] == [([0, 1], "sentinel", []), ([2], "minor", [])]
    # apnoea not prolonged (minor) + airway repositioning (minor); a vagal bradycardia (minor)
    assert got["upper_gi_apnoea"] == [([0], "minor", []), ([1], "minor", [])]
    # SpO2 down to 72 % (< 75 % at any time: sentinel) for under 30 s, after a short apnoea
    assert got["brief_deep_desaturation"] == [([0, 1], "sentinel", [])]
    # desaturation 85 % (minor) + suction, oxygen (minor) + unplanned admission (moderate)
    assert got["outcome_unplanned_admission"] == [([0], "moderate", ["unplanned_admission"])]
    # sloped plateau and rebreathing are findings; an intervention linked makes them events
    assert got["copd_sloped_plateau"] == [([0], "minor", [])]
    spec, sig, truth = runs["brief_deep_desaturation"]
    (desat,) = [e for e in truth["episodes"] if e["kind"] == "desaturation"]
    assert desat["end_s"] - desat["start_s"] < 30.0
    inside = (sig.spo2_time_s >= desat["start_s"]) & (sig.spo2_time_s < desat["end_s"])
    assert sig.spo2_pct[inside].min() == 72.0


def test_apnoea_dated_from_breaths_and_clear_cut(runs):
    # DESIGN.md: apnoea from the end of the last breath to the start of the next one.
    for spec, _, truth in runs.values():
        b = truth["breaths"]
        for a, z in _windows(truth, "apnoea"):
            assert a in b["end_s"] and z in b["start_s"]
            assert b["start_s"].index(z) == b["end_s"].index(a) + 1
            assert 20.0 <= z - a <= 75.0
        # Everywhere else no pause between breaths approaches 15 s.
        st, en = np.array(b["start_s"]), np.array(b["end_s"])
        pauses = st[1:] - en[:-1]
        planted = np.isin(en[:-1], [a for a, _ in _windows(truth, "apnoea")])
        across_gap = np.zeros_like(planted)
        for g in truth["gaps"]:
            across_gap |= (en[:-1] <= g["start_s"]) & (st[1:] >= g["end_s"])
        for a, z in _windows(truth, "co2_signal_absent"):  # a disconnected line: not recorded
            across_gap |= (en[:-1] <= a) & (st[1:] >= z)
        assert pauses[~planted & ~across_gap].max() < 12.0, spec.session_id


def test_hypoventilation_clear_cut(runs):
    spec, sig, truth = runs["radiology_opioid_hypoventilation"]
    ((a, z),) = _windows(truth, "hypoventilation")
    ep = truth["episodes"][0]
    assert ep["subtype"] == "bradypnoeic"
    st, et = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["etco2_mmHg"])
    inside = (st >= a) & (st <= z)
    base = baseline_etco2_mmHg(spec, sig)
    assert z - a > 180.0
    assert et[inside].max() > 55.0 and et[inside].max() - base > 15.0
    rr = 60.0 / np.diff(st)
    assert np.median(rr[inside[1:]]) < 7.0
    # Outside the episode EtCO2 stays clear of both criteria.
    out = _outside(st, [(a, z)], 0.0)
    assert et[out].max() < 48.0 and et[out].max() - base < 8.0


def test_no_hypercapnia_or_rebreathing_outside_plants(runs):
    for spec, sig, truth in runs.values():
        st = np.array(truth["breaths"]["start_s"])
        et = np.array(truth["breaths"]["etco2_mmHg"])
        fi = np.array(truth["breaths"]["fico2_mmHg"])
        base = baseline_etco2_mmHg(spec, sig)
        out = _outside(st, _windows(truth, "hypoventilation"), 0.0)
        assert et[out].max() < 49.0 and et[out].max() - base < 9.0, spec.session_id
        out = _outside(st, _windows(truth, "rebreathing"), 30.0)
        assert fi[out].max() < 2.0, spec.session_id


def test_rebreathing_clear_cut(runs):
    _, _, truth = runs["rebreathing_under_drapes"]
    ((a, z),) = _windows(truth, "rebreathing")
    st, fi = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["fico2_mmHg"])
    assert z - a > 120.0
    assert np.median(fi[(st >= a) & (st < z)]) > 7.5


def _slopes(sig, truth, sel):
    t, v = sig.co2_time_s, sig.co2_mmHg
    st, en = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    out = []
    for a, b in zip(st[sel], en[sel], strict=True):
        m = (t >= a + 0.4 * (b - a)) & (t <= a + 0.85 * (b - a))
        out.append(np.polyfit(t[m], v[m], 1)[0])
    return np.array(out)


def test_sloped_plateau_is_several_times_own_baseline_slope(runs):
    # A sloped plateau is judged against the patient's own baseline shape (DESIGN.md): the COPD
    # baseline plateau is already sloped, the obstructive stretch is several times steeper.
    spec, sig, truth = runs["copd_sloped_plateau"]
    ((a, z),) = _windows(truth, "sloped_plateau")
    st = np.array(truth["breaths"]["start_s"])
    base = np.median(_slopes(sig, truth, st < spec.first_dose_s))
    stretch = np.median(_slopes(sig, truth, (st >= a) & (st < z)))
    quiet_spec, quiet_sig, quiet_truth = runs["quiet_colonoscopy"]
    quiet_st = np.array(quiet_truth["breaths"]["start_s"])
    normal = np.median(_slopes(quiet_sig, quiet_truth, quiet_st < quiet_spec.first_dose_s))
    assert base > 1.8 * normal  # sloped COPD plateau at baseline
    assert stretch > 3.0 * base
    assert 120.0 < z - a < 400.0


def test_desaturation_clear_cut_and_lagging_apnoea(runs):
    _, sig, truth = runs["desaturation_bag_mask"]
    ((da, dz),) = _windows(truth, "desaturation")
    ((aa, az),) = _windows(truth, "apnoea")
    t, s = sig.spo2_time_s, sig.spo2_pct
    assert s[(t >= da) & (t < dz)].min() <= 82 and dz - da >= 20.0
    assert da - aa > 30.0  # SpO2 lags the apnoea by tens of seconds
    assert s[t == da][0] < 90 and s[t == dz][0] >= 90
    assert s[(t < da - 1)].min() >= 90  # a clean start: first sample below 90 is at da


def test_spo2_clear_outside_planted_desaturation(runs):
    for spec, sig, truth in runs.values():
        keep = ~sig.spo2_artefact & _outside(sig.spo2_time_s, _windows(truth, "desaturation"), 60)
        assert sig.spo2_pct[keep].min() >= 92, spec.session_id


def test_gap_and_artefact_truth(runs):
    spec, sig, truth = runs["gap_and_probe_artefact"]
    (gap,) = truth["gaps"]
    assert gap["source"] == "co2" and gap["end_s"] - gap["start_s"] > 60.0
    t = sig.co2_time_s
    assert gap["start_s"] in np.round(t, 3) and gap["end_s"] in np.round(t, 3)
    assert not np.any((t > gap["start_s"] + 1e-6) & (t < gap["end_s"] - 1e-6))
    ep = next(e for e in truth["episodes"] if e["kind"] == "signal_loss")
    assert (ep["subtype"], ep["start_s"], ep["end_s"]) == ("co2", gap["start_s"], gap["end_s"])
    (art,) = [a for a in truth["artefacts"] if a["kind"] == "motion"]
    assert art["source"] == "spo2"
    inside = (sig.spo2_time_s >= art["start_s"]) & (sig.spo2_time_s <= art["end_s"])
    assert sig.spo2_artefact[inside].all() and sig.spo2_pct[inside].max() < 90
    # The breaths cut by the gap are not in the truth.
    st, en = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    assert not np.any((en > gap["start_s"]) & (st < gap["end_s"]))


def _file_times(folder, name, started):
    opener = gzip.open if name.endswith(".gz") else open
    with opener(folder / name, "rt") as fh:
        rows = [line.strip().split(",") for line in fh][1:]
    times = [r[0] for r in rows]
    values = np.array([float(r[1]) for r in rows])
    if "T" in times[0]:
        start = datetime.fromisoformat(started)
        secs = np.array([(datetime.fromisoformat(x) - start).total_seconds() for x in times])
    else:
        secs = np.array([float(x) for x in times])
    return secs, values


@pytest.mark.parametrize(
    "name", ["upper_gi_apnoea", "copd_sloped_plateau", "gap_and_probe_artefact"]
)
def test_clock_offset_sign_and_breath_times_in_file(tmp_path, name):
    # DESIGN.md: clock_offset_s is ADDED to file times to get session times, so a monitor
    # running 4 s fast writes session + 4 s and declares clock_offset_s: -4.
    folder = write_scenario(tmp_path, name, seed=0)
    meta = yaml.safe_load((folder / "session.yaml").read_text())
    offset = meta["sources"]["co2"]["clock_offset_s"]
    assert offset == SCENARIOS[name].co2_offset_s != 0.0
    truth = load_truth(tmp_path / f"{meta['session_id']}.truth.json")
    file_t, co2 = _file_times(folder, "co2.csv.gz", str(meta["started"]))
    session_t = file_t + offset
    et_file_units = co2.max()
    for start, end in list(
        zip(truth["breaths"]["start_s"], truth["breaths"]["end_s"], strict=True)
    )[:40:7]:
        before = co2[np.argmin(np.abs(session_t - (start - 0.1)))]
        mid = co2[np.argmin(np.abs(session_t - (start + 0.5 * (end - start))))]
        assert before < 0.15 * et_file_units and mid > 0.5 * et_file_units


def test_truth_breaths_match_written_units(tmp_path):
    # kPa -> mmHg with 1 kPa = 7.50062 mmHg (common practice conversion factor).
    folder = write_scenario(tmp_path, "upper_gi_apnoea", seed=0)
    truth = load_truth(tmp_path / "DEMO-UGI-02.truth.json")
    meta = yaml.safe_load((folder / "session.yaml").read_text())
    file_t, co2_kpa = _file_times(folder, "co2.csv.gz", str(meta["started"]))
    session_t = file_t - 4.0
    st, en = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    et = np.array(truth["breaths"]["etco2_mmHg"])
    plateau_end = st + 0.97 * (en - st) - 0.15
    k = np.searchsorted(session_t, plateau_end)
    measured = co2_kpa[k] * 7.50062
    assert np.median(np.abs(measured - et)) < 1.5


def test_unknown_scenario_and_bad_truth(tmp_path):
    with pytest.raises(SedreportError, match=r"demo: unknown scenario 'nope' \(known: quiet_"):
        write_scenario(tmp_path, "nope")
    bad = tmp_path / "x.truth.json"
    bad.write_text('{"format": "other"}')
    with pytest.raises(SessionError, match=r"x.truth.json:format: expected 'sedreport-truth/1'"):
        load_truth(bad)
    bad.write_text("{not json")
    with pytest.raises(SessionError, match="not a JSON truth file"):
        load_truth(bad)
    with pytest.raises(SessionError, match="truth file not found"):
        load_truth(tmp_path / "missing.truth.json")


def test_started_is_iso_with_offset():
    for s in SCENARIOS.values():
        dt = datetime.fromisoformat(s.started)
        assert dt.utcoffset() in (timedelta(hours=1), timedelta(hours=2))
