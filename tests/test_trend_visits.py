"""Per-visit SpO2, blood gas and noise; multi-visit ordering and patient checks; the trend
settings file and the new session.yaml fields."""

from __future__ import annotations

import numpy as np
import pytest
import yaml
from scipy import stats as sps
from trend_fixtures import capnogram_of, day, make_session, planted_schedule

from sedreport.errors import CriteriaError, SessionError
from sedreport.ingest._yaml import parse_session_yaml
from sedreport.session import BloodGas, Capnogram
from sedreport.trend import build_trend, load_trend_settings, visit_indices
from sedreport.trend.settings import DEFAULT_TREND_FILE
from sedreport.trend.stats import block_bootstrap_medians, change, index_stat, seeded_rng

SETTINGS = load_trend_settings()


@pytest.fixture(scope="module")
def cap():
    return capnogram_of(planted_schedule(90, 16.0, 0.3, 3.0, 42.0, jitter=0.05), 25.0, 0.3)


def test_spo2_shares_against_the_target(cap):
    # steps of 4 % at 1 Hz stay below the oximetry jump rule (>= 4 % at > 5 %/s)
    spo2 = np.r_[np.full(200, 86.0), np.full(300, 90.0), np.full(100, 94.0)]
    spo2[::7] += 1.0  # keep runs short of the frozen-probe rule (60 s unchanged)
    v = visit_indices(make_session(cap, spo2=spo2), SETTINGS)
    sp = v.spo2
    # Default for a COPD patient: 88-92 % (O'Driscoll et al., Thorax 2017).
    assert sp.target_pct == (88.0, 92.0) and "O'Driscoll" in sp.target_from
    inside = ((spo2 >= 88) & (spo2 <= 92)).mean() * 100
    assert sp.in_target_pct == pytest.approx(inside)
    assert sp.below_pct == pytest.approx((spo2 < 88).mean() * 100)
    assert sp.above_pct == pytest.approx((spo2 > 92).mean() * 100)
    assert sp.in_target_pct + sp.below_pct + sp.above_pct == pytest.approx(100.0)
    assert sp.stat.median == pytest.approx(np.median(spo2))


def test_spo2_target_patient_own_and_non_copd_default(cap):
    spo2 = np.r_[np.full(30, 93.0), np.full(30, 96.0)]
    own = visit_indices(make_session(cap, spo2=spo2, target=(92.0, 96.0)), SETTINGS).spo2
    assert own.target_pct == (92.0, 96.0) and own.in_target_pct == pytest.approx(100.0)
    other = visit_indices(make_session(cap, spo2=spo2, conditions=()), SETTINGS).spo2
    # 94-98 % for patients not at risk of hypercapnic failure (O'Driscoll et al., Thorax 2017).
    assert other.target_pct == (94.0, 98.0) and other.below_pct == pytest.approx(50.0)


def test_spo2_no_readings_are_counted_not_used(cap):
    # 0 is the oximeter's "no reading" (common practice): missing, counted, never a value.
    spo2 = np.r_[np.full(40, 90.0), [0.0, 0.0], np.full(40, 91.0)]
    sp = visit_indices(make_session(cap, spo2=spo2), SETTINGS).spo2
    assert sp.missing_samples == 2 and sp.artefact_samples == 0 and sp.samples == 80


def test_blood_gas_gradient(cap):
    gas = BloodGas(pco2_mmHg=50.0, sample="capillary")
    v = visit_indices(make_session(cap, blood_gas=gas), SETTINGS)
    assert v.gradient_mmHg == pytest.approx(50.0 - v.stats["etco2_mmHg"].median)


def test_excluded_breaths_counted_with_reason():
    sched = planted_schedule(60, 15.0, 0.3, 2.0, 40.0)
    cap = capnogram_of(sched, 25.0, 0.2)
    t, y = cap.time_s, cap.co2_mmHg
    keep = ~((t > 102.0) & (t < 103.2))  # a 1.2 s gap in the plateau of the breath at 101 s
    from sedreport.session import Capnogram

    v = visit_indices(make_session(Capnogram(t[keep], y[keep], 25.0)), SETTINGS)
    # the two halves of the cut breath are excluded; a breath may have several reasons
    assert v.breaths_total - v.breaths_used == 2
    assert dict(v.excluded)["gap"] == 2
    assert v.excluded_pct == pytest.approx(200.0 / v.breaths_total)


