"""Command line: a thin layer of click commands over the library stages.

Every :class:`sedreport.errors.SedreportError` becomes a one-line ``error: ...`` on stderr and
exit code 2; anything else is an internal failure (exit 1).
"""

from __future__ import annotations

import sys

import click

from sedreport import __version__
from sedreport.errors import SedreportError


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="sedreport")
def cli() -> None:
    """sedreport: sedation records, committee audits and COPD trends from recorded data.

    It documents and reviews recorded data; it is not an alarm or a diagnosis.
    """


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
