"""The event log ``events.csv``: ``time,event[,value][,note]``.

Event names are those of :data:`sedreport.session.KNOWN_EVENTS` (DESIGN.md vocabulary); any
other name is an error listing the known ones. ``oxygen_increase`` needs a numeric value (the new
flow, 0-15 L/min). Times must not go backwards.
"""

from __future__ import annotations

import numpy as np

from sedreport.errors import SessionError
from sedreport.ingest._yaml import SourceSpec
from sedreport.ingest.csv_reader import column_numbers, column_text, read_csv_table
from sedreport.ingest.files import RawFile, decode_text, is_gzip
from sedreport.ingest.streams import Loaded, ReadContext
from sedreport.ingest.times import parse_times, table_notes
from sedreport.session import KNOWN_EVENTS, Event, SourceInfo

#: Oxygen flow limits for ``oxygen_increase`` values, L/min (same as ``oxygen.flow_l_min``).
FLOW_LIMITS_L_MIN = (0.0, 15.0)


def read_events(raw: RawFile, spec: SourceSpec, ctx: ReadContext) -> Loaded:
    """Read ``events.csv`` into :class:`sedreport.session.Event` lines."""
    where = f"{ctx.session}/{raw.rel}"
    table = read_csv_table(
        decode_text(raw, ctx.session), where, ("time", "event"), ("value", "note")
    )
    times = parse_times(table, ctx.started, spec.clock_offset_s)
    back = np.flatnonzero(np.diff(times.time_s) < 0)
    if back.size:
        row = int(back[0]) + 1
        raise SessionError(
            table.at(row),
            f"time goes backwards ({times.time_s[row]:g} s after "
            f"{times.time_s[row - 1]:g} s); events must be in time order",
        )
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
    info = SourceInfo(
        role="events",
        file=raw.rel,
        sha256=raw.sha256,
        reader="csv.gz" if is_gzip(raw) else "csv",
        rows=len(table),
        clock_offset_s=spec.clock_offset_s,
        time_style=times.style,
        span_s=(float(times.time_s[0]), float(times.time_s[-1])),
    )
    return Loaded(tuple(events), info, tuple(findings), tuple(warnings))


def _event(at: str, time_s: float, name: str, value: float, note: str, line: int) -> Event:
    key = name.strip().lower()
    if key not in KNOWN_EVENTS:
        raise SessionError(at, f"unknown event {name!r}; known events: {', '.join(KNOWN_EVENTS)}")
    given = None if np.isnan(value) else value
    if key == "oxygen_increase":
        lo, hi = FLOW_LIMITS_L_MIN
        if given is None:
            raise SessionError(at, "oxygen_increase needs a value (the new flow in L/min)")
        if not lo <= given <= hi:
            raise SessionError(at, f"oxygen_increase flow {given:g} L/min is outside {lo:g}-{hi:g}")
    return Event(time_s=time_s, event=key, value=given, note=note, line=line)
