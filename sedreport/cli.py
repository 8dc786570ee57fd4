"""Command line: a thin layer of click commands over the library stages.

Every :class:`sedreport.errors.SedreportError` becomes a one-line ``error: ...`` on stderr and
exit code 2; anything else is an internal failure (exit 1).
"""

from __future__ import annotations

import sys

import click

from sedreport._version import __version__
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
@criteria_option
def check_command(sessions: tuple[str, ...], fmt: str, criteria_path: str | None) -> None:
    """Load SESSION folders and show what was read: clock, streams, units, gaps, warnings.

    Exit 0 when every session loads; 2 when any fails (one `error:` line each on stderr,
    the good ones still reported). Gaps follow the gap rule of the criteria file. This checks the recorded files only; it is not an alarm
    or a diagnosis, and says nothing about the patient's condition.
    """
    from sedreport.analysis import resolve_criteria
    from sedreport.ingest.load import load_sessions
    from sedreport.render.json_text import check_json, describe_session
    from sedreport.render.terminal import check_report_text

    good, errors = load_sessions(sessions)
    described = [describe_session(s, resolve_criteria(s, criteria_path)) for s in good]
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
    from sedreport.analysis import breaths_of_session
    from sedreport.ingest import load_session
    from sedreport.render.stdout import breaths_text

    loaded = load_session(session)
    breaths, criteria = breaths_of_session(loaded, criteria_path)
    click.echo(breaths_text(breaths, loaded.session_id, criteria, fmt), nl=False)


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
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session
    from sedreport.render.stdout import episodes_text

    analysis = analyse_session(load_session(session), criteria_path)
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
def demo_command(
    outdir: str, scenario: str, seed: int, cohort: int | None, recipe: str | None, jobs: int
) -> None:
    """Write invented demo sessions to OUTDIR, each with a `<session_id>.truth.json`.

    The data is invented (no real patient) and is for trying and testing the tool only.
    sedreport documents and reviews recorded data; it is not an alarm or a diagnosis.
    """
    import sedreport.demo as demo

    if cohort is not None:
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
