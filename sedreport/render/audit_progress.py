"""Progress of an audit on stderr: a bar with sessions done, failed and the rate (a terminal
only), and one ``excluded:`` line per session that could not be analysed (always)."""

from __future__ import annotations

import sys
import time

import click


class AuditProgress:
    """Progress on stderr while sessions are analysed (a terminal only): done, failed, rate."""

    def __init__(self) -> None:
        self.bar = None
        self.failed = 0
        self.done = 0
        self.t0 = 0.0

    def start(self, n: int) -> None:
        self.t0 = time.monotonic()
        if n and sys.stderr.isatty():
            self.bar = click.progressbar(
                length=n, label="analysing", file=sys.stderr, item_show_func=self._show
            )
            self.bar.__enter__()

    def _show(self, _item: object) -> str:
        rate = self.done / max(time.monotonic() - self.t0, 1e-9)
        return f"{self.done} done, {self.failed} failed, {rate:.1f}/s"

    def result(self, path: str, error: str | None) -> None:
        self.done += 1
        if error is not None:
            self.failed += 1
            click.echo(
                f"\nexcluded: {path}: {error}" if self.bar else f"excluded: {path}: {error}",
                err=True,
            )
        if self.bar is not None:
            self.bar.update(1, path)
            if self.bar.finished:
                self.bar.__exit__(None, None, None)
                self.bar = None
