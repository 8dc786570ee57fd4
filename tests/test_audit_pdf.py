"""The audit PDF from synthetic contract-shaped records (with adverse events) and from the CLI."""

from __future__ import annotations

import shutil
import subprocess

import pdfplumber
import pytest
from audit_fixtures import small_cohort

from sedreport.audit.report import build_audit
from sedreport.render.audit_job import AuditJob
from sedreport.render.audit_pdf import render_audit


def pdf_text(path) -> str:
    with pdfplumber.open(path) as pdf:
        return "\n".join(page.extract_text() or "" for page in pdf.pages)


@pytest.fixture()
def audit():
    excluded = [("S9", "/archive/S9", "error: S9/co2.csv:12: time is not a number ('x')")]
    return build_audit(small_cohort(), by=("area", "provider", "month"), excluded=excluded)


def test_pdf_shows_rates_cases_exclusions_methods_and_cautions(audit, tmp_path):
    out = tmp_path / "audit.pdf"
    job = AuditJob(arguments=(), register_path="", reference_path=None)
    render_audit(audit, out, job=job)
    text = pdf_text(out)
    # Overall adverse-event rate: 4 of 6 sessions = 666.7 per 1,000 (Wilson 300.0-903.2).
    assert "4/6: 666.7" in text
    # The case list names the moderate and the sentinel case with their folders.
    assert "S1" in text and "/archive/S1" in text and "sentinel" in text and "/archive/S4" in text
    assert "A1 sentinel: unplanned admission" in text
    # Exclusions with their reason.
    assert "co2.csv:12" in text
    for source in ("Wilson", "Clopper", "Hanley", "Spiegelhalter", "Steiner", "Mason"):
        assert source in text
    assert "Not a league table" in text and "Small numbers" in text
    assert "By sedation provider" in text and "Funnel plot by sedation provider" in text


def test_pdf_shows_reference_rates_and_second_criteria(audit, tmp_path):
    from sedreport.audit.reference import DEFAULT_REFERENCE_FILE

    other = build_audit(small_cohort()[:3])
    out = tmp_path / "audit.pdf"
    job = AuditJob(arguments=(), register_path="", reference_path=str(DEFAULT_REFERENCE_FILE))
    render_audit(audit, out, job=job, compare=other)
    text = pdf_text(out)
    assert "Mallory et al." in text and "Ann Emerg Med 2011" in text
    assert "from memory" in text
    assert "second criteria" in text
    assert "2/3: 666.7" in text  # the second set: 2 of its 3 sessions had an adverse event


def test_pdf_is_reproducible_with_source_date_epoch(audit, tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    render_audit(audit, a)
    render_audit(audit, b)
    assert a.read_bytes() == b.read_bytes()


def test_pdf_pages_render_to_png(audit, tmp_path):
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (optional system tool, poppler-utils) is not installed")
    out = tmp_path / "audit.pdf"
    render_audit(audit, out)
    subprocess.run(["pdftoppm", "-r", "40", "-png", str(out), str(tmp_path / "p")], check=True)
    assert len(list(tmp_path.glob("p-*.png"))) >= 3


def test_pdf_says_so_when_the_charted_outcome_never_happened(tmp_path):
    from audit_fixtures import record

    quiet = build_audit([record("Q1"), record("Q2", month="2026-02")])
    out = tmp_path / "quiet.pdf"
    render_audit(quiet, out)
    text = " ".join(pdf_text(out).split())
    assert (
        "No session in this audit had adverse event, any tier, so there is nothing to chart" in text
    )
    assert "Funnel plot by" not in text
