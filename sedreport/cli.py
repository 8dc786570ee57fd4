"""Command line: a thin layer of click commands over the library stages.

Every :class:`sedreport.errors.SedreportError` becomes a one-line ``error: ...`` on stderr and
exit code 2; anything else is an internal failure (exit 1).
"""

from __future__ import annotations

import sys

import click

from sedreport import __version__
from sedreport.errors import SedreportError

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
    type=click.Choice(["table", "csv", "json"]),
    default="table",
    show_default=True,
    help="Output format on stdout (csv and json: the documented contract).",
)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
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
    type=click.Choice(["text", "json"]),
    default="text",
    show_default=True,
    help="Output format on stdout.",
)
def check_command(sessions: tuple[str, ...], fmt: str) -> None:
    """Load SESSION folders and show what was read: clock, streams, units, gaps, warnings.

    Exit 0 when every session loads; 2 when any fails (one `error:` line each on stderr,
    the good ones still reported). This checks the recorded files only; it is not an alarm
    or a diagnosis, and says nothing about the patient's condition.
    """
    import json

    from sedreport.ingest.report import CAUTION, check_sessions, format_text

    good, errors = check_sessions(sessions)
    if fmt == "json":
        click.echo(json.dumps({"sessions": good, "errors": errors, "caution": CAUTION}, indent=2))
    else:
        for desc in good:
            click.echo(format_text(desc))
        if good:
            click.echo(f"note: {CAUTION}")
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
    help="PDF file to write (written atomically).",
)
@criteria_option
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True)
@click.option(
    "--json",
    "json_path",
    type=click.Path(path_type=str),
    default=None,
    help="Also write the episodes JSON (as `sedreport episodes --format json`).",
)
def record_command(
    session: str, output: str, criteria_path: str | None, paper: str, json_path: str | None
) -> None:
    """Write the PDF sedation record of SESSION: header, summary, doses, trend strips,
    episodes with close-ups, data quality, cautions, sign-off lines and input hashes.

    The record documents and reviews recorded data; it is not an alarm or a diagnosis and
    does not replace watching the patient. Local sedation policy and licensed practice decide.
    """
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session
    from sedreport.render.record import render_record

    analysis = analyse_session(load_session(session), criteria_path)
    written = render_record(analysis, output, paper=paper, json_path=json_path)
    click.echo(f"wrote {written}" + (f" and {json_path}" if json_path else ""))


@cli.command("trend")
@click.argument("visits", nargs=-1, required=True, type=click.Path(path_type=str))
@click.option(
    "-o",
    "--output",
    required=True,
    type=click.Path(path_type=str),
    help="Trend PDF to write (must end in .pdf; written atomically).",
)
@click.option(
    "--csv",
    "csv_path",
    type=click.Path(path_type=str),
    default=None,
    help="Also write one CSV row per visit, in date order.",
)
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True)
def trend_command(visits: tuple[str, ...], output: str, csv_path: str | None, paper: str) -> None:
    """Write the COPD clinic trend of one patient's VISIT folders (any order; shown by date):
    resting EtCO2, rate, inspired CO2, waveform-shape indices, SpO2 against the target range,
    changes between visits with the within-visit noise, and the averaged breath per visit.

    Trend documentation of recorded data, not a diagnosis and not an alarm. Nasal-cannula
    EtCO2 reads below arterial CO2, more so in obstructive disease. Clinical observation comes
    first; local policy and licensed practice decide.
    """
    from sedreport.ingest import load_session
    from sedreport.render.trend_pdf import render_trend
    from sedreport.trend import build_trend

    trend = build_trend([load_session(v) for v in visits])
    written = render_trend(trend, output, csv_path=csv_path, paper=paper)
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
    from sedreport.capnography.output import breaths_output
    from sedreport.ingest import load_session

    click.echo(breaths_output(load_session(session), fmt, criteria_path), nl=False)


@cli.command("episodes")
@click.argument("session", type=click.Path(path_type=str))
@table_format_option
@criteria_option
def episodes_command(session: str, fmt: str, criteria_path: str | None) -> None:
    """List the respiratory episodes of SESSION found by published criteria, with linked
    doses, interventions and a severity tier.

    This documents and reviews recorded data; it is not an alarm or a diagnosis. Clinical
    observation comes first; local sedation policy and licensed practice decide.
    """
    from sedreport.analysis import episodes_output
    from sedreport.ingest import load_session

    click.echo(episodes_output(load_session(session), fmt, criteria_path), nl=False)


@cli.command("criteria")
@click.argument("file", required=False, type=click.Path(path_type=str))
def criteria_command(file: str | None) -> None:
    """Print the active criteria (FILE, or the shipped default) with their sources.

    Criteria document and review recorded data; they are not alarm settings.
    """
    from sedreport.criteria import format_criteria, load_criteria

    click.echo(format_criteria(load_criteria(file)), nl=False)


@cli.command("demo")
@click.argument("outdir", type=click.Path(file_okay=False, path_type=str))
@click.option(
    "--scenario",
    default="all",
    show_default=True,
    help="One scenario name, or `all` (also writes a README).",
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
    from sedreport import demo

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
    """Console entry point: run the click group, map errors to exit codes."""
    try:
        cli.main(standalone_mode=False)
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
    sys.exit(0)


if __name__ == "__main__":
    main()
