"""Ground-truth adverse events of a simulated case, graded after the World SIVA tool.

Built from the PLANTED episodes of the truth file (not from detection), the scenario's events
and its outcome words, with the reading of Mason et al., Br J Anaesth 2012 (as reproduced in
Trials 2022 Table 4) and the linking rules of the default criteria file: apnoea not prolonged
minor, prolonged (> 60 s) sentinel; desaturation < 75 % at any time sentinel, < 90 % for > 60 s
sentinel, else minor, and a dip shorter than the listing minimum that stays at or above 75 % is
no episode (the tool's stated choice); hypoventilation minimal; hypotension and bradycardia
minor; sloped plateau and rebreathing
are findings unless a graded intervention is linked; a data gap is never an event. The
clustering is written here again, independently of :mod:`sedreport.episodes.events`, so the
benchmark compares two implementations of the same stated rules.
"""

from __future__ import annotations

import numpy as np

from sedreport.criteria import Criteria, default_criteria
from sedreport.demo.case import CaseSpec
from sedreport.demo.simulate import Signals
from sedreport.episodes.severity import INTERVENTION_TIERS, OUTCOME_TIERS

TIERS = ("minimal", "minor", "moderate", "sentinel")


def _rank(tier: str | None) -> int:
    return -1 if tier is None else TIERS.index(tier)


def _desaturation_tier(ep: dict, sig: Signals, c: Criteria) -> str | None:
    ok = ~sig.spo2_artefact
    t, v = sig.spo2_time_s[ok], sig.spo2_pct[ok]
    inside = v[(t >= ep["start_s"]) & (t < ep["end_s"])]
    low = float(inside.min()) if inside.size else 100.0
    dur = ep["end_s"] - ep["start_s"]
    d = c.desaturation
    if low < d.severe_below_pct or dur > d.prolonged_s:
        return "sentinel"
    return "minor" if dur >= d.min_duration_s else "skip"


def descriptor(ep: dict, sig: Signals, c: Criteria) -> str | None:
    """Truth descriptor tier of a planted episode; ``skip`` for no adverse-event part."""
    kind = ep["kind"]
    if kind == "apnoea":
        return "sentinel" if ep["end_s"] - ep["start_s"] > c.apnoea.prolonged_s else "minor"
    if kind == "desaturation":
        return _desaturation_tier(ep, sig, c)
    if kind == "hypoventilation":
        return "minimal"
    if kind in ("hypotension", "bradycardia"):
        return "minor"
    if kind == "signal_loss":
        return "skip"
    return None


def _acts(spec: CaseSpec, a: float, b: float, c: Criteria) -> list[tuple[float, str]]:
    lo, hi = a - c.linking.intervention_before_s, b + c.linking.intervention_after_s
    return [
        (float(e[0]), e[1]) for e in spec.events if e[1] in INTERVENTION_TIERS and lo <= e[0] <= hi
    ]


def truth_events(
    spec: CaseSpec, sig: Signals, episodes: list[dict], criteria: Criteria | None = None
) -> list[dict]:
    """Events ``{"episodes": [index into episodes], "start_s", "end_s", "severity",
    "interventions": [names], "outcome": [words]}`` in onset order."""
    c = criteria or default_criteria()
    parts = []
    for i, ep in enumerate(episodes):
        tier = descriptor(ep, sig, c)
        acts = _acts(spec, ep["start_s"], ep["end_s"], c)
        graded = [INTERVENTION_TIERS[n][0] for _, n in acts if INTERVENTION_TIERS[n][0]]
        if tier == "skip" or (tier is None and not graded):
            continue
        parts.append((ep["start_s"], ep["end_s"], i, tier, acts))
    parts.sort()
    groups: list[list] = []
    for p in parts:
        if groups and p[0] <= max(q[1] for q in groups[-1]) + c.events.link_window_s:
            groups[-1].append(p)
        else:
            groups.append([p])
    owned = _nearest_group(groups)
    events = []
    for g, acts in zip(groups, owned, strict=True):
        tiers = [p[3] for p in g] + [INTERVENTION_TIERS[n][0] for _, n in acts]
        if not any(tiers):
            continue  # findings whose intervention belongs to a nearer event
        events.append(
            {
                "episodes": [p[2] for p in g],
                "start_s": float(min(p[0] for p in g)),
                "end_s": float(max(p[1] for p in g)),
                "severity": max(["minimal", *(t for t in tiers if t)], key=_rank),
                "interventions": [n for _, n in acts],
                "outcome": [],
            }
        )
    return _with_outcome(events, spec)


def _nearest_group(groups: list[list]) -> list[list[tuple[float, str]]]:
    """Each intervention once, in the group nearest to it (the earliest of equals)."""
    spans = [(min(p[0] for p in g), max(p[1] for p in g)) for g in groups]
    owner: dict[tuple[float, str], int] = {}
    for k, g in enumerate(groups):
        for act in {a for p in g for a in p[4]}:
            lo, hi = spans[k]
            near = max(lo - act[0], act[0] - hi, 0.0)
            if act not in owner:
                owner[act] = k
                continue
            lo2, hi2 = spans[owner[act]]
            if near < max(lo2 - act[0], act[0] - hi2, 0.0):
                owner[act] = k
    out: list[list[tuple[float, str]]] = [[] for _ in groups]
    for act in sorted(owner):
        out[owner[act]].append(act)
    return out


def _with_outcome(events: list[dict], spec: CaseSpec) -> list[dict]:
    """The outcome words go to the highest-graded event (earliest of equals), raising its
    tier; with no event, they make one of their own."""
    if not spec.outcome:
        return events
    tier = max((OUTCOME_TIERS[w][0] for w in spec.outcome), key=_rank)
    if not events:
        return [
            {"episodes": [], "start_s": None, "end_s": None, "severity": tier,
             "interventions": [], "outcome": list(spec.outcome)}
        ]  # fmt: skip
    k = int(np.argmax([_rank(e["severity"]) * 1000 - i for i, e in enumerate(events)]))
    events[k]["outcome"] = list(spec.outcome)
    events[k]["severity"] = max(events[k]["severity"], tier, key=_rank)
    return events
