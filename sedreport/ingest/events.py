"""The event log ``events.csv``: ``time,event[,value][,note]``.

Event names are those of :data:`sedreport.session.KNOWN_EVENTS` (DESIGN.md vocabulary); any
other name is an error listing the known ones. ``oxygen_increase`` and ``oxygen_flow`` need a
numeric value (the new flow, 0-15 L/min; an ``oxygen_flow`` note names the device);
``recovery_score`` needs a numeric value (0-100; the note names the scale,
e.g. modified Aldrete). Times must not go backwards.
"""

from __future__ import annotations

import numpy as np

from sedreport.errors import SessionError
from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.csv_reader import column_numbers, column_text, read_csv_table
from sedreport.ingest.files import RawFile, decode_text
from sedreport.ingest.streams import Loaded, ReadContext, check_in_time_order
from sedreport.ingest.times import csv_source_info, parse_times, table_notes
from sedreport.session import KNOWN_EVENTS, Event

#: Oxygen flow limits for ``oxygen_increase`` / ``oxygen_flow`` values, L/min (same as
#: ``oxygen.flow_l_min``).
FLOW_LIMITS_L_MIN = (0.0, 15.0)
#: Events whose value is a new oxygen flow, L/min.
FLOW_EVENTS = ("oxygen_increase", "oxygen_flow")
#: Score limits for ``recovery_score`` values (scales such as the modified Aldrete score run 0-10;
#: a wide plausibility limit, common practice).
SCORE_LIMITS = (0.0, 100.0)
SCORE_EVENTS = ("recovery_score",)


def read_events(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read ``events.csv`` into :class:`sedreport.session.Event` lines."""
    where = f"{ctx.session}/{raw.rel}"
    table = read_csv_table(
        decode_text(raw, ctx.session), where, ("time", "event"), ("value", "note")
    )
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    check_in_time_order(times.time_s, table.at, "events")
    names = column_text(table, "event")
    values = (
        column_numbers(table, "value", "event value", allow_blank=True)
        if "value" in table.frame.columns
        else np.full(len(table), np.nan)
    )
    notes = column_text(table, "note")
    events = [
        _event(
            table.at(i),
            float(times.time_s[i]),
            names[i],
            float(values[i]),
            notes[i],
            int(table.lines[i]),
        )
        for i in range(len(table))
    ]
    findings, warnings = table_notes("events", table, times, ctx.started)
    info = csv_source_info("events", raw, times, spec.clock_offset_s, len(table), times.time_s)
    return Loaded(tuple(events), info, tuple(findings), tuple(warnings))


def _event(at: str, time_s: float, name: str, value: float, note: str, line: int) -> Event:
    key = name.strip().lower()
    if key not in KNOWN_EVENTS:
        raise SessionError(at, f"unknown event {name!r}; known events: {', '.join(KNOWN_EVENTS)}")
    given = None if np.isnan(value) else value
    if key in FLOW_EVENTS:
        lo, hi = FLOW_LIMITS_L_MIN
        if given is None:
            raise SessionError(at, f"{key} needs a value (the new flow in L/min)")
        if not lo <= given <= hi:
            raise SessionError(at, f"{key} flow {given:g} L/min is outside {lo:g}-{hi:g}")
    if key in SCORE_EVENTS:
        lo, hi = SCORE_LIMITS
        if given is None:
            raise SessionError(at, f"{key} needs a value (the score; name the scale in note)")
        if not lo <= given <= hi:
            raise SessionError(at, f"{key} {given:g} is outside {lo:g}-{hi:g}")
    return Event(time_s=time_s, event=key, value=given, note=note, line=line)
