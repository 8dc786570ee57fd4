"""The events-and-notes log (every line of the event log) and the recovery section.

Nothing of the event log is left out: procedure start and end, depth scores, interventions with
their notes, free-text notes, oxygen changes, recovery scores, discharge and any event name the
record does not know yet, each with its clock time, value (with its unit where known) and note.
"""

from __future__ import annotations

from reportlab.platypus import Paragraph

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.fmt import DASH, clock_text, duration_text, words
from sedreport.render.glossary import TermMark, standard_terms
from sedreport.render.styles import para_text
from sedreport.render.tables import cell, grid_table, scaled
from sedreport.session import Event, Session

#: Events whose value is an oxygen flow in L/min (DESIGN.md event vocabulary).
OXYGEN_EVENTS: tuple[str, ...] = ("oxygen_flow", "oxygen_increase")
#: Events whose value is a score on the scale the note names (MOASS, Aldrete...).
SCORE_EVENTS: tuple[str, ...] = ("depth_score", "recovery_score")


def ordered_events(session: Session) -> list[Event]:
    """Every logged event in time order (file line breaks ties)."""
    return sorted(session.events, key=lambda e: (e.time_s, e.line))


def value_text(e: Event) -> str:
    """The value of an event with its unit where the event says which: ``4 L/min`` for oxygen,
    ``3 (MOASS)`` for a score with its scale from the note, ``3 (scale not stated)`` without."""
    if e.value is None:
        return DASH
    if e.event in OXYGEN_EVENTS:
        return f"{e.value:g} L/min"
    if e.event in SCORE_EVENTS:
        return f"{e.value:g} ({e.note.strip() or 'scale not stated'})"
    return f"{e.value:g}"


def note_text(e: Event) -> str:
    """The note of an event; a score's note is its scale, already shown beside the value."""
    if e.event in SCORE_EVENTS and e.value is not None:
        return DASH
    if e.event == "oxygen_flow" and e.note.strip():
        return words(e.note.strip())  # the device, a code such as nasal_cannula, in words
    return e.note.strip() or DASH


def log_rows(session: Session) -> list[list]:
    """One table row per logged event: clock time, event in words, value, note."""
    return [
        [
            cell(clock_text(session, e.time_s)),
            cell(words(e.event)),
            cell(value_text(e)),
            cell(note_text(e)),
        ]
        for e in ordered_events(session)
    ]


def log_flowables(analysis: Analysis, width_pt: float) -> list:
    """Heading and the events-and-notes table, or a plain sentence when nothing was logged."""
    s = analysis.session
    out: list = [Paragraph("Events and notes", styles.H1)]
    if s.source("events") is None and not s.events:
        out.append(Paragraph("No event log was given for this session.", styles.BODY))
        return out
    if not s.events:
        out.append(Paragraph("The event log holds no events.", styles.BODY))
        return out
    out.append(
        Paragraph(
            para_text(
                f"Every line of the event log, {len(s.events)} in all, in clock order; scores "
                "carry the scale named in their note, oxygen flows are in L/min."
            ),
            styles.SMALL_KEEP,
        )
    )
    head = [cell(h, styles.CELL_BOLD) for h in ("Time", "Event", "Value", "Note")]
    # notes are free text and often name CO2 or SpO2: explain them where the log starts and ends
    terms = TermMark(standard_terms("CO2", "SpO2"))
    out += [terms, grid_table([head] + log_rows(s), scaled([0.9, 1.6, 1.5, 3.6], width_pt)), terms]
    return out


def procedure_end_s(session: Session) -> float | None:
    """Time of the last ``procedure_end`` event, None when none was logged."""
    ends = [e.time_s for e in session.events if e.event == "procedure_end"]
    return max(ends) if ends else None


def recovery_sentences(session: Session) -> list[str]:
    """Recovery scores after procedure end and the discharge, in plain sentences; says so
    plainly when none were logged."""
    end = procedure_end_s(session)
    clock = clock_text(session, end) if end is not None else None
    scores = [e for e in ordered_events(session) if e.event == "recovery_score"]
    out = []
    if end is None:
        out.append("No procedure end was logged.")
    else:
        out.append(f"Procedure end logged at {clock}.")
    if scores:
        parts = [f"{clock_text(session, e.time_s)} score {value_text(e)}" for e in scores]
        out.append(f"Recovery scores ({len(scores)}): " + "; ".join(parts) + ".")
        if end is not None and any(e.time_s < end for e in scores):
            out.append("Some recovery scores were logged before the procedure end.")
    else:
        out.append("No recovery score was logged.")
    discharges = [e for e in ordered_events(session) if e.event == "discharge"]
    if not discharges:
        out.append("No discharge was logged.")
    for e in discharges:
        where = e.note.strip() or "destination not stated"
        after = (
            f", {duration_text(e.time_s - end)} after procedure end"
            if end is not None and e.time_s >= end
            else ""
        )
        out.append(f"Discharge at {clock_text(session, e.time_s)} to {where}{after}.")
    return out


def recovery_flowables(analysis: Analysis) -> list:
    """The recovery section: scores after procedure end, discharge time and destination."""
    out: list = [Paragraph("Recovery", styles.H1)]
    for sentence in recovery_sentences(analysis.session):
        out.append(Paragraph(para_text(sentence), styles.BODY))
    return out