def test_block_bootstrap_against_scipy_and_the_normal_formula():
    rng = np.random.default_rng(11)
    x = rng.normal(40.0, 2.0, 400)
    meds = block_bootstrap_medians(x, 1, 4000, seeded_rng(0, "t"))
    # With blocks of one value this is the ordinary bootstrap: standard error and percentile
    # interval like scipy.stats.bootstrap's (reference library), within 10 % and 0.1 mmHg.
    res = sps.bootstrap((x,), np.median, n_resamples=4000, method="percentile", random_state=1)
    assert np.std(meds, ddof=1) == pytest.approx(res.standard_error, rel=0.1)
    # and of the order of the large-sample formula sqrt(pi / 2) * sigma / sqrt(n) = 0.125
    # (common practice; the bootstrap SE of a median converges slowly, hence 35 %)
    assert np.std(meds) == pytest.approx(np.sqrt(np.pi / 2) * 2.0 / 20.0, rel=0.35)
    ref = res.confidence_interval
    s = index_stat(x, 1, 4000, 95.0, seeded_rng(0, "t"))
    assert s.ci_low == pytest.approx(ref.low, abs=0.1)
    assert s.ci_high == pytest.approx(ref.high, abs=0.1)


def test_blocks_widen_the_interval_for_correlated_breaths():
    rng = np.random.default_rng(5)
    e = rng.normal(0.0, 1.0, 600)
    x = np.empty_like(e)
    x[0] = e[0]
    for i in range(1, e.size):  # AR(1), correlation 0.8 between neighbouring breaths
        x[i] = 0.8 * x[i - 1] + e[i]
    iid = index_stat(x, 1, 1000, 95.0, seeded_rng(0, "a"))
    block = index_stat(x, 10, 1000, 95.0, seeded_rng(0, "a"))
    assert block.se > 1.5 * iid.se


def test_bootstrap_is_reproducible_and_change_flags_noise():
    x = np.random.default_rng(2).normal(40.0, 1.5, 200)
    a = index_stat(x, 10, 1000, 95.0, seeded_rng(0, "v1", "etco2_mmHg"))
    b = index_stat(x, 10, 1000, 95.0, seeded_rng(0, "v1", "etco2_mmHg"))
    assert a == b
    same = index_stat(
        np.random.default_rng(3).normal(40.0, 1.5, 200), 10, 1000, 95.0, seeded_rng(0, "v2")
    )
    shifted = index_stat(x + 3.0, 10, 1000, 95.0, seeded_rng(0, "v3"))
    assert change("etco2_mmHg", same, a, 95.0).within_noise
    c = change("etco2_mmHg", shifted, a, 95.0)
    assert not c.within_noise and c.delta == pytest.approx(3.0, abs=1e-9)


def _visit(cap, sid, n, ref="P-1", flow=2.0):
    return make_session(cap, session_id=sid, started=day(n), ref=ref, flow_l_min=flow)


def test_visits_out_of_order_come_back_in_date_order(cap):
    sessions = [_visit(cap, "C", 120), _visit(cap, "A", 0), _visit(cap, "B", 60, flow=4.0)]
    trend = build_trend(sessions)
    assert [v.session_id for v in trend.visits] == ["A", "B", "C"]
    assert trend.from_previous[0] == {} and set(trend.from_first[2]) >= {"etco2_mmHg"}
    # the same capnogram at every visit: every change is within the noise
    assert all(c.within_noise for c in trend.from_first[2].values())
    assert [(m.visit, m.after) for m in trend.oxygen_marks] == [
        (1, "nasal_cannula 4 L/min"),
        (2, "nasal_cannula 2 L/min"),
    ]


