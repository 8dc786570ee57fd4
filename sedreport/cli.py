"""Command line: a thin layer of click commands over the library stages.

Every :class:`sedreport.errors.SedreportError` and every click usage error becomes a one-line
``error: ...`` on stderr and exit code 2, inside the click group itself (so click's test runner
sees what the installed command prints); anything else is an internal failure (exit 1).
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager

import click

from sedreport._version import __version__
from sedreport.errors import SedreportError


@contextmanager
def _one_line_errors(ctx: click.Context) -> Iterator[None]:
    """Bad input or usage: ``error: <message>`` on stderr and exit 2, never a traceback."""
    try:
        yield
    except click.exceptions.NoArgsIsHelpError as exc:
        click.echo(exc.format_message(), err=True)
        ctx.exit(2)
    except click.exceptions.Abort:
        click.echo("error: aborted", err=True)
        ctx.exit(2)
    except click.ClickException as exc:
        click.echo(f"error: {exc.format_message()}", err=True)
        ctx.exit(2)
    except SedreportError as exc:
        click.echo(f"error: {exc}", err=True)
        ctx.exit(2)


class SedreportGroup(click.Group):
    """The click group: parsing and command errors become one ``error:`` line and exit 2."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        with _one_line_errors(ctx):
            return super().parse_args(ctx, args)

    def invoke(self, ctx: click.Context):
        with _one_line_errors(ctx):
            return super().invoke(ctx)


class DemoCommand(click.Command):
    """``demo``: its help ends with the scenario names (read when the help is shown)."""

    def format_epilog(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        from sedreport.demo import SCENARIOS

        with formatter.section("Scenarios (--scenario NAME)"):
            formatter.write_dl(
                [
                    (name, f"{spec.session_id}: {spec.description}")
                    for name, spec in SCENARIOS.items()
                ]
            )
        super().format_epilog(ctx, formatter)


def _suffix(suffix: str, what: str):
    """A click callback: the file name must end in ``suffix`` (any case)."""

    def check(ctx: click.Context, param: click.Parameter, value: str | None) -> str | None:
        if value is not None and not value.lower().endswith(suffix):
            raise click.BadParameter(f"{value!r} does not end in {suffix}; {what}")
        return value

    return check


def _load(folder: str):
    """Load a session and repeat its grave findings (a stream missing the CO2) on stderr."""
    from sedreport.ingest import load_session
    from sedreport.ingest.quality import stderr_warnings

    session = load_session(folder)
    findings = ((f.kind, f.message) for f in session.findings)
    for line in stderr_warnings(session.session_id, findings):
        click.echo(f"warning: {line}", err=True)
    return session


#: Fields an audit can be stratified by (sedreport.audit.rates.STRATA; kept here so that
#: ``--help`` does not import the audit stack).
_AUDIT_STRATA = ("area", "procedure", "asa_class", "target_depth", "regimen", "provider", "month")

#: Shared options, defined once.
criteria_option = click.option(
    "--criteria",
    "criteria_path",
    type=click.Path(path_type=str),
    default=None,
    help="Criteria file (default: the session's own, else the shipped default).",
)
table_format_option = click.option(
    "--format",
    "fmt",
    type=click.Choice(["table", "csv", "json"], case_sensitive=False),
    default="table",
    show_default=True,
    help="Output format on stdout (csv and json: the documented contract).",
)


@click.group(cls=SedreportGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="sedreport")
def cli() -> None:
    """sedreport: sedation records, committee audits and COPD trends from recorded data.

    It documents and reviews recorded data; it is not an alarm or a diagnosis.
    """


@cli.command("check")
@click.argument("sessions", nargs=-1, required=True, type=click.Path(path_type=str))
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["text", "json"], case_sensitive=False),
    default="text",
    show_default=True,
    help="Output format on stdout.",
)
@criteria_option
def check_command(sessions: tuple[str, ...], fmt: str, criteria_path: str | None) -> None:
    """Load SESSION folders and show what was read: clock, streams, units, gaps, warnings.

    Exit 0 when every session loads; 2 when any fails (one `error:` line each on stderr,
    the good ones still reported). Gaps follow the gap rule of the criteria file. This checks
    the recorded files only; it is not an alarm or a diagnosis, and says nothing about the
    patient's condition.
    """
    from sedreport.criteria import resolve_criteria
    from sedreport.ingest.load import load_sessions
    from sedreport.ingest.quality import stderr_warnings
    from sedreport.render.json_text import check_json, describe_session
    from sedreport.render.terminal import check_report_text

    good, errors = load_sessions(sessions)
    described = [describe_session(s, resolve_criteria(s, criteria_path)) for s in good]
    for session in good:
        findings = ((f.kind, f.message) for f in session.findings)
        for line in stderr_warnings(session.session_id, findings):
            click.echo(f"warning: {line}", err=True)
    if fmt == "json":
        click.echo(check_json(described, errors), nl=False)
    else:
        click.echo(check_report_text(described), nl=False)
    for line in errors:
        click.echo(f"error: {line}", err=True)
    if errors:
        raise SystemExit(2)


