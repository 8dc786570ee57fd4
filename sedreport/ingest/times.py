"""Time columns onto the session clock.

A file's times are either all numbers (seconds since ``started``) or all ISO 8601 timestamps;
mixing the two is an error naming the first line of the other style. ISO timestamps are either
all with a UTC offset (``+01:00``, ``Z``: exact) or all without one (read as wall-clock time in
``started``'s offset, reported with a ``naive_time`` finding); mixing those two is an error too,
naming the first line of the second style. ``clock_offset_s`` is then added (DESIGN.md: a monitor
whose clock runs 4 s fast has -4).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime

import numpy as np
import pandas as pd

from sedreport.errors import SessionError
from sedreport.ingest.csv_reader import CsvTable
from sedreport.ingest.files import RawFile, is_gzip
from sedreport.session import QualityFinding, SourceInfo

#: An ISO 8601 UTC offset at the end of a timestamp: Z, +hh, +hhmm or +hh:mm.
_OFFSET = re.compile(r"\d(?:[zZ]|[+-]\d{2}(?::?\d{2})?)$")
#: Start of an ISO 8601 date and time: YYYY-MM-DDThh:mm (a space for the T is accepted).
_ISO_START = re.compile(r"\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}")


@dataclass(frozen=True)
class ParsedTimes:
    """Times of one file on the session clock.

    Attributes
    ----------
    time_s : ndarray of float64
        Seconds on the session clock, ``clock_offset_s`` included.
    style : str
        ``seconds`` or ``iso8601``.
    naive_rows : int
        ISO timestamps that had no offset and took ``started``'s.
    """

    time_s: np.ndarray
    style: str
    naive_rows: int = 0


def parse_times(
    table: CsvTable, started: datetime, clock_offset_s: float, column: str = "time"
) -> ParsedTimes:
    """Parse a CSV time column (seconds or ISO 8601) to session-clock seconds.

    The style is set by the first row; the first row of the other style is a "mixed time
    styles" error, any other unreadable time an error naming its line.

    Parameters
    ----------
    table : CsvTable
    started : datetime
        Aware start of the session (zero of the session clock).
    clock_offset_s : float
        Added to every time, seconds.
    """
    col = table.frame[column]
    if pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col):
        return ParsedTimes(col.to_numpy(dtype=np.float64) + clock_offset_s, "seconds")
    text = col  # stripped text (see read_csv_table)
    blank = text.eq("").to_numpy()
    if blank.any():
        raise SessionError(table.at(int(np.argmax(blank))), "time is empty")
    if _is_number(text.iloc[0]):
        numbers = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64)
        bad = ~np.isfinite(numbers)
        if bad.any():
            _raise_bad(table, text, int(np.argmax(bad)), "seconds")
        return ParsedTimes(numbers + clock_offset_s, "seconds")
    looks_iso = _by_unique(text.str.slice(0, 16), lambda u: _ISO_START.match(u) is not None)
    if not looks_iso.all():
        _raise_bad(table, text, int(np.argmax(~looks_iso)), "ISO 8601")
    seconds, naive = _iso_to_seconds(table, text, started)
    return ParsedTimes(seconds + clock_offset_s, "iso8601", int(naive.sum()))


def _is_number(value: str) -> bool:
    try:
        return np.isfinite(float(value))
    except ValueError:
        return False


def _by_unique(parts: pd.Series, test) -> np.ndarray:
    """Vectorised ``test`` over short string pieces: evaluated once per distinct value."""
    uniq = parts.unique()
    ok = [u for u in uniq if test(str(u))]
    return parts.isin(ok).to_numpy()


def _raise_bad(table: CsvTable, text: pd.Series, row: int, first: str) -> None:
    given = text.iloc[row]
    other_style = _ISO_START.match(given) is not None if first == "seconds" else _is_number(given)
    if other_style:
        raise SessionError(
            table.at(row),
            f"mixed time styles: {given!r} but line {table.lines[0]} uses {first}",
        )
    raise SessionError(table.at(row), f"time {given!r} is neither seconds nor ISO 8601")


def _iso_to_seconds(
    table: CsvTable, text: pd.Series, started: datetime
) -> tuple[np.ndarray, np.ndarray]:
    """ISO strings to seconds since ``started``; naive ones in ``started``'s offset."""
    has_offset = _by_unique(text.str.slice(-7), lambda u: _OFFSET.search(u) is not None)
    _check_one_offset_style(table, text, has_offset)
    seconds = np.full(len(text), np.nan)
    if has_offset.any():
        aware = pd.to_datetime(text[has_offset], format="ISO8601", utc=True, errors="coerce")
        start_utc = pd.Timestamp(started).tz_convert("UTC")
        seconds[has_offset] = (aware - start_utc).dt.total_seconds().to_numpy()
    naive = ~has_offset
    if naive.any():
        try:
            local = pd.to_datetime(text[naive], format="ISO8601", errors="coerce")
            if getattr(local.dt, "tz", None) is not None:
                raise ValueError("offset not recognised")
        except (ValueError, TypeError):
            row = int(np.argmax(naive))
            raise SessionError(
                table.at(row), f"time {text.iloc[row]!r} has an unreadable UTC offset"
            ) from None
        wall = pd.Timestamp(started.replace(tzinfo=None))
        seconds[naive] = (local - wall).dt.total_seconds().to_numpy()
    bad = np.isnan(seconds)
    if bad.any():
        row = int(np.argmax(bad))
        raise SessionError(
            table.at(row), f"time {text.iloc[row]!r} is not a valid ISO 8601 timestamp"
        )
    return seconds, naive


