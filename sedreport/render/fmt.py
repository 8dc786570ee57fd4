"""Formatting of times, durations and measured numbers for the record's text and tables."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

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


def _trimmed(text: str) -> str:
    return text.rstrip("0").rstrip(".") if "." in text else text


def significant_text(value: float, figures: int = 3) -> str:
    """``value`` to ``figures`` significant figures in plain notation, no trailing zeros.

    Halves round up, as a person rounds (``2.25`` -> ``2.3`` at two figures), from the shortest
    decimal form of the float. Whole-number digits are never cut (``1234.5`` -> ``1235`` at
    three figures). ``1.7778`` -> ``1.78``, ``0.017241`` -> ``0.0172``.
    """
    if not math.isfinite(value):
        return DASH
    if value == 0:
        return "0"
    digits = max(figures - 1 - math.floor(math.log10(abs(value))), 0)
    exact = Decimal(repr(float(value)))
    return _trimmed(f"{exact.quantize(Decimal(1).scaleb(-digits), rounding=ROUND_HALF_UP):f}")


def amount_text(amount: float, unit: str) -> str:
    """A drug amount to four significant figures, no trailing zeros.

    ``127.85 mg`` -> ``127.9 mg`` beside ``107.2 mg`` and ``40 mg``; ``2.25 mg`` stays as
    written and ``0.125 mg`` keeps its figures, so small doses are not rounded away.
    """
    if not math.isfinite(amount):
        return DASH
    return f"{significant_text(amount, 4)} {unit}"


#: The one precision rule of weight-based amounts and rates in the record (dose table, totals,
#: episode table): three significant figures, trailing zeros kept, so every per-kg figure
#: shows the same precision (``0.610 mcg/kg`` beside ``0.366 mg/kg``, ``4.50 mg/kg/h``).
PER_KG_FIGURES: int = 3


def per_kg_text(value: float, unit: str) -> str:
    """A weight-based dose or rate to :data:`PER_KG_FIGURES` significant figures, trailing
    zeros kept (``1.78 mg/kg``, ``0.610 mcg/kg``, ``4.50 mg/kg/h``)."""
    return f"{figures_text(value, PER_KG_FIGURES)} {unit}"


def figures_text(value: float, figures: int) -> str:
    """``value`` to ``figures`` significant figures, trailing zeros kept (``0.61`` -> ``0.610``
    at three figures); whole-number digits are never cut."""
    if not math.isfinite(value):
        return DASH
    if value == 0:
        return "0"
    digits = max(figures - 1 - math.floor(math.log10(abs(value))), 0)
    exact = Decimal(repr(float(value)))
    return f"{exact.quantize(Decimal(1).scaleb(-digits), rounding=ROUND_HALF_UP):f}"


def words(name: str) -> str:
    """``airway_repositioning`` -> ``airway repositioning``."""
    return name.replace("_", " ")


def severity_text(tier: str | None) -> str:
    """A World SIVA tier as it is; None (an episode that is a finding, not part of an adverse
    event) reads ``finding``."""
    return "finding" if tier is None else words(tier)
