"""Counting an audit from synthetic contract-shaped records (with adverse events)."""

from __future__ import annotations

import pytest
from audit_fixtures import small_cohort
from statsmodels.stats.proportion import proportion_confint

from sedreport.audit.rates import (
    MeasureCounter,
    RateCounter,
    case_entry,
    chart_outcome,
    monthly_counts,
)
from sedreport.audit.register import SCHEMA_VERSION, Register


def rows_by_key(rows):
    return {(r.by, r.group, r.kind, r.severity): r for r in rows}


def test_overall_counts_of_known_cohort():
    c = RateCounter(["area", "provider", "month"])
    for rec in small_cohort():
        c.add(rec)
    rows = rows_by_key(c.rows())
    counts = lambda key: (rows[key].sessions, rows[key].sessions_with_event, rows[key].events)  # noqa: E731
    assert counts(("all", "all", "apnoea", "any")) == (6, 3, 4)
    assert counts(("all", "all", "desaturation", "any")) == (6, 1, 1)
    assert counts(("all", "all", "hypoventilation", "any")) == (6, 1, 1)
    assert counts(("all", "all", "signal_loss", "any")) == (6, 1, 1)
    assert counts(("all", "all", "adverse_event", "any")) == (6, 4, 5)
    assert counts(("all", "all", "adverse_event", "minor")) == (6, 1, 2)
    assert counts(("all", "all", "adverse_event", "moderate")) == (6, 1, 1)
    assert counts(("all", "all", "adverse_event", "sentinel")) == (6, 1, 1)
    assert counts(("all", "all", "adverse_event", "minimal")) == (6, 1, 1)
    assert counts(("area", "bronchoscopy", "adverse_event", "any")) == (2, 1, 1)
    assert counts(("provider", "RN-02", "apnoea", "any")) == (2, 1, 2)
    assert counts(("month", "2026-02", "adverse_event", "sentinel")) == (3, 1, 1)
    # A kind nobody had still has its row (zero, with the rule of three).
    assert counts(("all", "all", "rebreathing", "any")) == (6, 0, 0)
    assert rows[("all", "all", "rebreathing", "any")].proportion.rule_of_three_high == 0.5


def test_row_intervals_equal_statsmodels():
    c = RateCounter()
    for rec in small_cohort():
        c.add(rec)
    for r in c.rows():
        w = proportion_confint(r.sessions_with_event, r.sessions, method="wilson")
        e = proportion_confint(r.sessions_with_event, r.sessions, method="beta")
        p = r.proportion
        assert (p.wilson_low, p.wilson_high) == pytest.approx(w, abs=1e-9)
        assert (p.exact_low, p.exact_high) == pytest.approx(e, abs=1e-9)


def test_case_list_and_measures():
    cases = [e for e in (case_entry(r) for r in small_cohort()) if e]
    assert [(e.session_id, e.worst) for e in cases] == [("S1", "moderate"), ("S4", "sentinel")]
    assert cases[1].events == ("A1 sentinel: unplanned admission",)
    m = MeasureCounter()
    for rec in small_cohort():
        m.add(rec)
    res = m.result()
    assert (res.sessions, res.with_capnography, res.median_co2_coverage_pct) == (6, 5, 100.0)
    months, k, n = monthly_counts(
        (r["meta"]["month"], chart_outcome(r, "adverse_event")) for r in small_cohort()
    )
    assert (months, k, n) == (["2026-01", "2026-02", "2026-03"], [2, 1, 1], [2, 3, 1])