@cli.command("record")
@click.argument("session", type=click.Path(path_type=str))
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(path_type=str),
    callback=_suffix(".pdf", "the record is a PDF file"),
    help="PDF file to write (written atomically; the name ends in .pdf).",
)
@criteria_option
@click.option(
    "--paper",
    type=click.Choice(["a4", "letter"], case_sensitive=False),
    default="a4",
    show_default=True,
)
@click.option(
    "--json",
    "json_path",
    type=click.Path(path_type=str),
    default=None,
    callback=_suffix(".json", "the episodes file is JSON"),
    help="Also write the episodes JSON (as `sedreport episodes --format json`; ends in .json).",
)
@click.option(
    "--obs-interval-min",
    type=click.FloatRange(min=1.0, max=60.0),
    default=5.0,
    show_default=True,
    help="Charting interval of the observations table, minutes.",
)
def record_command(
    session: str,
    output: str,
    criteria_path: str | None,
    paper: str,
    json_path: str | None,
    obs_interval_min: float,
) -> None:
    """Write the PDF sedation record of SESSION: header, summary, adverse events, episodes,
    doses, observations every --obs-interval-min minutes, trend strips, close-ups, data quality, cautions, sign-off lines and input hashes.

    The record documents and reviews recorded data; it is not an alarm or a diagnosis and
    does not replace watching the patient. Local sedation policy and licensed practice decide.
    """
    from sedreport.analysis import analyse_session
    from sedreport.render.record import render_record

    analysis = analyse_session(_load(session), criteria_path)
    written = render_record(
        analysis, output, paper=paper, json_path=json_path, obs_interval_min=obs_interval_min
    )
    click.echo(f"wrote {written}" + (f" and {json_path}" if json_path else ""))


@cli.command("trend")
@click.argument("visits", nargs=-1, required=True, type=click.Path(path_type=str))
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(path_type=str),
    callback=_suffix(".pdf", "the trend is a PDF file"),
    help="Trend PDF to write (must end in .pdf; written atomically).",
)
@click.option(
    "--csv",
    "csv_path",
    type=click.Path(path_type=str),
    default=None,
    callback=_suffix(".csv", "the trend table is a CSV file"),
    help="Also write one CSV row per visit, in date order.",
)
@click.option(
    "--paper",
    type=click.Choice(["a4", "letter"], case_sensitive=False),
    default="a4",
    show_default=True,
)
def trend_command(visits: tuple[str, ...], output: str, csv_path: str | None, paper: str) -> None:
    """Write the COPD clinic trend of one patient's VISIT folders (any order; shown by date):
    resting EtCO2, rate, inspired CO2, waveform-shape indices, SpO2 against the target range,
    changes between visits with the within-visit noise, and the averaged breath per visit.

    Trend documentation of recorded data, not a diagnosis and not an alarm. Nasal-cannula
    EtCO2 reads below arterial CO2, more so in obstructive disease. Clinical observation comes
    first; local policy and licensed practice decide.
    """
    from sedreport.render.trend_pdf import render_trend
    from sedreport.trend import build_trend

    trend = build_trend([_load(v) for v in visits])
    written = render_trend(trend, output, csv_path=csv_path, paper=paper.lower())
    click.echo(f"wrote {written}" + (f" and {csv_path}" if csv_path else ""))


