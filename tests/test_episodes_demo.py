"""End to end on the invented demo scenarios: folder -> ingest -> breaths -> episodes.

Truth is what the demo planted (``<session_id>.truth.json``, written by
:mod:`sedreport.demo`); it is invented data with known answers, used to score detection, not
an external reference. Matching: same kind, onset within ``ONSET_TOL_S`` = 3 s (the
acceptance figure of the episodes issue). Planted SpO2 dips shorter than the desaturation
criterion's minimum (30 s after Cravero et al., Pediatrics 2006) are below the criterion and
not expected. Seed 0 is the seed of the committed example sessions.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner, Result

from sedreport.analysis import analyse_session
from sedreport.cli import cli
from sedreport.criteria import load_criteria
from sedreport.demo import SCENARIOS, load_truth, write_cohort, write_scenario
from sedreport.episodes import lean_body_weight_kg
from sedreport.episodes.scoring import match_episodes
from sedreport.ingest import load_session
from sedreport.render.events import rr_for_strip
from sedreport.render.json_text import episodes_to_dict
from sedreport.session import Capnogram

ONSET_TOL_S = 3.0
SEED = 0
CRIT = load_criteria()


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """Every scenario written, loaded and analysed once: name -> (folder, truth, analysis)."""
    out = tmp_path_factory.mktemp("demo")
    cases = {}
    for name in SCENARIOS:
        folder = write_scenario(out, name, SEED)
        truth = load_truth(folder.parent / f"{folder.name}.truth.json")
        cases[name] = (folder, truth, analyse_session(load_session(folder)))
    return cases


def expected(truth: dict) -> list[dict]:
    """Planted episodes a detector must find: a desaturation shorter than the listing minimum
    only when it is part of a true adverse event (a dip below 75 %: World SIVA, Mason 2012)."""
    d = CRIT.desaturation.min_duration_s
    in_event = {i for ev in truth["events"] for i in ev["episodes"]}
    return [
        e
        for i, e in enumerate(truth["episodes"])
        if i in in_event or not (e["kind"] == "desaturation" and e["end_s"] - e["start_s"] < d)
    ]


@pytest.mark.parametrize("name", list(SCENARIOS))
def test_every_planted_episode_found_and_nothing_else(demo, name):
    _, truth, analysis = demo[name]
    score = match_episodes(analysis.episodes, expected(truth), ONSET_TOL_S)
    assert score.misses == [], f"missed {score.misses}"
    assert score.false_positives == [], f"false positives {score.false_positives}"
    assert all(abs(err) <= ONSET_TOL_S for err in score.onset_errors_s)


def test_quiet_scenario_has_no_episode(demo):
    _, _, analysis = demo["quiet_colonoscopy"]
    assert analysis.episodes == ()
    assert analysis.summary.episodes_by_kind["apnoea"] == 0


def test_hypoventilation_subtype_matches_planted(demo):
    _, truth, analysis = demo["radiology_opioid_hypoventilation"]
    planted = [e for e in truth["episodes"] if e["kind"] == "hypoventilation"]
    found = [e for e in analysis.episodes if e.kind == "hypoventilation"]
    assert [e.subtype for e in found] == [p["subtype"] for p in planted] == ["bradypnoeic"]
    # naloxone (a reversal agent) is a moderate-risk intervention (Mason 2012, as reproduced in
    # Trials 2022 Table 4); the scenario gives it at 1500 s, inside the episode
    assert found[0].severity == "moderate"
    assert "reversal_agent" in [i.event for i in found[0].interventions]


def test_apnoea_doses_and_interventions_linked(demo):
    _, _, analysis = demo["upper_gi_apnoea"]
    (apnoea,) = [e for e in analysis.episodes if e.kind == "apnoea"]
    doses = {d.drug: d for d in apnoea.preceding_doses}
    # scenario: fentanyl 25 mcg at 200 s, propofol 50 mg at 230 s; male 82 kg, 178 cm
    assert set(doses) == {"fentanyl", "propofol"}
    assert doses["propofol"].seconds_before_onset == pytest.approx(apnoea.start_s - 230.0)
    assert doses["propofol"].dose_mg_per_kg == pytest.approx(50.0 / 82.0)
    assert doses["propofol"].cumulative_mg == pytest.approx(50.0)
    lbw = lean_body_weight_kg(82.0, 178.0, "male")
    assert doses["propofol"].cumulative_mg_per_kg_lbw == pytest.approx(50.0 / lbw)
    assert doses["fentanyl"].cumulative_mg == pytest.approx(0.025)
    # jaw thrust at 333 s is airway repositioning: minor-risk (Mason 2012, as reproduced in
    # Trials 2022 Table 4)
    assert [i.event for i in apnoea.interventions] == ["airway_repositioning"]
    assert apnoea.severity == "minor"


def test_prolonged_apnoea_with_bag_mask_is_sentinel(demo):
    _, _, analysis = demo["desaturation_bag_mask"]
    (apnoea,) = [e for e in analysis.episodes if e.kind == "apnoea"]
    assert apnoea.duration_s > CRIT.apnoea.prolonged_s
    # prolonged apnoea > 60 s is sentinel (Mason 2012, as reproduced in Trials 2022 Table 4)
    assert apnoea.severity == "sentinel"
    assert "bag_mask_ventilation" in [i.event for i in apnoea.interventions]
    assert apnoea.capnographic_lead_s is not None and apnoea.capnographic_lead_s > 0


def test_gap_is_signal_loss_never_apnoea(demo):
    _, truth, analysis = demo["gap_and_probe_artefact"]
    kinds = [e.kind for e in analysis.episodes]
    assert "apnoea" not in kinds
    assert kinds.count("signal_loss") == len(truth["gaps"]) == 1


def test_json_is_valid_and_has_the_contract_keys(demo):
    _, _, analysis = demo["desaturation_bag_mask"]
    d = json.loads(json.dumps(episodes_to_dict(analysis), allow_nan=False))
    assert list(d) == [
        "session_id", "started", "criteria", "episodes", "events", "brief_dips", "summary",
        "quality",
    ]  # fmt: skip
    assert d["episodes"][0]["id"] == "E1"
    assert d["quality"]["criteria"]["sha256"] == CRIT.sha256


def test_session_without_co2_still_analyses(demo):
    folder, _, _ = demo["desaturation_bag_mask"]
    session = dataclasses.replace(load_session(folder), co2=None)
    analysis = analyse_session(session)
    assert len(analysis.breaths) == 0
    assert [e.kind for e in analysis.episodes] == ["desaturation", "hypotension"]
    assert any("No CO2 stream" in x for x in analysis.quality.limitations)


def run_cli(*args: str) -> Result:
    """``sedreport ARGS`` in-process (click's test runner; stderr kept apart)."""
    return CliRunner().invoke(cli, list(args))


def test_cli_json_and_bad_criteria(demo, tmp_path):
    folder, _, analysis = demo["upper_gi_apnoea"]
    ok = run_cli("episodes", str(folder), "--format", "json")
    assert ok.exit_code == 0, ok.stderr
    assert len(json.loads(ok.stdout)["episodes"]) == len(analysis.episodes)
    bad = tmp_path / "bad.yaml"
    bad.write_text(Path(CRIT.path).read_text().replace("value: 15", "value: -3"))
    res = run_cli("episodes", str(folder), "--criteria", str(bad))
    assert res.exit_code == 2
    assert res.stdout == ""
    assert res.stderr.startswith("error: ") and "apnoea.min_duration_s" in res.stderr
    assert "Traceback" not in res.stderr
    shown = run_cli("criteria")
    assert shown.exit_code == 0 and "Deitch et al., Ann Emerg Med 2010" in shown.stdout
    missing = run_cli("criteria", str(tmp_path / "none.yaml"))
    assert missing.exit_code == 2 and missing.stderr.startswith("error: ")
    table = run_cli("episodes", str(folder))
    assert table.exit_code == 0
    assert "E1   apnoea" in table.stdout and "not an alarm or a diagnosis" in table.stdout
    csv = run_cli("episodes", str(folder), "--format", "csv")
    assert csv.stdout.splitlines()[0].startswith("id,kind,subtype,start_s,end_s,duration_s")
    assert len(csv.stdout.splitlines()) == 1 + len(analysis.episodes)


def distort(session, noise_sd_mmHg: float = 0.0, target_hz: float | None = None, seed: int = 1):
    """The session with white noise added to the capnogram and/or decimated to ``target_hz``."""
    c = session.co2
    t, x, fs = c.time_s, c.co2_mmHg, c.sample_rate_hz
    if target_hz is not None:
        step = max(1, int(round(fs / target_hz)))
        t, x, fs = t[::step], x[::step], fs / step
    x = x + np.random.default_rng(seed).normal(0.0, noise_sd_mmHg, x.size)
    return dataclasses.replace(session, co2=Capnogram(t, x, fs))


@pytest.mark.parametrize("name", list(SCENARIOS))
@pytest.mark.parametrize(
    ("noise_sd_mmHg", "target_hz"),
    [(1.0, None), (0.0, 20.0)],
    ids=["noise_1mmHg", "decimated_20Hz"],
)
def test_detection_survives_noise_and_low_rate(demo, name, noise_sd_mmHg, target_hz):
    """White noise of SD 1 mmHg, or decimation to about 20 Hz, changes nothing (seed 0).

    Measured with ``benchmarks/bench_detection.py --noise`` over seeds 0-4: from SD 1 mmHg the
    obstruction onset is sometimes dated one breath (about 3.7 s) early; from SD 2 mmHg slow
    hypoventilation onsets move earlier (noise lifts the end-tidal value on a slow ramp);
    from SD 3 mmHg noise deflections inside a pause split apnoeas.
    """
    folder, truth, _ = demo[name]
    analysis = analyse_session(distort(load_session(folder), noise_sd_mmHg, target_hz))
    want = expected(truth)
    if noise_sd_mmHg > 0:
        # Noise added on a disconnected line's exact zeros removes its only mark: an 80-s
        # pause is shorter than co2_signal.max_apnoea_s, so it then reads as an apnoea.
        want = [{**e, "kind": "apnoea"} if e["kind"] == "co2_signal_absent" else e for e in want]
    score = match_episodes(analysis.episodes, want, ONSET_TOL_S)
    assert score.misses == [] and score.false_positives == []


@pytest.mark.parametrize("name", list(SCENARIOS))
def test_event_tiers_equal_truth(demo, name):
    """Adverse events found equal the true events (graded from the planted episodes after the
    World SIVA tool, Mason et al., Br J Anaesth 2012, as reproduced in Trials 2022 Table 4):
    same number, same episodes' kinds, same tier, same outcome."""
    _, truth, analysis = demo[name]
    kinds = [e["kind"] for e in truth["episodes"]]
    want = [
        ([kinds[i] for i in ev["episodes"]], ev["severity"], ev["outcome"])
        for ev in truth["events"]
    ]
    by_id = {e.id: e.kind for e in analysis.episodes}
    got = [
        ([by_id[i] for i in ev.episodes], ev.severity, [o.text for o in ev.outcome])
        for ev in analysis.events
    ]
    assert got == want


def test_cohort_event_tiers_equal_truth(tmp_path):
    """On an invented cohort of 60 sessions every true adverse event is found with its tier
    (the issue asks >= 95 %; benchmarks/bench_events.py prints the figures on 1,000)."""
    folders = write_cohort(tmp_path, 60, seed=0)
    n_true = n_equal = 0
    for folder in map(Path, folders):
        truth = load_truth(folder.parent / f"{folder.name}.truth.json")
        found = sorted(e.severity for e in analyse_session(load_session(folder)).events)
        want = sorted(e["severity"] for e in truth["events"])
        n_true += len(want)
        n_equal += sum(min(want.count(t), found.count(t)) for t in set(want))
        assert len(found) == len(want), folder.name
    assert n_true >= 5 and n_equal / n_true >= 0.95


def test_infusion_running_and_doses_during_are_linked(demo):
    """Scenario desaturation_bag_mask: propofol 75 mcg/kg/min from 240 s for a 118 kg patient
    is 75e-3 mg/kg/min x 118 kg x 60 min/h = 531 mg/h at the apnoea's onset (about 641 s);
    the 50 mcg/kg/min line at 700 s is given during the apnoea (641-712 s)."""
    _, _, analysis = demo["desaturation_bag_mask"]
    apnoea = next(e for e in analysis.episodes if e.kind == "apnoea")
    (inf,) = apnoea.infusions_at_onset
    assert (inf.drug, inf.rate, inf.unit) == ("propofol", 75.0, "mcg/kg/min")
    assert inf.rate_mg_per_h == pytest.approx(531.0)
    assert [(d.dose, d.unit) for d in apnoea.doses_during] == [(50.0, "mcg/kg/min")]
    totals = {t.drug: t for t in apnoea.cumulative_at_onset}
    # 40 + 20 mg boluses + 531 mg/h for (onset - 240) s
    want = 60.0 + 531.0 * (apnoea.start_s - 240.0) / 3600.0
    assert totals["propofol"].cumulative_mg == pytest.approx(want)
    assert totals["propofol"].cumulative_mg_per_kg == pytest.approx(want / 118.0)


def test_attention_lists_every_event_and_every_gap(demo):
    _, _, gap = demo["gap_and_probe_artefact"]
    # the planted 75 s CO2 gap at 822 s (11:13:42 clock, session started 11:00:00)
    assert any(a.startswith("CO2 gap during sedation at 11:13:4") for a in gap.summary.attention)
    assert gap.events == ()
    _, _, ugi = demo["upper_gi_apnoea"]
    lines = [a for a in ugi.summary.attention if a.startswith("Adverse event")]
    # a minor event is listed too, not only moderate+: the apnoea and the bradycardia
    assert len(lines) == 2 and all("minor" in x for x in lines)
    assert "A1" in lines[0] and "A2" in lines[1] and "bradycardia" in lines[1]


def test_rr_strip_is_zero_across_apnoea(demo):
    _, _, analysis = demo["desaturation_bag_mask"]
    apnoea = next(e for e in analysis.episodes if e.kind == "apnoea")
    t, rr = rr_for_strip(analysis)
    inside = (t >= apnoea.start_s) & (t <= apnoea.end_s)
    assert inside.sum() > 60 and np.all(rr[inside] == 0.0)
    # the trend itself (trailing 60 s window) is not zero there: the strip shows the pause
    assert np.nanmax(np.asarray(analysis.trends.rr_per_min)[inside]) > 0
