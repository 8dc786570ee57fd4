"""Counting an audit: sessions, sessions with an event, events; overall and per stratum.

Works on session records (the episodes contract of DESIGN.md with a ``meta`` object, see
:mod:`sedreport.audit.records`), one at a time, so memory grows with the number of strata and
never with the number of sessions.
"""

from __future__ import annotations

from collections import Counter, defaultdict
from dataclasses import dataclass

from sedreport.audit.stats import Proportion, median_or_none, proportion

#: Episode kinds of the contract, each with a row even when nobody had one. The same tuple as
#: ``sedreport.episodes.model.EPISODE_KINDS`` (a test holds them equal); kept here so that a
#: warm audit does not import the detection stack.
EPISODE_KINDS: tuple[str, ...] = (
    "apnoea",
    "hypoventilation",
    "desaturation",
    "rebreathing",
    "sloped_plateau",
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
    "hypotension",
    "bradycardia",
)
#: World SIVA adverse-event tiers (Mason et al., Br J Anaesth 2012), lowest first.
EVENT_TIERS: tuple[str, ...] = ("minimal", "minor", "moderate", "sentinel")
#: The kind of the adverse-event rows of the audit CSV.
ADVERSE = "adverse_event"
#: Fields an audit can be stratified by (``--by``).
STRATA: tuple[str, ...] = (
    "area",
    "procedure",
    "asa_class",
    "target_depth",
    "regimen",
    "provider",
    "month",
)
#: Tiers that put a session on the case list for one-by-one review.
REVIEW_TIERS: tuple[str, ...] = ("moderate", "sentinel")


@dataclass(frozen=True)
class RateRow:
    """One row of the audit table: a stratum, a kind, a tier, its counts and intervals."""

    by: str
    group: str
    kind: str
    severity: str
    sessions: int
    sessions_with_event: int
    events: int
    proportion: Proportion


def group_of(record: dict, field: str) -> str:
    """The stratum value of a record for ``field`` (``unknown`` when missing)."""
    value = record.get("meta", {}).get(field)
    return "unknown" if value in (None, "") else str(value)


def outcomes(record: dict) -> Counter:
    """Counts per (kind, severity) of one session record.

    Episodes count under their kind with severity ``any``; adverse events under
    ``adverse_event`` with their tier and with ``any``.

    Examples
    --------
    >>> rec = {"episodes": [{"kind": "apnoea"}, {"kind": "apnoea"}],
    ...        "events": [{"severity": "minor"}]}
    >>> sorted(outcomes(rec).items())
    [(('adverse_event', 'any'), 1), (('adverse_event', 'minor'), 1), (('apnoea', 'any'), 2)]
    """
    out: Counter = Counter()
    for e in record.get("episodes", []):
        out[(e["kind"], "any")] += 1
    for ev in record.get("events", []):
        out[(ADVERSE, ev["severity"])] += 1
        out[(ADVERSE, "any")] += 1
    return out


class RateCounter:
    """Accumulates session records into :class:`RateRow` s.

    Parameters
    ----------
    by : sequence of str
        Stratifying fields (each in :data:`STRATA`); the overall rows are always made.

    Examples
    --------
    >>> c = RateCounter(["area"])
    >>> c.add({"meta": {"area": "endoscopy"}, "episodes": [{"kind": "apnoea"}], "events": []})
    >>> c.add({"meta": {"area": "endoscopy"}, "episodes": [], "events": []})
    >>> row = next(r for r in c.rows() if r.kind == "apnoea" and r.by == "all")
    >>> row.sessions, row.sessions_with_event, row.proportion.rate
    (2, 1, 0.5)
    """

    def __init__(self, by=()):
        self.by = tuple(by)
        self._sessions: Counter = Counter()
        self._with: Counter = Counter()
        self._events: Counter = Counter()
        self._kinds: set[str] = set()

    def add(self, record: dict) -> None:
        """Count one session record."""
        counts = outcomes(record)
        strata = [("all", "all")] + [(f, group_of(record, f)) for f in self.by]
        for stratum in strata:
            self._sessions[stratum] += 1
            for key, n in counts.items():
                self._with[(*stratum, *key)] += 1
                self._events[(*stratum, *key)] += n
        self._kinds.update(k for k, _ in counts if k != ADVERSE)

    def kinds(self) -> list[tuple[str, str]]:
        """Every (kind, severity) row of a stratum, in CSV order."""
        extra = sorted(self._kinds - set(EPISODE_KINDS))
        return [(k, "any") for k in (*EPISODE_KINDS, *extra)] + [
            (ADVERSE, t) for t in (*EVENT_TIERS, "any")
        ]

    def strata(self) -> list[tuple[str, str]]:
        """Strata in order: overall, then each ``by`` field with its groups sorted."""
        out = [("all", "all")] if self._sessions else []
        for field in self.by:
            groups = sorted(g for f, g in self._sessions if f == field)
            out += [(field, g) for g in groups]
        return out

    def rows(self, confidence: float = 0.95) -> list[RateRow]:
        """One row per stratum, kind and tier."""
        out = []
        for stratum in self.strata():
            n = self._sessions[stratum]
            for kind in self.kinds():
                k = self._with[(*stratum, *kind)]
                out.append(
                    RateRow(
                        *stratum,
                        *kind,
                        n,
                        k,
                        self._events[(*stratum, *kind)],
                        proportion(k, n, confidence),
                    )
                )
        return out


