"""The ``sedreport audit`` job: update the register, count, write the PDF, the CSV, the records.

One function for the command line (:func:`write_audit`); the steps live in
``sedreport.audit`` (register, runner, counting) and in the ``render.audit_*`` modules.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass, replace
from datetime import date
from pathlib import Path

from sedreport.audit.register import Register
from sedreport.audit.report import Audit, build_audit
from sedreport.audit.runner import RunSummary, find_session_folders, run_audit
from sedreport.errors import SedreportError
from sedreport.render.atomic import atomic_output
from sedreport.render.audit_csv import audit_csv


@dataclass(frozen=True)
class AuditJob:
    """What the ``audit`` command was asked to do."""

    arguments: tuple[str, ...]
    register_path: str
    pdf_path: str | None = None
    csv_path: str | None = None
    criteria_path: str | None = None
    compare_criteria: str | None = None
    by: tuple[str, ...] = ()
    event: tuple[str, str] = ("adverse_event", "any")
    since: date | None = None
    until: date | None = None
    jobs: int | None = None
    scheduler: str | None = None
    records_dir: str | None = None
    reference_path: str | None = None
    risk_adjust: bool = False
    paper: str = "a4"


@dataclass(frozen=True)
class AuditOutcome:
    """What was written and counted."""

    run: RunSummary
    audit: Audit
    written: tuple[str, ...]
    compare: Audit | None = None


def audit_of_register(job: AuditJob, criteria_path: str | None, **callbacks) -> tuple:
    """Run one criteria set over the job's sessions; (RunSummary, Audit)."""
    with Register(job.register_path) as reg:
        run = run_audit(
            job.arguments,
            reg,
            criteria_path=criteria_path,
            jobs=job.jobs,
            scheduler=job.scheduler,
            since=job.since,
            until=job.until,
            **callbacks,
        )
        audit = build_audit(
            reg.records(),
            by=job.by,
            event=job.event,
            excluded=reg.failures(),
            risk_adjust=job.risk_adjust,
        )
    return run, audit


def write_records(audit: Audit, folder: str, criteria_path: str | None) -> list[str]:
    """The PDF sedation record of every case on the case list, in ``folder``."""
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session
    from sedreport.render.record import render_record

    out = Path(folder)
    if not out.is_dir():
        raise SedreportError(f"--records: {folder} is not a folder")
    written = []
    for case in audit.cases:
        analysis = analyse_session(load_session(case.path), criteria_path)
        written.append(str(render_record(analysis, out / f"{case.session_id}-record.pdf")))
    return written


def write_audit(
    job: AuditJob,
    on_start: Callable[[int], None] | None = None,
    on_result: Callable[[str, str | None], None] | None = None,
) -> AuditOutcome:
    """Bring the register up to date, count, and write what the job asks for.

    Outputs are written atomically (no partial file on error). With ``compare_criteria`` the
    same sessions are analysed under the second file too and the PDF shows both sets of rates.
    """
    if job.pdf_path is None and job.csv_path is None:
        raise SedreportError("audit: give -o FILE.pdf and/or --csv FILE.csv")
    if job.register_path and os.path.isdir(job.register_path):
        raise SedreportError(f"--register: {job.register_path} is a folder, not a file")
    if job.records_dir and not os.path.isdir(job.records_dir):
        raise SedreportError(f"--records: {job.records_dir} is not a folder")
    # Bad arguments are refused before the register is created (nothing left behind).
    job = replace(job, arguments=tuple(str(f) for f in find_session_folders(job.arguments)))
    run, audit = audit_of_register(job, job.criteria_path, on_start=on_start, on_result=on_result)
    other = None
    if job.compare_criteria:
        other = audit_of_register(job, job.compare_criteria, on_result=on_result)[1]
    written = []
    if job.csv_path:
        with atomic_output(job.csv_path) as tmp:
            tmp.write_text(audit_csv(audit.rows), encoding="utf-8")
        written.append(job.csv_path)
    if job.pdf_path:
        from sedreport.render.audit_pdf import render_audit

        render_audit(audit, job.pdf_path, run=run, compare=other, job=job)
        written.append(job.pdf_path)
    if job.records_dir:
        written += write_records(audit, job.records_dir, job.criteria_path)
    return AuditOutcome(run, audit, tuple(written), other)
