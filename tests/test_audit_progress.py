"""The audit progress bar: on a terminal only, with sessions done, failed and the rate."""

from __future__ import annotations

import io
import sys

from sedreport.render.audit_progress import AuditProgress


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_bar_on_a_terminal(monkeypatch):
    term = FakeTerminal()
    monkeypatch.setattr(sys, "stderr", term)
    p = AuditProgress()
    p.start(2)
    p.result("/a/S1", None)
    p.result("/a/S2", "S2/co2.csv:4: not a number")
    text = term.getvalue()
    assert "analysing" in text
    assert "2 done, 1 failed" in text
    assert "excluded: /a/S2: S2/co2.csv:4: not a number" in text
    assert p.bar is None  # closed when finished


def test_no_bar_off_a_terminal(monkeypatch):
    plain = io.StringIO()
    monkeypatch.setattr(sys, "stderr", plain)
    p = AuditProgress()
    p.start(2)
    p.result("/a/S1", None)
    p.result("/a/S2", "broken")
    assert plain.getvalue() == "excluded: /a/S2: broken\n"
