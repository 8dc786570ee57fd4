"""One pass over an audit's session records: rates, strata, funnels, control charts, case list.

:func:`build_audit` reads records one at a time (from the register or any iterable) and
returns an :class:`Audit` of plain data for the renderers. Chart settings are conventions of
the methods named beside them.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

import numpy as np

from sedreport.audit.rates import (
    ADVERSE,
    EVENT_TIERS,
    STRATA,
    CaseEntry,
    MeasureCounter,
    ProcessMeasures,
    RateCounter,
    RateRow,
    case_entry,
    chart_outcome,
    group_of,
    monthly_counts,
)
from sedreport.audit.stats import Cusum, PChart, bernoulli_cusum, funnel_limits, p_chart
from sedreport.errors import SedreportError

#: Two-sided coverage of the inner and outer funnel limits (Spiegelhalter, Stat Med 2005).
FUNNEL_LEVELS: tuple[float, float] = (0.95, 0.998)
#: Sigma multiple of the p-chart limits (Shewhart; Montgomery, ch. 7).
P_CHART_SIGMAS = 3.0
#: Odds ratio the CUSUM is tuned to detect and its decision limit h (Steiner et al.,
#: Biostatistics 2000, used R = 2 and h = 4.5 for a doubling of the odds).
CUSUM_ODDS_RATIO = 2.0
CUSUM_THRESHOLD = 4.5
#: Fewest sessions of an ASA-class/target-depth cell for its own expected risk; smaller cells
#: take the overall rate (a choice of this tool, stated in the method notes).
RISK_CELL_MIN_SESSIONS = 20
#: Fields a funnel plot is drawn for.
FUNNEL_FIELDS: tuple[str, ...] = ("provider", "area")


@dataclass(frozen=True)
class Funnel:
    """Units' rates of the charted outcome against the overall rate with funnel limits."""

    field: str
    groups: tuple[str, ...]
    n: tuple[int, ...]
    k: tuple[int, ...]
    p0: float
    grid_n: np.ndarray
    limits: dict
    outside: dict


@dataclass(frozen=True)
class Audit:
    """Everything an audit report shows (plain data)."""

    rows: tuple[RateRow, ...]
    by: tuple[str, ...]
    event: tuple[str, str]
    sessions: int
    first_started: str | None
    last_started: str | None
    measures: ProcessMeasures
    cases: tuple[CaseEntry, ...]
    excluded: tuple[tuple[str, str, str], ...]
    funnels: tuple[Funnel, ...]
    p_chart: PChart | None
    cusum: Cusum | None
    cusum_labels: tuple[str, ...]
    criteria: tuple[str, ...]


def parse_event(text: str) -> tuple[str, str]:
    """``--event`` value: ``KIND`` or ``adverse_event[:TIER]`` -> (kind, severity).

    Examples
    --------
    >>> parse_event("adverse_event:moderate"), parse_event("apnoea")
    (('adverse_event', 'moderate'), ('apnoea', 'any'))
    """
    kind, _, tier = text.partition(":")
    tier = tier or "any"
    if kind != ADVERSE and tier != "any":
        raise SedreportError(f"--event: only adverse_event takes a tier, got {text!r}")
    if tier not in (*EVENT_TIERS, "any"):
        raise SedreportError(f"--event: tier must be one of {', '.join(EVENT_TIERS)}; got {tier!r}")
    return kind, tier


