"""The events-and-notes log and the recovery section of the PDF record (pdfplumber read-back).

The fixture's event log (tests/record_fixtures.py, invented data) gains events the record must
show generically: an oxygen flow, a depth score, a free-text note, a recovery score and a
discharge. Expected clock times are worked out here from the session start, by hand.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import timedelta

import pytest
import record_fixtures as rf
from record_pdf import norm, page_texts

from sedreport.render.eventlog import recovery_sentences, value_text
from sedreport.render.record import render_record
from sedreport.session import Event

EXTRA = (
    Event(200.0, "oxygen_flow", 2.0, line=7),
    Event(400.0, "depth_score", 3.0, "MOASS", line=8),
    Event(700.0, "note", None, "patient coughing", line=9),
    Event(2400.0, "recovery_score", 9.0, "Aldrete", line=10),
    Event(2450.0, "discharge", None, "ward 5", line=11),
)


@pytest.fixture(scope="module")
def analysis():
    a = rf.make_analysis()
    return replace(a, session=replace(a.session, events=a.session.events + EXTRA))


@pytest.fixture(scope="module")
def text(analysis, tmp_path_factory):
    path = tmp_path_factory.mktemp("log") / "record.pdf"
    render_record(analysis, path)
    return norm(" ".join(page_texts(path)))


def clock(analysis, t_s: float) -> str:
    return (analysis.session.started + timedelta(seconds=t_s)).strftime("%H:%M:%S")


def test_every_event_and_note_in_the_log_with_its_clock_time(analysis, text):
    """All ten lines of the log, none dropped: time, the event in words, and its note."""
    log = text[text.index("Events and notes") : text.index("Recovery")]
    assert len(analysis.session.events) == 10
    for e in analysis.session.events:
        assert f"{clock(analysis, e.time_s)} {e.event.replace('_', ' ')}" in log, e
        if e.note:
            assert e.note in log, e


def test_values_carry_their_units_and_scales(analysis, text):
    """Oxygen in L/min (common practice), a score with the scale named in its note."""
    assert f"{clock(analysis, 200.0)} oxygen flow 2 L/min" in text
    assert f"{clock(analysis, 1240.0)} oxygen increase 4 L/min" in text
    assert f"{clock(analysis, 400.0)} depth score 3 (MOASS)" in text
    assert value_text(Event(1.0, "recovery_score", 8.0)) == "8 (scale not stated)"
    assert value_text(Event(1.0, "suction")) == "-"


def test_recovery_scores_and_discharge(analysis, text):
    """Procedure end at 2300 s, discharge at 2450 s: 150 s = 2 min 30 s after it."""
    assert f"Recovery scores (1): {clock(analysis, 2400.0)} score 9 (Aldrete)." in text
    assert f"Discharge at {clock(analysis, 2450.0)} to ward 5, 2 min 30 s after procedure end." in (
        text
    )


def test_recovery_says_plainly_when_nothing_was_logged():
    s = rf.make_analysis().session
    said = recovery_sentences(s)
    assert "No recovery score was logged." in said
    assert "No discharge was logged." in said
    bare = recovery_sentences(replace(s, events=()))
    assert bare[0] == "No procedure end was logged."


def test_strips_mark_procedure_lines_scores_and_oxygen(analysis, tmp_path):
    """The strips name the procedure start and end lines, and mark the depth score (DS 3),
    the oxygen-flow step (O2 2) and the recovery score (RS 9) in the actions lane."""
    path = tmp_path / "strips.pdf"
    render_record(analysis, path)
    strips = norm(" ".join(t for t in page_texts(path) if "Row " in t))
    for words in ("procedure start", "procedure end", "DS 3", "O2 2", "RS 9"):
        assert words in strips, words
