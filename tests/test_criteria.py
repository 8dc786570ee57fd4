"""Criteria files: shipped values against their cited papers, and malformed files.

The published values below are checked against the papers named beside each assertion; the
details of each definition are from memory where the comment says so (the papers are not
shipped with the project).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
import yaml

from sedreport.criteria import (
    CRITERIA_DIR,
    DEFAULT_CRITERIA_FILE,
    list_criteria_files,
    load_criteria,
)
from sedreport.errors import CriteriaError

DEFAULT = load_criteria()


# ----- shipped values against their published sources -------------------------------------------
def test_apnoea_15_s_deitch_2010_krauss_2016():
    # Deitch et al., Ann Emerg Med 2010 (loss of waveform >= 15 s); Krauss et al., Ann Emerg
    # Med 2016 (apnoea >= 15 s). From memory.
    c = DEFAULT.item("apnoea.min_duration_s")
    assert c.value == 15.0 and c.unit == "s"
    assert "Deitch" in c.source and "2010" in c.source and "Krauss" in c.source


def test_prolonged_apnoea_60_s_mason_2012():
    # Mason et al., Br J Anaesth 2012 (World SIVA tool): prolonged apnoea > 60 s. From memory.
    c = DEFAULT.item("apnoea.prolonged_s")
    assert c.value == 60.0 and "Mason" in c.source and "2012" in c.source


def test_hypoventilation_burton_2006():
    # Burton et al., Acad Emerg Med 2006: EtCO2 >= 50 mmHg or an absolute rise >= 10 mmHg.
    assert DEFAULT.hypoventilation.etco2_high_mmHg == 50.0
    assert DEFAULT.hypoventilation.rise_from_baseline_mmHg == 10.0
    assert "Burton" in DEFAULT.item("hypoventilation.etco2_high_mmHg").source
    assert "Burton" in DEFAULT.item("hypoventilation.rise_from_baseline_mmHg").source


def test_deitch_10_percent_is_off_by_default_and_on_in_strict():
    # Deitch et al., Ann Emerg Med 2010: >= 10 % change from baseline (from memory).
    assert math.isnan(DEFAULT.hypoventilation.rise_from_baseline_pct)
    strict = load_criteria(CRITERIA_DIR / "strict.yaml")
    assert strict.hypoventilation.rise_from_baseline_pct == 10.0
    assert "Deitch" in strict.item("hypoventilation.rise_from_baseline_pct").source
    assert strict.to_dict()["thresholds"]["apnoea"] == DEFAULT.to_dict()["thresholds"]["apnoea"]


def test_bradypnoea_8_per_min_conway_2019():
    # Conway et al., J Clin Monit Comput 2019: respiratory rate < 8/min (as cited; from memory).
    c = DEFAULT.item("hypoventilation.bradypnoea_rr_per_min")
    assert c.value == 8.0 and "Conway" in c.source and "2019" in c.source


def test_hypopnoea_pattern_krauss_hess_2007_value_declared_a_choice():
    c = DEFAULT.item("hypoventilation.hypopnoea_amplitude_fraction")
    assert "Krauss & Hess" in c.source and "choice" in c.source


def test_desaturation_cravero_2006_and_mason_tiers():
    # Cravero et al., Pediatrics 2006: SpO2 < 90 % for > 30 s.
    assert DEFAULT.desaturation.spo2_below_pct == 90.0
    assert DEFAULT.desaturation.min_duration_s == 30.0
    assert "Cravero" in DEFAULT.item("desaturation.min_duration_s").source
    # Mason et al., Br J Anaesth 2012: < 75 % at any time or < 90 % for > 60 s (from memory).
    assert DEFAULT.desaturation.severe_below_pct == 75.0
    assert DEFAULT.desaturation.prolonged_s == 60.0
    assert "Mason" in DEFAULT.item("desaturation.severe_below_pct").source


def test_rebreathing_and_windows_are_labelled_common_practice():
    assert DEFAULT.rebreathing.fico2_above_mmHg == 5.0
    assert DEFAULT.rebreathing.min_duration_s == 60.0
    for key in ("rebreathing.fico2_above_mmHg", "linking.dose_lookback_s"):
        assert DEFAULT.item(key).source == "common practice"
    assert DEFAULT.linking.dose_lookback_s == 600.0
    assert DEFAULT.linking.intervention_after_s == 120.0


def test_sloped_plateau_sources_and_relative_criterion():
    c = DEFAULT.item("sloped_plateau.slope_ratio")
    assert "You et al." in c.source and "Hisamuddin" in c.source and "choice" in c.source
    assert DEFAULT.sloped_plateau.slope_ratio > 1.0  # relative to the patient's own baseline


def test_every_shipped_file_loads_and_every_item_has_a_source():
    files = list_criteria_files()
    assert {f.name for f in files} >= {"default.yaml", "strict.yaml", "apnoea_20s.yaml"}
    for f in files:
        crit = load_criteria(f)
        assert crit.name == f.stem
        assert len(crit.sha256) == 64
        assert all(c.source for c in crit.items)


def test_variants_20_and_30_s():
    assert load_criteria(CRITERIA_DIR / "apnoea_20s.yaml").apnoea.min_duration_s == 20.0
    assert load_criteria(CRITERIA_DIR / "apnoea_30s.yaml").apnoea.min_duration_s == 30.0


def test_to_dict_has_identity_and_every_threshold():
    d = DEFAULT.to_dict()
    assert set(d) == {"name", "path", "sha256", "description", "thresholds"}
    n = sum(len(v) for v in d["thresholds"].values())
    assert n == len(DEFAULT.items)
    assert d["thresholds"]["hypoventilation"]["rise_from_baseline_pct"]["value"] is None


# ----- malformed files --------------------------------------------------------------------------
def write_variant(tmp_path: Path, edit) -> Path:
    doc = yaml.safe_load(DEFAULT_CRITERIA_FILE.read_text())
    edit(doc)
    p = tmp_path / "bad.yaml"
    p.write_text(yaml.safe_dump(doc))
    return p


def _set(section, key, field, value):
    def edit(doc):
        doc[section][key][field] = value

    return edit


@pytest.mark.parametrize(
    ("edit", "where", "what"),
    [
        (_set("apnoea", "min_duration_s", "value", "fifteen"), "apnoea.min_duration_s", "must be a number"),
        (_set("apnoea", "min_duration_s", "value", True), "apnoea.min_duration_s", "must be a number"),
        (_set("apnoea", "min_duration_s", "value", None), "apnoea.min_duration_s", "must be a number"),
        (_set("apnoea", "min_duration_s", "unit", "ms"), "apnoea.min_duration_s", "unit must be 's'"),
        (_set("desaturation", "spo2_below_pct", "value", 150), "desaturation.spo2_below_pct", "outside the plausible range"),
        (_set("apnoea", "min_duration_s", "source", ""), "apnoea.min_duration_s", "source must be"),
        (_set("apnoea", "min_duration_s", "colour", "red"), "apnoea.min_duration_s", "unknown field 'colour'"),
        (lambda d: d["apnoea"].update(max_s={"value": 1, "unit": "s", "source": "x"}), "apnoea.max_s", "unknown key"),
        (lambda d: d.update(extras={}), "extras", "unknown top-level key"),
        (lambda d: d.pop("linking"), "linking", "missing section"),
        (lambda d: d["apnoea"].pop("prolonged_s"), "apnoea.prolonged_s", "missing threshold"),
        (lambda d: d["apnoea"]["prolonged_s"].pop("unit"), "apnoea.prolonged_s", "missing field 'unit'"),
        (lambda d: d.update(format="other/2"), "format", "must be 'sedreport-criteria/1'"),
        (_set("apnoea", "prolonged_s", "value", 15), "apnoea.min_duration_s", "must be less than apnoea.prolonged_s"),
        (_set("desaturation", "severe_below_pct", "value", 92), "desaturation.severe_below_pct", "must be less than"),
    ],
)  # fmt: skip
def test_malformed_file_names_file_and_key(tmp_path, edit, where, what):
    path = write_variant(tmp_path, edit)
    with pytest.raises(CriteriaError, match=r"bad\.yaml") as info:
        load_criteria(path)
    assert where in str(info.value)
    assert what in str(info.value)


def test_not_yaml_and_missing_file(tmp_path):
    p = tmp_path / "broken.yaml"
    p.write_text("apnoea: [unclosed\n  min: 3\n")
    with pytest.raises(CriteriaError, match=r"broken\.yaml:\d+: not a valid YAML file"):
        load_criteria(p)
    with pytest.raises(CriteriaError, match=r"nothere\.yaml: cannot read criteria file"):
        load_criteria(tmp_path / "nothere.yaml")
    p.write_text("- just\n- a list\n")
    with pytest.raises(CriteriaError, match="top level must be a mapping"):
        load_criteria(p)


def test_apnoea_breath_floor_cites_krauss_2016():
    # Krauss et al., Ann Emerg Med 2016: 15 consecutive seconds with CO2 <= 10 mmHg counted as
    # apnoea (from memory, and the criteria file says so).
    c = DEFAULT.item("apnoea.breath_min_etco2_mmHg")
    assert c.value == 10.0 and c.unit == "mmHg"
    assert "Krauss" in c.source and "from memory" in c.source