def funnel_of(counter: RateCounter, field: str, event: tuple[str, str]) -> Funnel | None:
    """The funnel plot data of ``field`` from a counter that stratified by it."""
    rows = [
        r
        for r in counter.rows()
        if r.by == field and (r.kind, r.severity) == event and r.sessions > 0
    ]
    total = next(
        (r for r in counter.rows() if r.by == "all" and (r.kind, r.severity) == event), None
    )
    if not rows or total is None or total.sessions == 0:
        return None
    p0 = total.sessions_with_event / total.sessions
    grid = np.unique(np.geomspace(1, max(r.sessions for r in rows) * 1.1, 120).round())
    limits, outside = {}, {}
    for level in FUNNEL_LEVELS:
        limits[level] = funnel_limits(p0, grid, level)
        lo, hi = funnel_limits(p0, np.array([r.sessions for r in rows]), level)
        rates = np.array([r.proportion.rate for r in rows])
        outside[level] = tuple(
            r.group for r, o in zip(rows, (rates < lo) | (rates > hi), strict=True) if o
        )
    return Funnel(
        field,
        tuple(r.group for r in rows),
        tuple(r.sessions for r in rows),
        tuple(r.sessions_with_event for r in rows),
        p0,
        grid,
        limits,
        outside,
    )


def expected_risks(cells: list[tuple[str, str]], y: list[int]) -> np.ndarray:
    """Expected risk of each session from its ASA-class/target-depth cell over the audit."""
    n, k = Counter(cells), Counter()
    for c, yi in zip(cells, y, strict=True):
        k[c] += yi
    overall = sum(y) / len(y)
    return np.array([k[c] / n[c] if n[c] >= RISK_CELL_MIN_SESSIONS else overall for c in cells])


def build_audit(
    records,
    *,
    by=(),
    event: tuple[str, str] = (ADVERSE, "any"),
    excluded=(),
    risk_adjust: bool = False,
    confidence: float = 0.95,
) -> Audit:
    """Count and chart an audit from session records (in order of start time).

    Parameters
    ----------
    records : iterable of dict
        Session records (:mod:`sedreport.audit.records`), read once, one at a time.
    by : sequence of str
        Strata for the tables and the CSV (each in :data:`STRATA`).
    event : (kind, severity)
        The outcome charted in the funnel plots, the p-chart and the CUSUM.
    excluded : sequence of (session_id, path, reason)
        Sessions that could not be analysed.
    risk_adjust : bool
        CUSUM expected risk per ASA class and target depth (Steiner et al., 2000).
    """
    for field in by:
        if field not in STRATA:
            raise SedreportError(f"--by: unknown field {field!r} (one of {', '.join(STRATA)})")
    counter = RateCounter(tuple(dict.fromkeys((*by, *FUNNEL_FIELDS))))
    measures = MeasureCounter()
    cases, months, y, cells, labels, criteria = [], [], [], [], [], set()
    first = last = None
    for rec in records:
        counter.add(rec)
        measures.add(rec)
        entry = case_entry(rec)
        if entry is not None:
            cases.append(entry)
        yi = chart_outcome(rec, *event)
        months.append((group_of(rec, "month"), yi))
        y.append(yi)
        cells.append((group_of(rec, "asa_class"), group_of(rec, "target_depth")))
        labels.append(rec["session_id"])
        criteria.add(str(rec.get("criteria", {}).get("name")))
        first = first or rec.get("started")
        last = rec.get("started")
    known = {k for k, _ in counter.kinds()}
    if y and event[0] not in known:
        raise SedreportError(
            f"--event: no outcome {event[0]!r} in this audit (one of {', '.join(sorted(known))})"
        )
    rows = tuple(r for r in counter.rows(confidence) if r.by in ("all", *by))
    funnels = tuple(f for f in (funnel_of(counter, fld, event) for fld in FUNNEL_FIELDS) if f)
    chart = cusum = None
    if y:
        chart = p_chart(*monthly_counts(months), sigmas=P_CHART_SIGMAS)
        p = expected_risks(cells, y) if risk_adjust else np.full(len(y), sum(y) / len(y))
        cusum = bernoulli_cusum(y, p, CUSUM_ODDS_RATIO, CUSUM_THRESHOLD, risk_adjust)
    return Audit(
        rows,
        tuple(by),
        event,
        len(y),
        first,
        last,
        measures.result(),
        tuple(cases),
        tuple(excluded),
        funnels,
        chart,
        cusum,
        tuple(labels),
        tuple(sorted(criteria)),
    )
