"""Formatting of times, durations and measured numbers for the record's text and tables."""

from __future__ import annotations

import math

from sedreport.session import Session

DASH = "-"


def clock_text(session: Session, t_s: float | None, seconds: bool = True) -> str:
    """Wall-clock time of a session-clock time, ``HH:MM:SS`` (or ``HH:MM``)."""
    if t_s is None or not math.isfinite(t_s):
        return DASH
    return session.clock_time(t_s).strftime("%H:%M:%S" if seconds else "%H:%M")


def duration_text(duration_s: float | None) -> str:
    """``38 s``, ``4 min 05 s`` or ``2 h 03 min``; ``-`` when unknown."""
    if duration_s is None or not math.isfinite(duration_s):
        return DASH
    total = int(round(duration_s))
    if total < 60:
        return f"{total} s"
    if total < 3600:
        return f"{total // 60} min {total % 60:02d} s"
    return f"{total // 3600} h {(total % 3600) // 60:02d} min"


def number_text(value: float | None, digits: int = 0, unit: str = "") -> str:
    """A number rounded to ``digits`` decimals with an optional unit; ``-`` when unknown."""
    if value is None:
        return DASH
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return DASH
    text = f"{v:.{digits}f}"
    return f"{text} {unit}" if unit else text


def amount_text(amount: float, unit: str) -> str:
    """A drug amount with up to three significant decimals, no trailing zeros."""
    text = f"{amount:.3f}".rstrip("0").rstrip(".")
    return f"{text} {unit}"


def words(name: str) -> str:
    """``airway_repositioning`` -> ``airway repositioning``."""
    return name.replace("_", " ")