@cli.command("breaths")
@click.argument("session", type=click.Path(path_type=str))
@table_format_option
@criteria_option
def breaths_command(session: str, fmt: str, criteria_path: str | None) -> None:
    """List every breath of SESSION's capnogram: start, end, EtCO2, FiCO2, rate, phase III
    slope, validity (csv: the documented columns first).

    This documents and reviews recorded data; it is not an alarm or a diagnosis. Clinical
    observation comes first; local sedation policy and licensed practice decide.
    """
    from sedreport.capnography.breaths import breaths_of_session
    from sedreport.render.stdout import breaths_text

    loaded = _load(session)
    breaths, criteria = breaths_of_session(loaded, criteria_path)
    click.echo(breaths_text(breaths, loaded.session_id, criteria, fmt), nl=False)


@cli.command("episodes")
@click.argument("session", type=click.Path(path_type=str))
@table_format_option
@criteria_option
def episodes_command(session: str, fmt: str, criteria_path: str | None) -> None:
    """List the respiratory episodes of SESSION found by published criteria, with linked
    doses and interventions, and the adverse events they make, each graded once after the
    World SIVA tool (minimal, minor, moderate, sentinel).

    This documents and reviews recorded data; it is not an alarm or a diagnosis. Clinical
    observation comes first; local sedation policy and licensed practice decide.
    """
    from sedreport.analysis import analyse_session
    from sedreport.render.stdout import episodes_text

    analysis = analyse_session(_load(session), criteria_path)
    click.echo(episodes_text(analysis, fmt), nl=False)


@cli.command("criteria")
@click.argument("file", required=False, type=click.Path(path_type=str))
def criteria_command(file: str | None) -> None:
    """Print the active criteria (FILE, or the shipped default) with their sources.

    Criteria document and review recorded data; they are not alarm settings.
    """
    from sedreport.criteria import load_criteria
    from sedreport.render.terminal import criteria_text

    click.echo(criteria_text(load_criteria(file)), nl=False)


@cli.command("audit")
@click.argument("sessions", nargs=-1, required=True, type=click.Path(path_type=str))
@click.option(
    "-o",
    "--output",
    type=click.Path(path_type=str),
    default=None,
    callback=_suffix(".pdf", "the audit is a PDF file"),
    help="Audit PDF to write (tables, funnel plots, control charts, case list, exclusions).",
)
@click.option(
    "--csv",
    "csv_path",
    type=click.Path(path_type=str),
    default=None,
    callback=_suffix(".csv", "the rates table is a CSV file"),
    help="Rates CSV: one row per stratum, kind and tier (a stable contract).",
)
@click.option(
    "--since", type=click.DateTime(["%Y-%m-%d"]), default=None, help="First day (YYYY-MM-DD)."
)
@click.option(
    "--until", type=click.DateTime(["%Y-%m-%d"]), default=None, help="Last day (YYYY-MM-DD)."
)
@click.option(
    "--by",
    "by",
    multiple=True,
    type=click.Choice(list(_AUDIT_STRATA), case_sensitive=False),
    help="Stratify the rates by this field (repeatable; default: all of them).",
)
@click.option(
    "--event",
    "event",
    default="adverse_event",
    show_default=True,
    help="Outcome of the funnel plots and control charts: an episode kind or "
    "adverse_event[:minimal|minor|moderate|sentinel].",
)
@click.option(
    "--register",
    "register_path",
    type=click.Path(dir_okay=False, path_type=str),
    default="sedreport-register.sqlite",
    show_default=True,
    help="SQLite register of analysed sessions (re-runs analyse only new or changed ones).",
)
@click.option(
    "--jobs",
    type=click.IntRange(min=1),
    default=None,
    help="Worker processes (default: all cores).",
)
@click.option("--scheduler", default=None, help="Dask scheduler address (sedreport[cluster]).")
@criteria_option
@click.option(
    "--compare-criteria",
    "compare_path",
    type=click.Path(exists=True, dir_okay=False, path_type=str),
    default=None,
    help="Analyse the same sessions under a second criteria file and show both sets of rates.",
)
@click.option(
    "--reference",
    "reference_path",
    type=click.Path(exists=True, dir_okay=False, path_type=str),
    default=None,
    help="YAML of published reference rates to show beside the local rates.",
)
@click.option(
    "--risk-adjust", is_flag=True, help="Risk-adjust the CUSUM by ASA class and target depth."
)
@click.option(
    "--records",
    "records_dir",
    type=click.Path(file_okay=False, path_type=str),
    default=None,
    help="Write the PDF record of every case on the case list into this folder.",
)
def audit_command(
    sessions,
    output,
    csv_path,
    since,
    until,
    by,
    event,
    register_path,
    jobs,
    scheduler,
    criteria_path,
    compare_path,
    reference_path,
    risk_adjust,
    records_dir,
) -> None:
    """Committee audit of SESSIONS (session folders, or folders searched for them): rates
    per 1,000 sedations with 95 % Wilson and exact intervals, by stratum; funnel plots,
    p-chart and CUSUM; the case list of moderate and sentinel events; exclusions.

    The audit reviews recorded data; it is not a league table, an alarm or a diagnosis.
    Small numbers and case mix limit every comparison; local sedation policy and licensed
    practice decide.
    """
    from sedreport.audit.report import parse_event
    from sedreport.render.audit_job import AuditJob, write_audit

    job = AuditJob(
        arguments=tuple(sessions),
        register_path=register_path,
        pdf_path=output,
        csv_path=csv_path,
        criteria_path=criteria_path,
        compare_criteria=compare_path,
        by=tuple(b.lower() for b in by) or _AUDIT_STRATA,
        event=parse_event(event),
        since=since.date() if since else None,
        until=until.date() if until else None,
        jobs=jobs,
        scheduler=scheduler,
        records_dir=records_dir,
        reference_path=reference_path,
        risk_adjust=risk_adjust,
    )
    from sedreport.render.audit_progress import AuditProgress

    progress = AuditProgress()
    done = write_audit(job, on_start=progress.start, on_result=progress.result)
    run = done.run
    click.echo(
        f"audited {len(run.inputs)} session(s): {run.analysed} analysed now, {run.reused} "
        f"from the register, {len(done.audit.excluded)} excluded; wrote {', '.join(done.written)}"
    )