@dataclass(frozen=True)
class CaseEntry:
    """A session with a moderate or sentinel adverse event, for one-by-one review."""

    session_id: str
    path: str
    started: str
    area: str
    provider: str
    worst: str
    events: tuple[str, ...]


def case_entry(record: dict) -> CaseEntry | None:
    """The case-list entry of a record, or None when it has no moderate/sentinel event."""
    events = record.get("events", [])
    tiers = [ev["severity"] for ev in events]
    if not any(t in REVIEW_TIERS for t in tiers):
        return None
    worst = max(tiers, key=lambda t: EVENT_TIERS.index(t) if t in EVENT_TIERS else -1)
    lines = []
    for ev in events:
        words = "; ".join(d.get("text", "") for d in ev.get("descriptors", []) if d)
        lines.append(f"{ev['id']} {ev['severity']}" + (f": {words}" if words else ""))
    return CaseEntry(
        record["session_id"],
        group_of(record, "path"),
        str(record.get("started", "")),
        group_of(record, "area"),
        group_of(record, "provider"),
        worst,
        tuple(lines),
    )


@dataclass(frozen=True)
class ProcessMeasures:
    """Monitoring and response measures over the audited sessions.

    Attributes
    ----------
    sessions : int
    with_capnography : int
        Sessions with any CO2 coverage of the sedation window.
    median_co2_coverage_pct : float or None
        Median share of the sedation window covered by gap-free CO2, percent.
    median_capnographic_lead_s : float or None
        Median seconds by which an apnoea/hypoventilation preceded the desaturation it led to.
    lead_episodes : int
    median_time_to_intervention_s : float or None
        Median seconds from an episode's onset to its first linked intervention.
    intervention_episodes : int
    """

    sessions: int
    with_capnography: int
    median_co2_coverage_pct: float | None
    median_capnographic_lead_s: float | None
    lead_episodes: int
    median_time_to_intervention_s: float | None
    intervention_episodes: int


class MeasureCounter:
    """Accumulates :class:`ProcessMeasures` (keeps one float per measured episode)."""

    def __init__(self):
        self.sessions = 0
        self.with_co2 = 0
        self.coverage: list[float] = []
        self.lead: list[float] = []
        self.to_intervention: list[float] = []

    def add(self, record: dict) -> None:
        """Count one session record."""
        self.sessions += 1
        cov = record.get("summary", {}).get("co2_coverage_pct")
        if cov is not None:
            self.coverage.append(float(cov))
            self.with_co2 += cov > 0
        for e in record.get("episodes", []):
            if e.get("capnographic_lead_s") is not None:
                self.lead.append(float(e["capnographic_lead_s"]))
            if e.get("time_to_first_intervention_s") is not None:
                self.to_intervention.append(float(e["time_to_first_intervention_s"]))

    def result(self) -> ProcessMeasures:
        """The measures so far."""
        return ProcessMeasures(
            self.sessions,
            self.with_co2,
            median_or_none(self.coverage),
            median_or_none(self.lead),
            len(self.lead),
            median_or_none(self.to_intervention),
            len(self.to_intervention),
        )


def chart_outcome(record: dict, kind: str, severity: str = "any") -> int:
    """1 when the session has at least one ``kind``/``severity`` outcome, else 0."""
    return int(outcomes(record)[(kind, severity)] > 0)


def monthly_counts(pairs) -> tuple[list[str], list[int], list[int]]:
    """Months in order with sessions with the outcome and sessions: from (month, y) pairs."""
    k: defaultdict = defaultdict(int)
    n: defaultdict = defaultdict(int)
    for month, y in pairs:
        k[month] += y
        n[month] += 1
    months = sorted(n)
    return months, [k[m] for m in months], [n[m] for m in months]
