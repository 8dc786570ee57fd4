"""The audit CSV: one row per stratum, kind and tier (a stable contract, DESIGN.md)."""

from __future__ import annotations

import csv
import io
import math

from sedreport.audit.rates import RateRow

#: Columns of the audit CSV, in order. The first twelve are the contract of DESIGN.md.
AUDIT_COLUMNS: tuple[str, ...] = (
    "by",
    "group",
    "kind",
    "severity",
    "sessions",
    "sessions_with_event",
    "events",
    "rate_per_1000",
    "wilson_low_per_1000",
    "wilson_high_per_1000",
    "exact_low_per_1000",
    "exact_high_per_1000",
    "rule_of_three_high_per_1000",
    "events_per_1000",
)


def per_1000(x: float | None) -> str:
    """A fraction as a rate per 1,000 with 6 decimals (empty when undefined).

    Examples
    --------
    >>> per_1000(0.0228), per_1000(None)
    ('22.800000', '')
    """
    if x is None or not math.isfinite(x):
        return ""
    return f"{1000.0 * x:.6f}"


def rate_row(r: RateRow) -> list[str]:
    """One CSV row of a :class:`RateRow`."""
    p = r.proportion
    events_rate = r.events / r.sessions if r.sessions else None
    return [
        r.by,
        r.group,
        r.kind,
        r.severity,
        str(r.sessions),
        str(r.sessions_with_event),
        str(r.events),
        per_1000(p.rate),
        per_1000(p.wilson_low),
        per_1000(p.wilson_high),
        per_1000(p.exact_low),
        per_1000(p.exact_high),
        per_1000(p.rule_of_three_high),
        per_1000(events_rate),
    ]


def audit_csv(rows) -> str:
    """The audit CSV text (header and one line per row, ``\\n`` line ends)."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(AUDIT_COLUMNS)
    for r in rows:
        w.writerow(rate_row(r))
    return out.getvalue()