def test_register_round_trip(tmp_path):
    path = tmp_path / "reg.sqlite"
    cohort = small_cohort()
    with Register(path) as reg:
        assert reg.schema_version() == SCHEMA_VERSION
        for i, rec in enumerate(cohort):
            reg.store(f"k{i}", rec)
        reg.store_failure("bad", "S9", "/archive/S9", "co2.csv:3: not a number")
        reg.store("k0", cohort[0])  # storing again replaces, never duplicates
        assert reg.known_keys(["k0", "k5", "zz", "bad"]) == {"k0", "k5", "bad"}
        reg.select([f"k{i}" for i in range(6)] + ["bad"])
        back = list(reg.records())
        assert reg.failures() == [("S9", "/archive/S9", "co2.csv:3: not a number")]
    assert [r["session_id"] for r in back] == ["S1", "S2", "S3", "S4", "S5", "S6"]
    for got, want in zip(back, cohort, strict=True):
        assert got["episodes"] == want["episodes"]
        assert got["events"] == want["events"]
        assert got["summary"] == want["summary"]
        assert got["meta"]["provider"] == want["meta"]["provider"]
        assert got["meta"]["asa_class"] == str(want["meta"]["asa_class"])
    # The same counts from the register as from the records in memory.
    a, b = RateCounter(["area"]), RateCounter(["area"])
    for rec in cohort:
        a.add(rec)
    for rec in back:
        b.add(rec)
    key = lambda r: (r.by, r.group, r.kind, r.severity, r.sessions, r.sessions_with_event, r.events)  # noqa: E731
    assert [key(r) for r in a.rows()] == [key(r) for r in b.rows()]


def test_register_stores_no_patient_reference(tmp_path):
    rec = small_cohort()[0]
    rec["meta"]["patient_ref"] = "P-0193"
    with Register(tmp_path / "r.sqlite") as reg:
        reg.store("k", rec)
        assert "P-0193" not in repr(reg.dump())


def test_register_refuses_newer_schema(tmp_path):
    import sqlite3

    from sedreport.errors import SedreportError

    path = tmp_path / "r.sqlite"
    Register(path).close()
    db = sqlite3.connect(path)
    db.execute("INSERT INTO schema_info VALUES (99)")
    db.commit()
    db.close()
    with pytest.raises(SedreportError, match="schema version 99"):
        Register(path)


def test_audit_kinds_are_the_contract_kinds():
    from sedreport.audit.rates import EPISODE_KINDS as AUDIT_KINDS
    from sedreport.episodes.model import EPISODE_KINDS

    assert AUDIT_KINDS == EPISODE_KINDS


def test_unknown_event_kind_is_refused():
    from sedreport.audit.report import build_audit
    from sedreport.errors import SedreportError

    with pytest.raises(SedreportError, match="--event: no outcome 'apnea'"):
        build_audit(small_cohort(), event=("apnea", "any"))


def test_build_audit_charts_the_chosen_outcome():
    from sedreport.audit.report import build_audit

    a = build_audit(small_cohort(), event=("apnoea", "any"), by=("provider",))
    assert a.p_chart.labels == ("2026-01", "2026-02", "2026-03")
    assert a.p_chart.k == (2, 0, 1) and a.p_chart.n == (2, 3, 1)
    assert len(a.cusum.path) == 6
    funnel = next(f for f in a.funnels if f.field == "provider")
    assert dict(zip(funnel.groups, funnel.k, strict=True)) == {"RN-01": 2, "RN-02": 1, "RN-21": 0}
    assert [c.session_id for c in a.cases] == ["S1", "S4"]


def test_register_migrates_an_older_schema_keeping_its_rows(tmp_path, monkeypatch):
    import sedreport.audit.register as register

    path = tmp_path / "r.sqlite"
    with Register(path) as reg:
        reg.store("k0", small_cohort()[0])
    # A future version 2 adds a column; opening the version-1 file migrates it in place.
    migrations = {**register.MIGRATIONS, 2: ("ALTER TABLE sessions ADD COLUMN reviewed TEXT",)}
    monkeypatch.setattr(register, "MIGRATIONS", migrations)
    monkeypatch.setattr(register, "SCHEMA_VERSION", 2)
    with Register(path) as reg:
        assert reg.schema_version() == 2
        assert reg.known_keys(["k0"]) == {"k0"}
        assert "reviewed" in [c[1] for c in reg._db.execute("PRAGMA table_info(sessions)")]
        reg.store("k1", small_cohort()[1])  # storing still works after the migration
        reg.select(["k0", "k1"])
        assert [r["session_id"] for r in reg.records()] == ["S1", "S2"]
