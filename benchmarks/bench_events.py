"""Adverse events by World SIVA tier on the invented demo cohort and scenarios, against truth.

Usage::

    python benchmarks/bench_events.py [--cohort 300] [--seed 0] [--scenario-seeds 0 1 2]

Writes a demo cohort and the named scenarios to a temporary folder, analyses every session,
and matches each detected adverse event to a true one (the truth file's ``events``, graded
from the PLANTED episodes, the scenario's interventions and outcome by
:mod:`sedreport.demo.truth_events`): the same session, time spans that overlap (within
``TOL_S``), one to one; an outcome-only event matches an outcome-only event. It prints event
counts by tier (truth and detected), the tier confusion of matched events, misses and false
events, and the share of true events whose tier was found exactly. Figures are printed, never
asserted. The data is invented.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from collections import Counter
from pathlib import Path

from sedreport.analysis import analyse_session
from sedreport.demo import SCENARIOS, load_truth, write_cohort, write_scenario
from sedreport.ingest import load_session

TIERS = ("minimal", "minor", "moderate", "sentinel")
#: Span slack when matching a detected event to a true one, seconds.
TOL_S = 10.0


def _overlap(a: dict, b) -> bool:
    if a["start_s"] is None or not b.episodes:
        return a["start_s"] is None and not b.episodes
    return b.start_s <= a["end_s"] + TOL_S and a["start_s"] <= b.end_s + TOL_S


def match(truth_events: list[dict], found: tuple) -> tuple[list, list, list]:
    """Pairs (truth, detected), unmatched truth, unmatched detected (greedy by onset)."""
    left = list(found)
    pairs, missed = [], []
    for t in truth_events:
        hit = next((d for d in left if _overlap(t, d)), None)
        if hit is None:
            missed.append(t)
        else:
            pairs.append((t, hit))
            left.remove(hit)
    return pairs, missed, left


def score(folders: list[Path]) -> dict:
    out = {"truth": Counter(), "found": Counter(), "pairs": Counter(), "missed": [], "false": []}
    for folder in folders:
        truth = load_truth(folder.parent / f"{folder.name}.truth.json")
        analysis = analyse_session(load_session(folder))
        out["truth"].update(e["severity"] for e in truth["events"])
        out["found"].update(e.severity for e in analysis.events)
        pairs, missed, false = match(truth["events"], analysis.events)
        out["pairs"].update((t["severity"], d.severity) for t, d in pairs)
        out["missed"] += [(folder.name, t["severity"], t["start_s"]) for t in missed]
        out["false"] += [(folder.name, d.severity, d.id, d.episodes) for d in false]
    return out


def report(title: str, r: dict) -> None:
    n_truth = sum(r["truth"].values())
    exact = sum(v for (a, b), v in r["pairs"].items() if a == b)
    print(f"\n{title}")
    print(f"{'tier':<10} {'truth':>6} {'found':>6}")
    for t in TIERS:
        print(f"{t:<10} {r['truth'][t]:>6} {r['found'][t]:>6}")
    print("matched events, truth tier -> detected tier:")
    for (a, b), v in sorted(r["pairs"].items()):
        print(f"  {a:<9} -> {b:<9} {v:>5}{'' if a == b else '   <- differs'}")
    print(f"missed true events: {len(r['missed'])} {r['missed'][:8]}")
    print(f"false events: {len(r['false'])} {r['false'][:8]}")
    pct = 100.0 * exact / n_truth if n_truth else float("nan")
    print(f"tier equal to truth: {exact} of {n_truth} true events = {pct:.1f} %")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cohort", type=int, default=300)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--scenario-seeds", type=int, nargs="+", default=[0, 1, 2])
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        scen = [
            write_scenario(Path(tmp) / f"s{seed}", name, seed)
            for seed in args.scenario_seeds
            for name in SCENARIOS
        ]
        report(f"named scenarios x seeds {args.scenario_seeds} ({len(scen)} sessions)", score(scen))
        cohort = [Path(p) for p in write_cohort(Path(tmp) / "cohort", args.cohort, args.seed)]
        report(f"demo cohort of {len(cohort)} sessions, seed {args.seed}", score(cohort))
        print(f"\nwall time {time.perf_counter() - t0:.0f} s (invented data)")


if __name__ == "__main__":
    main()