@cli.command("demo", cls=DemoCommand)
@click.argument("outdir", type=click.Path(file_okay=False, path_type=str))
@click.option(
    "--scenario",
    default="all",
    show_default=True,
    help="One scenario name (listed below), or `all` (also writes a README).",
)
@click.option(
    "--seed", type=int, default=0, show_default=True, help="Same seed, byte-identical files."
)
@click.option(
    "--cohort",
    type=int,
    default=None,
    help="Write N varied cohort sessions instead of the scenarios.",
)
@click.option(
    "--recipe",
    type=click.Path(dir_okay=False, path_type=str),
    default=None,
    help="Cohort recipe YAML (default: the bundled one).",
)
@click.option(
    "--jobs",
    type=int,
    default=1,
    show_default=True,
    help="Worker processes for --cohort (0 = one per CPU).",
)
@click.option(
    "--visits",
    is_flag=True,
    default=False,
    help="Write the invented COPD clinic visits of one patient (for `sedreport trend`).",
)
def demo_command(
    outdir: str,
    scenario: str,
    seed: int,
    cohort: int | None,
    recipe: str | None,
    jobs: int,
    visits: bool,
) -> None:
    """Write invented demo sessions to OUTDIR, each with a `<session_id>.truth.json`.

    The data is invented (no real patient) and is for trying and testing the tool only.
    sedreport documents and reviews recorded data; it is not an alarm or a diagnosis.
    """
    import sedreport.demo as demo

    if visits:
        if cohort is not None or scenario != "all":
            raise click.UsageError("--visits cannot be combined with --cohort or --scenario")
        folders = demo.write_visits(outdir, seed=seed)
    elif cohort is not None:
        if scenario != "all":
            raise click.UsageError("--cohort and --scenario cannot be combined")
        folders = demo.write_cohort(outdir, cohort, seed=seed, recipe=recipe, jobs=jobs)
    elif scenario == "all":
        folders = demo.write_examples(outdir, seed=seed)
    else:
        folders = [demo.write_scenario(outdir, scenario, seed=seed)]
    click.echo(f"wrote {len(folders)} invented session(s) to {outdir}")


def main() -> None:
    """Console entry point: run the click group and exit with its code.

    The group itself maps bad input and usage to ``error: ...`` and exit 2; the handlers here
    only catch what happens outside it (Ctrl-C, an abort before the group runs).
    """
    try:
        code = cli.main(standalone_mode=False)
    except click.exceptions.Abort:
        click.echo("error: aborted", err=True)
        sys.exit(2)
    except click.exceptions.ClickException as exc:
        click.echo(f"error: {exc.format_message()}", err=True)
        sys.exit(2)
    except SedreportError as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    except KeyboardInterrupt:
        sys.exit(130)
    sys.exit(code if isinstance(code, int) else 0)


if __name__ == "__main__":
    main()