def test_mixed_patients_refused(cap):
    with pytest.raises(SessionError) as exc:
        build_trend([_visit(cap, "A", 0), _visit(cap, "B", 5, ref="P-2")])
    text = str(exc.value)
    assert "B/session.yaml:patient.ref" in text and "'P-2'" in text and "one patient" in text
    assert "\n" not in text


def test_repeated_visit_and_missing_ref_refused(cap):
    with pytest.raises(SessionError, match="given twice"):
        build_trend([_visit(cap, "A", 0), _visit(cap, "A", 0)])
    with pytest.raises(SessionError, match="patient.ref"):
        build_trend([_visit(cap, "A", 0, ref="")])


def test_trend_settings_file_checked(tmp_path):
    doc = yaml.safe_load(DEFAULT_TREND_FILE.read_text())
    for entry in (e for sec in ("spo2_target", "shape", "noise") for e in doc[sec].values()):
        assert entry["source"].strip()
    bad = dict(doc, shape=dict(doc["shape"], alpha_scale_mmHg_per_s={"value": 10, "unit": "mm"}))
    path = tmp_path / "t.yaml"
    path.write_text(yaml.safe_dump(bad))
    with pytest.raises(CriteriaError, match="shape.alpha_scale_mmHg_per_s"):
        load_trend_settings(path)
    bad = dict(doc, noise=dict(doc["noise"], extra={"value": 1, "unit": "s", "source": "x"}))
    path.write_text(yaml.safe_dump(bad))
    with pytest.raises(CriteriaError, match="noise.extra: unknown key"):
        load_trend_settings(path)


BASE_YAML = {
    "format": "sedreport-session/1",
    "session_id": "V1",
    "started": "2026-01-05T10:00:00+00:00",
    "patient": {"ref": "P-1"},
}


def test_session_yaml_blood_gas_and_target():
    doc = dict(
        BASE_YAML,
        patient={"ref": "P-1", "spo2_target_pct": [88, 92]},
        blood_gas={"sample": "capillary", "pco2_kPa": 6.5, "time_s": 300},
    )
    spec = parse_session_yaml(doc, "V1/session.yaml")
    assert spec.patient.spo2_target_pct == (88.0, 92.0)
    # 1 kPa = 7.50062 mmHg (common practice conversion).
    assert spec.blood_gas.pco2_mmHg == pytest.approx(6.5 * 7.50062)
    assert spec.blood_gas.sample == "capillary" and spec.blood_gas.time_s == 300.0
    assert parse_session_yaml(dict(BASE_YAML), "V1/session.yaml").blood_gas is None


@pytest.mark.parametrize(
    ("patch", "field", "words"),
    [
        (
            {"patient": {"ref": "P", "spo2_target_pct": [92, 88]}},
            "patient.spo2_target_pct",
            "low < high",
        ),
        ({"patient": {"ref": "P", "spo2_target_pct": "88-92"}}, "patient.spo2_target_pct", "list"),
        ({"blood_gas": {"sample": "venous", "pco2_mmHg": 50}}, "blood_gas.sample", "venous"),
        ({"blood_gas": {"sample": "arterial"}}, "blood_gas.pco2_mmHg", "exactly one"),
        ({"blood_gas": {"sample": "arterial", "pco2_mmHg": 500}}, "blood_gas.pco2_mmHg", "500"),
        ({"blood_gas": {"pco2_mmHg": 50}}, "blood_gas.sample", "missing"),
    ],
)
def test_session_yaml_new_fields_refused_one_line(patch, field, words):
    with pytest.raises(SessionError) as exc:
        parse_session_yaml(dict(BASE_YAML, **patch), "V1/session.yaml")
    text = str(exc.value)
    assert f"V1/session.yaml:{field}" in text and words in text and "\n" not in text


def test_oxygen_flow_set_during_a_visit_is_listed(cap):
    from dataclasses import replace

    from sedreport.session import Event

    s = replace(_visit(cap, "A", 0), events=(Event(120.0, "oxygen_increase", 3.0, "nasal"),))
    assert visit_indices(s, SETTINGS).flow_changes == ((120.0, 3.0, "nasal"),)


