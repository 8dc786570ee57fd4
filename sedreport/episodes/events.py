"""Adverse events a committee can count: linked episodes graded once after World SIVA.

The World SIVA adverse sedation event tool (Mason et al., Br J Anaesth 2012, as reproduced in
Trials 2022 Table 4) grades one adverse event once, by the highest of its descriptors, the
interventions it needed and its outcome. Here an adverse event is a cluster of episodes that
overlap or follow one another within ``events.link_window_s`` (choice of this tool), e.g.
apnoea -> desaturation -> bag-mask ventilation.

Which episodes take part (the tiers and their sources are in :mod:`.severity`):

- apnoea, desaturation, hypotension, bradycardia and hypoventilation carry a descriptor of the
  tool (hypoventilation as "subclinical respiratory depression", minimal);
- every other kind (signal loss aside) is a finding: part of an adverse event only when a
  graded intervention is linked to it (choice of this tool); kinds this module does not know
  are findings too;
- signal loss is a data-quality episode and never part of an adverse event.

The session's outcome words (``session.yaml`` ``outcome:``) belong to the case, not to one
episode; they are given to the highest-graded event (the earliest of equals), or, when no
episode makes an event, to an event of their own spanning the sedation window (choice of this
tool).
"""

from __future__ import annotations

from dataclasses import replace

from sedreport.criteria import Criteria
from sedreport.episodes.model import (
    AdverseEvent,
    Descriptor,
    Episode,
    LinkedIntervention,
    Outcome,
)
from sedreport.episodes.severity import (
    SOURCE,
    descriptor_tier,
    highest_tier,
    outcome_tier,
    tier_rank,
)
from sedreport.episodes.summary import sedation_window_s
from sedreport.session import Session

#: Kinds that are never part of an adverse event (data quality, not the patient).
DATA_KINDS: tuple[str, ...] = ("signal_loss",)


def episode_descriptor(episode: Episode, criteria: Criteria) -> Descriptor:
    """The World SIVA descriptor of one episode (tier None for a finding)."""
    tier, text = descriptor_tier(episode.kind, episode.duration_s, episode.min_spo2_pct, criteria)
    return Descriptor(text=text, tier=tier, episode=episode.id)


def takes_part(episode: Episode, criteria: Criteria) -> bool:
    """True when an episode is part of an adverse event: it has a descriptor of the tool, or
    a graded intervention is linked to it; never for a data-quality kind."""
    if episode.kind in DATA_KINDS:
        return False
    if episode_descriptor(episode, criteria).tier is not None:
        return True
    return any(i.tier is not None for i in episode.interventions)


def cluster_episodes(
    episodes: tuple[Episode, ...], link_window_s: float
) -> list[tuple[Episode, ...]]:
    """Group episodes that overlap or start within ``link_window_s`` of the group's end.

    Examples
    --------
    >>> from types import SimpleNamespace as E
    >>> eps = (E(id="E1", start_s=0, end_s=70), E(id="E2", start_s=82, end_s=120),
    ...        E(id="E3", start_s=400, end_s=420))
    >>> [[e.id for e in c] for c in cluster_episodes(eps, 60.0)]
    [['E1', 'E2'], ['E3']]
    """
    groups: list[list[Episode]] = []
    end = float("-inf")
    for e in sorted(episodes, key=lambda x: (x.start_s, x.end_s)):
        if groups and e.start_s <= end + link_window_s:
            groups[-1].append(e)
            end = max(end, e.end_s)
        else:
            groups.append([e])
            end = e.end_s
    return [tuple(g) for g in groups]


def _distance_s(t_s: float, start_s: float, end_s: float) -> float:
    return max(start_s - t_s, 0.0, t_s - end_s)


def _interventions(
    clusters: list[tuple[Episode, ...]],
) -> list[tuple[LinkedIntervention, ...]]:
    """Each linked intervention once, given to the nearest event (the earliest of equals);
    ``seconds_after_onset`` from that event's onset."""
    spans = [(min(e.start_s for e in c), max(e.end_s for e in c)) for c in clusters]
    owner: dict[tuple[str, float], int] = {}
    found: dict[tuple[str, float], LinkedIntervention] = {}
    for k, c in enumerate(clusters):
        for e in c:
            for i in e.interventions:
                key = (i.event, i.time_s)
                found[key] = i
                near = _distance_s(i.time_s, *spans[k])
                if key not in owner or near < _distance_s(i.time_s, *spans[owner[key]]):
                    owner[key] = k
    out: list[list[LinkedIntervention]] = [[] for _ in clusters]
    for key in sorted(found, key=lambda x: (x[1], x[0])):
        k = owner[key]
        out[k].append(replace(found[key], seconds_after_onset=key[1] - spans[k][0]))
    return [tuple(x) for x in out]


def _lead_s(cluster: tuple[Episode, ...]) -> float | None:
    """Capnographic lead time of the event: that of its first episode that has one."""
    leads = [e for e in cluster if e.capnographic_lead_s is not None]
    return min(leads, key=lambda e: e.start_s).capnographic_lead_s if leads else None


