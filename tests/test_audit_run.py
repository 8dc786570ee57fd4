"""End-to-end audit: a generated cohort with planted events, the register, re-runs, kills."""

from __future__ import annotations

import csv
import io
import os
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from collections import Counter
from pathlib import Path

import pytest
from audit_cohort import make_cohort, truth_counts
from click.testing import CliRunner
from test_audit_pdf import pdf_text

from sedreport.analysis import analyse_session
from sedreport.audit.register import Register
from sedreport.cli import cli
from sedreport.ingest import load_session
from sedreport.render.json_text import episodes_to_dict

ROOT = Path(__file__).resolve().parents[1]
N = 16


@pytest.fixture(scope="module")
def cohort(tmp_path_factory):
    folder = tmp_path_factory.mktemp("audit")
    return folder, make_cohort(folder, N)


def audit(args, cwd=None):
    result = CliRunner().invoke(cli, ["audit", *args])
    return result


def read_csv(path) -> dict:
    rows = list(csv.DictReader(io.StringIO(Path(path).read_text())))
    return {(r["by"], r["group"], r["kind"], r["severity"]): r for r in rows}


@pytest.fixture(scope="module")
def first_run(cohort):
    folder, sessions = cohort
    reg, out = folder / "reg.sqlite", folder / "rates.csv"
    result = audit(
        [str(folder / "cohort"), "--csv", str(out), "--register", str(reg), "--jobs", "1"]
    )
    assert result.exit_code == 0, result.output + result.stderr
    return reg, out, result


def test_audit_counts_equal_the_contract_and_the_truth(cohort, first_run):
    folder, sessions = cohort
    reg, out, result = first_run
    rows = read_csv(out)
    # Independent count: each session through the machine-readable contract (episodes JSON).
    with_kind, total, ae_with, ae_total = Counter(), Counter(), Counter(), Counter()
    for s in sessions:
        doc = episodes_to_dict(analyse_session(load_session(s)))
        kinds = [e["kind"] for e in doc["episodes"]]
        with_kind.update(set(kinds))
        total.update(kinds)
        tiers = [ev["severity"] for ev in doc.get("events", [])]
        ae_with.update(set(tiers) | ({"any"} if tiers else set()))
        ae_total.update(tiers + ["any"] * len(tiers))
    for kind in ("apnoea", "hypoventilation", "desaturation", "rebreathing", "signal_loss"):
        row = rows[("all", "all", kind, "any")]
        assert (int(row["sessions"]), int(row["sessions_with_event"]), int(row["events"])) == (
            N,
            with_kind[kind],
            total[kind],
        )
    for tier in ("minimal", "minor", "moderate", "sentinel", "any"):
        row = rows[("all", "all", "adverse_event", tier)]
        assert (int(row["sessions_with_event"]), int(row["events"])) == (
            ae_with[tier],
            ae_total[tier],
        )
    # Against the planted truth of the demo cohort (apnoea, hypoventilation, gaps are planted
    # clear-cut; SpO2 dips shorter than the 30 s criterion are in the truth but are no episode).
    t_with, t_total = truth_counts(sessions)
    assert t_with["apnoea"] >= 2
    for kind in ("apnoea", "hypoventilation", "signal_loss"):
        row = rows[("all", "all", kind, "any")]
        assert (int(row["sessions_with_event"]), int(row["events"])) == (
            t_with[kind],
            t_total[kind],
        )
    # Strata add up to the whole.
    areas = [r for k, r in rows.items() if k[0] == "area" and k[2:] == ("apnoea", "any")]
    assert sum(int(r["sessions"]) for r in areas) == N
    assert sum(int(r["events"]) for r in areas) == total["apnoea"]


def test_csv_header_is_the_contract(first_run):
    header = Path(first_run[1]).read_text().splitlines()[0].split(",")
    assert header[:12] == [
        "by", "group", "kind", "severity", "sessions", "sessions_with_event", "events",
        "rate_per_1000", "wilson_low_per_1000", "wilson_high_per_1000", "exact_low_per_1000",
        "exact_high_per_1000",
    ]  # fmt: skip


def test_warm_rerun_analyses_nothing_and_gives_the_same_csv(cohort, first_run, tmp_path):
    folder, _ = cohort
    reg, out, _ = first_run
    again = tmp_path / "again.csv"
    result = audit([str(folder / "cohort"), "--csv", str(again), "--register", str(reg)])
    assert result.exit_code == 0
    assert "0 analysed now, 16 from the register" in result.output
    assert again.read_bytes() == out.read_bytes()