def test_every_method_paragraph_names_its_source():
    from sedreport.render.trend_methods import definitions

    trend = build_trend(
        [_visit(capnogram_of(planted_schedule(40, 15, 0.3, 2, 40), 25, 0.3), "A", 0)]
    )
    markers = ("et al.", "common practice", "choice of this tool")
    for name, text in definitions(trend):
        assert any(m in text for m in markers), name
    published = dict(definitions(trend))
    for name in ("Phase III slope", "Alpha angle"):
        assert "You et al., Eur Respir J 1994" in published[name]
        assert "Hisamuddin et al., Int J Emerg Med 2009" in published[name]
        assert "from memory" in published[name]
    assert "O'Driscoll et al., Thorax 2017" in published["SpO2"]


def test_single_short_visit_without_spo2_renders(tmp_path):
    from sedreport.render.trend_pdf import render_trend

    cap = capnogram_of(planted_schedule(12, 15.0, 0.3, 2.0, 40.0), 25.0, 0.3)
    trend = build_trend([make_session(cap, session_id="ONLY")])
    v = trend.visits[0]
    assert v.spo2 is None and not v.reliable  # fewer than noise.min_breaths (30) valid breaths
    out = render_trend(trend, tmp_path / "one.pdf", csv_path=tmp_path / "one.csv")
    assert out.read_bytes()[:5] == b"%PDF-"
    row = (tmp_path / "one.csv").read_text().splitlines()[1].split(",")
    assert row[1] == "ONLY" and row[11] == "" and row[-1] == "false"


def test_spo2_change_within_display_resolution_is_noise():
    from sedreport.trend.stats import IndexStat

    old = IndexStat(91.0, 90.0, 92.0, 600, 0.0, 91.0, 91.0)
    new = IndexStat(90.0, 89.0, 91.0, 600, 0.0, 90.0, 90.0)
    # whole-percent oximeter readings (common practice): a 1 % step is within the noise
    assert change("spo2_pct", new, old, 95.0, floor=1.0).within_noise
    assert not change("spo2_pct", new, old, 95.0).within_noise
    assert SETTINGS.value("noise.spo2_resolution_pct") == 1.0


def test_ingest_findings_are_reported_not_dropped(cap):
    from dataclasses import replace

    from sedreport.session import QualityFinding

    # a 3 s hole in the CO2: a gap by the default criteria's rule (a step > 1 s)
    keep = (cap.time_s <= 100.0) | (cap.time_s >= 103.0)
    holed = Capnogram(cap.time_s[keep], cap.co2_mmHg[keep], cap.sample_rate_hz)
    skip = QualityFinding("missing_stream", "doses", "doses: no dose log")
    s = replace(_visit(holed, "A", 0), findings=(skip,))
    v = visit_indices(s, SETTINGS)
    assert v.co2_gaps == 1 and v.co2_gap_total_s == pytest.approx(3.0, abs=0.1)
    # a resting visit needs no dose log: that finding is not repeated, the gap is
    assert len(v.quality) == 1 and v.quality[0].startswith("co2: no samples for 3.0 s")


def test_robust_sd_of_normal_data_and_one_outlier():
    from sedreport.trend.stats import robust_sd

    x = np.random.default_rng(4).normal(0.0, 2.0, 4000)
    # 1.4826 x MAD estimates the SD of normal data (Rousseeuw and Croux, J Am Stat Assoc 1993;
    # common practice constant): within 5 % on 4000 values; one 900 s pause barely moves it.
    assert robust_sd(x) == pytest.approx(2.0, rel=0.05)
    assert robust_sd(np.r_[x, 900.0]) == pytest.approx(robust_sd(x), rel=0.01)
    assert np.isnan(robust_sd(np.array([1.0, 2.0])))


def test_spo2_without_a_valid_sample_gives_no_shares(cap):
    sp = visit_indices(make_session(cap, spo2=np.zeros(30)), SETTINGS).spo2
    assert sp.samples == 0 and sp.missing_samples == 30 and sp.artefact_samples == 0
    assert np.isnan(sp.in_target_pct) and np.isnan(sp.stat.median)