def _check_one_offset_style(table: CsvTable, text: pd.Series, has_offset: np.ndarray) -> None:
    """Refuse ISO times with and without a UTC offset in one file (first row sets the style)."""
    other = has_offset != has_offset[0]
    if not other.any():
        return
    row = int(np.argmax(other))
    first = f"line {table.lines[0]} ({text.iloc[0]!r})"
    what = "has no UTC offset but" if has_offset[0] else "has a UTC offset but"
    whose = "has one" if has_offset[0] else "has none"
    raise SessionError(
        table.at(row),
        f"mixed time styles: {text.iloc[row]!r} {what} {first} {whose}; "
        "write every time of a file with an offset or every time without",
    )


def edf_start_seconds(file_start: datetime, started: datetime) -> float:
    """Seconds from ``started`` to a naive file start (EDF/WFDB clocks carry no offset).

    The file's wall-clock time is taken in ``started``'s offset.
    """
    if file_start.tzinfo is None:
        file_start = file_start.replace(tzinfo=started.tzinfo)
    return (file_start - started).total_seconds()


def table_notes(
    role: str, table: CsvTable, times: ParsedTimes, started: datetime
) -> tuple[list[QualityFinding], list[str]]:
    """Findings and warnings every CSV reader reports: naive timestamps, skipped blank lines,
    unused columns (counted, never dropped silently).

    Parameters
    ----------
    role : str
        ``co2``, ``spo2``, ``doses`` or ``events``.
    started : datetime
        The session's ``started``; its UTC offset is named for naive timestamps.
    """
    findings: list[QualityFinding] = []
    warnings: list[str] = []
    if times.naive_rows:
        offset = started.isoformat(timespec="seconds")[19:]
        msg = (
            f"{role}: {times.naive_rows} timestamps without UTC offset "
            f"read in started's offset ({offset})"
        )
        findings.append(QualityFinding("naive_time", role, msg))
        warnings.append(msg)
    if table.blank_lines:
        warnings.append(f"{role}: {table.blank_lines} blank lines skipped")
    if table.extra_columns:
        warnings.append(f"{role}: columns not used: {', '.join(map(repr, table.extra_columns))}")
    return findings, warnings


def csv_source_info(
    role: str,
    raw: RawFile,
    times: ParsedTimes,
    clock_offset_s: float,
    rows: int,
    time_s: np.ndarray,
    **fields,
) -> SourceInfo:
    """Provenance of one CSV / CSV.gz source: file, hash, reader, rows, clock and span.

    ``time_s`` gives the span (the kept samples' times); ``fields`` are the role-specific
    :class:`SourceInfo` fields (units, conversion, sample rate).
    """
    return SourceInfo(
        role=role,
        file=raw.rel,
        sha256=raw.sha256,
        reader="csv.gz" if is_gzip(raw) else "csv",
        rows=rows,
        clock_offset_s=clock_offset_s,
        time_style=times.style,
        span_s=(float(time_s[0]), float(time_s[-1])),
        **fields,
    )