def test_broken_session_is_excluded_not_fatal(cohort, tmp_path):
    folder, sessions = cohort
    arch = tmp_path / "arch"
    for s in sessions[:3]:
        shutil.copytree(s, arch / s.name)
    bad = arch / sessions[1].name
    (bad / "spo2.csv").write_text("time,spo2\n0,97\nten,96\n")
    reg, out = tmp_path / "r.sqlite", tmp_path / "r.csv"
    result = audit([str(arch), "--csv", str(out), "--register", str(reg), "--jobs", "1"])
    assert result.exit_code == 0, result.stderr
    assert f"excluded: {bad}" in result.stderr
    assert "spo2.csv:3" in result.stderr
    assert "1 excluded" in result.output
    assert read_csv(out)[("all", "all", "apnoea", "any")]["sessions"] == "2"
    with Register(reg) as r:
        r.select(row[1] for row in r.dump() if row[0] == "sessions")
        assert [f[0] for f in r.failures()] == [sessions[1].name]


def test_since_until_select_by_start_date(cohort, first_run, tmp_path):
    folder, sessions = cohort
    reg = first_run[0]
    started = sorted(load_session(s).started.date() for s in sessions)
    mid = started[len(started) // 2]
    out = tmp_path / "since.csv"
    result = audit(
        [str(folder / "cohort"), "--csv", str(out), "--register", str(reg), "--since", str(mid)]
    )
    assert result.exit_code == 0
    expected = sum(d >= mid for d in started)
    assert read_csv(out)[("all", "all", "apnoea", "any")]["sessions"] == str(expected)


def test_bad_arguments_are_one_line_errors(tmp_path):
    result = audit([str(tmp_path), "--csv", str(tmp_path / "x.csv")])
    assert result.exit_code == 2
    assert "no session folder" in result.stderr
    assert not (tmp_path / "x.csv").exists()
    result = audit([str(tmp_path), "--csv", str(tmp_path / "x.csv"), "--by", "colour"])
    assert result.exit_code == 2


def _command(folder: Path, reg: Path, out: Path, jobs: str = "1") -> list[str]:
    return [sys.executable, "-m", "sedreport.cli", "audit", str(folder), "--csv", str(out),
            "--register", str(reg), "--jobs", jobs]  # fmt: skip


def _env():
    return {**os.environ, "PYTHONPATH": str(ROOT)}


def _stored(reg: Path) -> int:
    try:
        db = sqlite3.connect(f"file:{reg}?mode=ro", uri=True, timeout=5)
        try:
            return db.execute("SELECT COUNT(*) FROM sessions").fetchone()[0]
        finally:
            db.close()
    except sqlite3.Error:
        return 0


def test_sigkill_mid_run_then_rerun_equals_an_uninterrupted_run(cohort, first_run, tmp_path):
    folder, _ = cohort
    reg, out = tmp_path / "k.sqlite", tmp_path / "k.csv"
    proc = subprocess.Popen(
        _command(folder / "cohort", reg, out), env=_env(), start_new_session=True,
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )  # fmt: skip
    deadline = time.monotonic() + 120
    while _stored(reg) < 3 and time.monotonic() < deadline and proc.poll() is None:
        time.sleep(0.01)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    killed_at = _stored(reg)
    assert 3 <= killed_at < N, "the audit was not killed mid-run"
    assert not out.exists()
    done = subprocess.run(
        _command(folder / "cohort", reg, out), env=_env(), capture_output=True, text=True
    )
    assert done.returncode == 0, done.stderr
    assert f"{N - killed_at} analysed now, {killed_at} from the register" in done.stdout
    with Register(reg) as a, Register(first_run[0]) as b:
        assert a.dump() == b.dump()
    assert out.read_bytes() == first_run[1].read_bytes()


def test_two_concurrent_audits_on_one_register(cohort, first_run, tmp_path):
    folder, _ = cohort
    reg = tmp_path / "c.sqlite"
    outs = [tmp_path / "c1.csv", tmp_path / "c2.csv"]
    procs = [
        subprocess.Popen(_command(folder / "cohort", reg, o), env=_env(), stdout=subprocess.PIPE,
                         stderr=subprocess.PIPE, text=True)
        for o in outs
    ]  # fmt: skip
    for p in procs:
        _, err = p.communicate(timeout=300)
        assert p.returncode == 0, err
    for o in outs:
        assert o.read_bytes() == first_run[1].read_bytes()
    with Register(reg) as a, Register(first_run[0]) as b:
        assert a.dump() == b.dump()


def test_pdf_output_and_records_of_listed_cases(cohort, first_run, tmp_path):
    import dataclasses

    from sedreport.audit.rates import CaseEntry
    from sedreport.audit.report import build_audit
    from sedreport.render.audit_job import write_records

    folder, sessions = cohort
    pdf, recs = tmp_path / "audit.pdf", tmp_path / "records"
    recs.mkdir()
    result = audit(
        [
            str(folder / "cohort"),
            "-o",
            str(pdf),
            "--register",
            str(first_run[0]),
            "--records",
            str(recs),
        ]
    )
    assert result.exit_code == 0, result.stderr
    assert pdf.read_bytes().startswith(b"%PDF")
    # A listed case gets its PDF sedation record (the real pipeline has no graded events yet,
    # so the case list is planted here).
    case = CaseEntry(sessions[0].name, str(sessions[0]), "", "", "", "moderate", ("A1 moderate",))
    listed = dataclasses.replace(build_audit([]), cases=(case,))
    written = write_records(listed, str(recs), None)
    assert [p.rsplit("/", 1)[-1] for p in written] == [f"{sessions[0].name}-record.pdf"]


def test_output_name_checks(tmp_path):
    result = audit([str(tmp_path), "-o", str(tmp_path / "a.txt")])
    assert result.exit_code == 2
    assert "does not end in .pdf" in result.stderr


def test_dask_local_cluster_gives_the_same_register(cohort, first_run, tmp_path):
    from distributed import LocalCluster

    folder, _ = cohort
    reg, out = tmp_path / "d.sqlite", tmp_path / "d.csv"
    with LocalCluster(
        n_workers=1, threads_per_worker=2, processes=False, protocol="tcp://",
        host="127.0.0.1", dashboard_address=None,
    ) as cluster:  # fmt: skip
        result = audit(
            [str(folder / "cohort"), "--csv", str(out), "--register", str(reg),
             "--scheduler", cluster.scheduler_address]
        )  # fmt: skip
    assert result.exit_code == 0, result.stderr
    with Register(reg) as a, Register(first_run[0]) as b:
        assert a.dump() == b.dump()
    assert out.read_bytes() == first_run[1].read_bytes()


def test_unreachable_scheduler_is_a_one_line_error(cohort, tmp_path, monkeypatch):
    import sedreport.audit.runner

    monkeypatch.setattr(sedreport.audit.runner, "SCHEDULER_TIMEOUT_S", 2.0)
    folder, _ = cohort
    result = audit(
        [str(folder / "cohort"), "--csv", str(tmp_path / "x.csv"), "--register",
         str(tmp_path / "x.sqlite"), "--scheduler", "tcp://127.0.0.1:9"]
    )  # fmt: skip
    assert result.exit_code == 2
    assert "--scheduler" in result.stderr
    assert not (tmp_path / "x.csv").exists()


def test_compare_criteria_runs_the_same_cohort_under_a_second_file(cohort, first_run, tmp_path):
    from sedreport.criteria import CRITERIA_DIR
    from sedreport.render.audit_job import AuditJob, write_audit

    folder, sessions = cohort
    strict_apnoea = CRITERIA_DIR / "apnoea_30s.yaml"
    job = AuditJob(
        arguments=(str(folder / "cohort"),), register_path=str(first_run[0]),
        pdf_path=str(tmp_path / "cmp.pdf"), compare_criteria=str(strict_apnoea), jobs=1,
    )  # fmt: skip
    done = write_audit(job)
    assert done.compare is not None and done.compare.criteria == ("apnoea_30s",)

    def apnoea(a):
        r = next(r for r in a.rows if r.by == "all" and r.kind == "apnoea")
        return r.sessions, r.sessions_with_event, r.events

    # Independent count under the second file, through the contract.
    expected = 0
    for s in sessions:
        doc = episodes_to_dict(analyse_session(load_session(s), strict_apnoea))
        expected += sum(e["kind"] == "apnoea" for e in doc["episodes"])
    assert apnoea(done.compare)[2] == expected
    assert apnoea(done.compare)[0] == N
    assert apnoea(done.compare)[2] <= apnoea(done.audit)[2]
    text = pdf_text(tmp_path / "cmp.pdf")
    assert "second criteria (apnoea_30s)" in text