def grade_event(
    descriptors: tuple[Descriptor, ...],
    interventions: tuple[LinkedIntervention, ...],
    outcome: tuple[Outcome, ...],
) -> tuple[str, str]:
    """The event's tier, the highest of descriptor, intervention and outcome tiers (at least
    ``minimal``: no intervention and no adverse outcome are minimal in the tool), and why.

    Examples
    --------
    >>> d = (Descriptor("apnoea, not prolonged", "minor", "E1"),)
    >>> grade_event(d, (), (Outcome("aspiration", "sentinel"),))[0]
    'sentinel'
    >>> grade_event(d, (), ())[0]
    'minor'
    """
    parts = []
    top_d = max(descriptors, key=lambda d: tier_rank(d.tier), default=None)
    if top_d is not None and top_d.tier is not None:
        parts.append(f"descriptor {top_d.text} ({top_d.tier})")
    top_i = max(interventions, key=lambda i: tier_rank(i.tier), default=None)
    if top_i is not None and top_i.tier is not None:
        parts.append(f"intervention {top_i.event.replace('_', ' ')} ({top_i.tier})")
    else:
        parts.append("no graded intervention (minimal)")
    top_o = max(outcome, key=lambda o: tier_rank(o.tier), default=None)
    if top_o is not None:
        parts.append(f"outcome {top_o.text.replace('_', ' ')} ({top_o.tier})")
    else:
        parts.append("no adverse outcome (minimal)")
    tiers = [d.tier for d in descriptors] + [i.tier for i in interventions]
    tier = highest_tier(["minimal", *tiers, *(o.tier for o in outcome)])
    return tier, f"Graded {tier} after {SOURCE} (the highest of): " + "; ".join(parts) + "."


def _outcome_home(graded: list[str]) -> int | None:
    if not graded:
        return None
    return max(range(len(graded)), key=lambda k: (tier_rank(graded[k]), -k))


def grade_events(
    session: Session, episodes: tuple[Episode, ...], criteria: Criteria
) -> tuple[tuple[Episode, ...], tuple[AdverseEvent, ...]]:
    """Join linked episodes into adverse events, grade each once, and mark the episodes.

    Parameters
    ----------
    session : Session
        Supplies the outcome words and the wall clock.
    episodes : tuple of Episode
        Linked episodes (:func:`sedreport.episodes.linking.link_episode`), ids ``E1``...
    criteria : Criteria
        ``events.link_window_s`` and the descriptor limits.

    Returns
    -------
    episodes : tuple of Episode
        The same episodes with ``event`` and ``severity`` set (None for findings).
    events : tuple of AdverseEvent
        Ids ``A1``... by onset.
    """
    members = tuple(e for e in episodes if takes_part(e, criteria))
    clusters = cluster_episodes(members, criteria.events.link_window_s)
    interventions = _interventions(clusters)
    descriptors = [tuple(episode_descriptor(e, criteria) for e in c) for c in clusters]
    # A cluster of findings whose intervention went to a nearer event has nothing left to grade.
    keep = [
        k
        for k in range(len(clusters))
        if any(d.tier for d in descriptors[k]) or any(i.tier for i in interventions[k])
    ]
    clusters = [clusters[k] for k in keep]
    interventions = [interventions[k] for k in keep]
    descriptors = [descriptors[k] for k in keep]
    outcome = tuple(Outcome(w, outcome_tier(w)) for w in session.outcome)
    graded = [grade_event(d, i, ())[0] for d, i in zip(descriptors, interventions, strict=True)]
    home = _outcome_home(graded)
    events: list[AdverseEvent] = []
    for k, c in enumerate(clusters):
        out = outcome if k == home else ()
        tier, why = grade_event(descriptors[k], interventions[k], out)
        start = min(e.start_s for e in c)
        events.append(
            AdverseEvent(
                id=f"A{k + 1}",
                episodes=tuple(e.id for e in c),
                start_s=start,
                end_s=max(e.end_s for e in c),
                start_time=_iso(session, start),
                severity=tier,
                descriptors=descriptors[k],
                interventions=interventions[k],
                outcome=out,
                capnographic_lead_s=_lead_s(c),
                notes=(why,),
            )
        )
    if outcome and home is None:
        events.append(_outcome_only(session, outcome, len(events) + 1))
    return _mark(episodes, events), tuple(events)


def _iso(session: Session, t_s: float) -> str:
    return session.clock_time(t_s).isoformat(timespec="milliseconds")


def _outcome_only(session: Session, outcome: tuple[Outcome, ...], n: int) -> AdverseEvent:
    """An adverse event made by the session's outcome alone, over the sedation window."""
    lo, hi, _ = sedation_window_s(session)
    tier, why = grade_event((), (), outcome)
    note = "An adverse outcome was recorded for the session, with no detected episode."
    return AdverseEvent(
        id=f"A{n}",
        episodes=(),
        start_s=lo,
        end_s=hi,
        start_time=_iso(session, lo),
        severity=tier,
        descriptors=(),
        interventions=(),
        outcome=outcome,
        capnographic_lead_s=None,
        notes=(note, why),
    )


def _mark(episodes: tuple[Episode, ...], events: list[AdverseEvent]) -> tuple[Episode, ...]:
    """Episodes with ``event`` and ``severity`` of the event they belong to (else None)."""
    of = {eid: ev for ev in events for eid in ev.episodes}
    return tuple(
        replace(
            e,
            event=of[e.id].id if e.id in of else None,
            severity=of[e.id].severity if e.id in of else None,
        )
        for e in episodes
    )
