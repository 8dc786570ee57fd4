"""Invented cohorts: variety, recipe-driven event rates, determinism across worker counts."""

from __future__ import annotations

import collections
from pathlib import Path

import numpy as np
import pytest
import yaml

from sedreport.demo import case_rng, load_truth, write_cohort
from sedreport.demo.cohort import draw_case, load_recipe
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth
from sedreport.errors import SedreportError


def _bytes(root: Path) -> dict[str, bytes]:
    return {
        str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()
    }


def test_cohort_same_bytes_whatever_the_worker_count(tmp_path):
    one = write_cohort(tmp_path / "one", 10, seed=4, jobs=1)
    two = write_cohort(tmp_path / "two", 10, seed=4, jobs=2)
    assert [p.name for p in one] == [p.name for p in two] == [f"COH-{i:04d}" for i in range(1, 11)]
    assert _bytes(tmp_path / "one") == _bytes(tmp_path / "two")


def test_cohort_cases_vary_across_the_recipe():
    recipe = load_recipe()
    specs = [draw_case(recipe, i, 0) for i in range(300)]
    assert {s.area for s in specs} == set(recipe["areas"])
    assert len({s.team["sedation_provider"] for s in specs}) >= 8
    assert len({s.started[:7] for s in specs}) == 12  # every month of 2026
    assert {s.patient["asa_class"] for s in specs} >= {1, 2, 3}
    drugs = collections.Counter(tuple(sorted({d[1] for d in s.doses})) for s in specs)
    assert {("propofol",), ("fentanyl", "midazolam"), ("fentanyl", "propofol")} <= set(drugs)
    assert any(d[3] == "mcg/kg/min" for s in specs for d in s.doses)
    for s in specs:
        assert 15 * 60 <= s.duration_s <= 25 * 60 and s.co2_rate_hz in (20.0, 25.0)
        assert s.first_dose_s >= 180.0
        for _, drug, dose, unit, _ in s.doses:
            if unit == "mg" and drug == "propofol":
                assert 20 <= dose <= 50  # usual propofol bolus (common practice)


def test_event_rates_follow_the_recipe(tmp_path):
    recipe = load_recipe()
    recipe["events"]["apnoea"] = {k: 1.0 for k in recipe["events"]["apnoea"]}
    recipe["events"]["co2_gap"] = {k: 0.0 for k in recipe["events"]["co2_gap"]}
    recipe["asa_multiplier"] = {k: 1.0 for k in recipe["asa_multiplier"]}
    path = tmp_path / "all_apnoea.yaml"
    path.write_text(yaml.safe_dump(recipe))
    rec = load_recipe(path)
    specs = [draw_case(rec, i, 1) for i in range(60)]
    propofol_boluses = [
        s for s in specs if any(d[1] == "propofol" and d[3] == "mg" for d in s.doses)
    ]
    assert propofol_boluses
    with_apnoea = [
        s for s in propofol_boluses if any(type(p).__name__ == "Apnoea" for p in s.planted)
    ]
    assert len(with_apnoea) >= 0.9 * len(propofol_boluses)
    assert not any(type(p).__name__ == "Gap" for s in specs for p in s.planted)


def test_cohort_truth_is_clear_cut():
    """With boosted event rates, 60 cases: apnoeas 20-80 s, desaturation only where planted
    (bag-mask cases), SpO2 >= 91 elsewhere, every kind of plant present."""
    recipe = load_recipe()
    for kind in recipe["events"]:
        recipe["events"][kind] = {k: 0.5 for k in recipe["events"][kind]}
    recipe["desaturation_given_apnoea"] = 0.5
    recipe["sloped_plateau_given_copd"] = 1.0
    recipe["conditions"]["copd"] = 0.4
    kinds = collections.Counter()
    for i in range(60):
        spec = draw_case(recipe, i, 2)
        sig = simulate_case(spec, case_rng(2, spec.session_id))
        truth = build_truth(spec, sig, 2)
        bag_mask = any(getattr(p, "bag_mask", False) for p in spec.planted)
        for e in truth["episodes"]:
            kinds[e["kind"]] += 1
            if e["kind"] == "apnoea":
                assert 20.0 <= e["end_s"] - e["start_s"] <= 80.0
            if e["kind"] == "desaturation":
                assert bag_mask, spec.session_id
        if not bag_mask:
            ok = ~sig.spo2_artefact
            assert sig.spo2_pct[ok].min() >= 91, spec.session_id
        st = np.array(truth["breaths"]["start_s"])
        assert np.all(np.diff(st) > 0)
    assert all(
        kinds[k] >= 2
        for k in (
            "apnoea",
            "desaturation",
            "hypoventilation",
            "rebreathing",
            "sloped_plateau",
            "signal_loss",
        )
    ), kinds


def test_recipe_errors_name_file_and_field(tmp_path):
    bad = tmp_path / "r.yaml"
    bad.write_text("format: other\n")
    with pytest.raises(SedreportError, match=r"r.yaml:format: expected 'sedreport-demo-cohort/1'"):
        load_recipe(bad)
    recipe = load_recipe()
    del recipe["areas"]
    bad.write_text(yaml.safe_dump(recipe))
    with pytest.raises(SedreportError, match=r"r.yaml:areas: missing"):
        load_recipe(bad)
    with pytest.raises(SedreportError, match="cannot read cohort recipe"):
        load_recipe(tmp_path / "none.yaml")
    with pytest.raises(SedreportError, match="at least 1"):
        write_cohort(tmp_path, 0)


def test_cohort_truth_files_written(tmp_path):
    folders = write_cohort(tmp_path, 3, seed=9)
    for f in folders:
        truth = load_truth(f.parent / f"{f.name}.truth.json")
        assert truth["scenario"] == "cohort" and truth["seed"] == 9
        assert (f / "co2.csv.gz").is_file() and (f / "session.yaml").is_file()
