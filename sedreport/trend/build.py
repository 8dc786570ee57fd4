"""Visits of one patient in date order, with the change of each index from the first and the
previous visit and whether that change is within the noise (:mod:`sedreport.trend.stats`)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from sedreport.errors import SessionError
from sedreport.session import Session
from sedreport.trend.settings import TrendSettings, load_trend_settings
from sedreport.trend.stats import Change, IndexStat, change
from sedreport.trend.visit import BREATH_INDICES, VisitIndices, visit_indices

#: Indices compared between visits (breath indices and the SpO2 median).
COMPARED: tuple[str, ...] = (*BREATH_INDICES, "spo2_pct")


@dataclass(frozen=True)
class OxygenMark:
    """A change of oxygen device or flow from the previous visit (``visit`` is its index)."""

    visit: int
    before: str
    after: str


def usual_oxygen(visits: Sequence[VisitIndices]) -> str:
    """The oxygen setting of most visits (the earliest such setting on a tie)."""
    keys = [oxygen_text(v) for v in visits]
    return max(dict.fromkeys(keys), key=keys.count)


@dataclass(frozen=True)
class Trend:
    """The trend of one patient: visits in date order and the changes between them.

    Attributes
    ----------
    patient_ref : str
    visits : tuple of VisitIndices
        In order of ``started``.
    from_first, from_previous : tuple of dict
        Per visit, index name -> :class:`Change` (empty dict for the first visit).
    oxygen_marks : tuple of OxygenMark
    settings : TrendSettings
    """

    patient_ref: str
    visits: tuple[VisitIndices, ...]
    from_first: tuple[dict[str, Change], ...]
    from_previous: tuple[dict[str, Change], ...]
    oxygen_marks: tuple[OxygenMark, ...]
    settings: TrendSettings


def stat_of(visit: VisitIndices, index: str) -> IndexStat | None:
    """The :class:`IndexStat` of a breath index or ``spo2_pct`` (None without SpO2)."""
    if index == "spo2_pct":
        return None if visit.spo2 is None else visit.spo2.stat
    return visit.stats[index]


def oxygen_text(visit: VisitIndices) -> str:
    """Oxygen device and flow as one comparison key: ``nasal_cannula 2 L/min``, ``room air``
    or ``not recorded``."""
    if visit.flow_l_min == 0:
        return "room air"
    parts = [
        visit.oxygen_device or "",
        "" if visit.flow_l_min is None else f"{visit.flow_l_min:g} L/min",
    ]
    text = " ".join(p for p in parts if p)
    return text or "not recorded"


def check_one_patient(sessions: Sequence[Session]) -> str:
    """The common patient reference of the visits.

    Raises
    ------
    SessionError
        No visit, a visit without ``patient.ref``, a mix of patients, or a session given twice.
    """
    if not sessions:
        raise SessionError("trend", "no visit given")
    seen: dict[str, Session] = {}
    for s in sessions:
        if not s.patient.ref:
            raise SessionError(
                f"{s.session_id}/session.yaml:patient.ref", "missing; a trend needs it"
            )
        if s.session_id in seen:
            raise SessionError(s.session_id, "the same visit (session_id) is given twice")
        seen[s.session_id] = s
    first = sessions[0]
    for s in sessions[1:]:
        if s.patient.ref != first.patient.ref:
            raise SessionError(
                f"{s.session_id}/session.yaml:patient.ref",
                f"patient {s.patient.ref!r} differs from {first.patient.ref!r} of "
                f"{first.session_id}; a trend is for one patient",
            )
    return first.patient.ref


def _changes(visits, ref_of, conf: float, spo2_floor: float) -> tuple[dict[str, Change], ...]:
    out = []
    for i, v in enumerate(visits):
        j = ref_of(i)
        if j is None:
            out.append({})
            continue
        row = {}
        for k in COMPARED:
            new, old = stat_of(v, k), stat_of(visits[j], k)
            if new is not None and old is not None:
                floor = spo2_floor if k == "spo2_pct" else 0.0
                row[k] = change(k, new, old, conf, floor)
        out.append(row)
    return tuple(out)


def build_trend(sessions: Sequence[Session], settings: TrendSettings | None = None) -> Trend:
    """Per-visit indices of one patient's visits, ordered by date, with the changes.

    Parameters
    ----------
    sessions : sequence of Session
        The visits, in any order.
    settings : TrendSettings, optional
        Default: the shipped ``templates/criteria/trend/default.yaml``.

    Raises
    ------
    SessionError
        A mix of patients, a missing patient reference, a repeated visit, or a visit that
        cannot be measured (no capnogram, fewer than 3 valid breaths).
    """
    settings = settings or load_trend_settings()
    ref = check_one_patient(sessions)
    ordered = sorted(sessions, key=lambda s: (s.started, s.session_id))
    visits = tuple(visit_indices(s, settings) for s in ordered)
    conf = settings.value("noise.confidence_pct")
    floor = settings.value("noise.spo2_resolution_pct")
    marks = tuple(
        OxygenMark(i, oxygen_text(visits[i - 1]), oxygen_text(visits[i]))
        for i in range(1, len(visits))
        if oxygen_text(visits[i]) != oxygen_text(visits[i - 1])
    )
    return Trend(
        patient_ref=ref,
        visits=visits,
        from_first=_changes(visits, lambda i: 0 if i > 0 else None, conf, floor),
        from_previous=_changes(visits, lambda i: i - 1 if i > 0 else None, conf, floor),
        oxygen_marks=marks,
        settings=settings,
    )
