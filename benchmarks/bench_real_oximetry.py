"""SpO2 cleaning and desaturation detection on recorded 1 Hz oximetry (not synthetic).

Usage::

    python benchmarks/bench_real_oximetry.py [--data /work/shared/real-oximetry] [--criteria FILE]

Runs over every session folder of the shared real-oximetry set (128 recorded sedation cases;
its README says what they are; they are never copied into the repository). Per session it
prints the samples, the share without a reading (blank, the monitor's 0, impossible values),
the SpO2 signal-loss total, every desaturation with its depth (lowest usable SpO2) and length,
and what the artefact rules marked, by rule; then a line of totals. Reference labels for these
recordings are held out, so nothing here is scored: the figures are for reading and plotting.
When the folder is absent it says so and exits 0.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from sedreport.analysis import analyse_session
from sedreport.criteria import load_criteria
from sedreport.ingest import load_session
from sedreport.oximetry import ARTEFACT_RULES

DEFAULT_DATA = Path("/work/shared/real-oximetry")


def session_row(folder: Path, crit) -> dict:
    """Figures of one session (see the module docstring)."""
    a = analyse_session(load_session(folder), crit)
    q = a.quality
    desats = [e for e in a.episodes if e.kind == "desaturation"]
    loss = [e for e in a.episodes if e.kind == "signal_loss" and e.subtype == "spo2"]
    return {
        "session": a.session.session_id,
        "samples": q.spo2_samples,
        "no_reading": q.spo2_no_reading_samples,
        "loss_s": sum(e.duration_s for e in loss),
        "loss_n": len(loss),
        "desats": [(e.start_s, e.min_spo2_pct, e.duration_s) for e in desats],
        "by_rule": dict(q.spo2_artefact_by_rule),
        "min_spo2": a.summary.min_spo2_pct,
    }


def _desat_text(desats: list) -> str:
    if not desats:
        return "-"
    return "; ".join(f"{s:.0f}s {'-' if m is None else f'{m:.0f}%'} {d:.0f}s" for s, m, d in desats)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--data", type=Path, default=DEFAULT_DATA)
    ap.add_argument("--criteria", default=None)
    args = ap.parse_args(argv)
    sessions = sorted((args.data / "sessions").glob("*/session.yaml"))
    if not sessions:
        print(f"no real oximetry sessions under {args.data}/sessions: nothing to run (ok)")
        return 0
    crit = load_criteria(args.criteria)
    rules = " ".join(f"{r:>5.5}" for r in ARTEFACT_RULES)
    print(f"criteria {crit.name}; desaturation = SpO2 < {crit.desaturation.spo2_below_pct:g} % "
          f"for >= {crit.desaturation.min_duration_s:g} s; depth = lowest usable SpO2")  # fmt: skip
    print(f"{'session':<11} {'samples':>7} {'no rdg%':>7} {'loss s':>7} {'min':>4} {rules}  "
          "desaturations (start, depth, length)")  # fmt: skip
    tot = {"samples": 0, "no_reading": 0, "loss_s": 0.0, "loss_n": 0, "desats": 0}
    tot_rule = dict.fromkeys(ARTEFACT_RULES, 0)
    t0 = time.perf_counter()
    for yaml_file in sessions:
        r = session_row(yaml_file.parent, crit)
        for k in ("samples", "no_reading", "loss_s", "loss_n"):
            tot[k] += r[k]
        tot["desats"] += len(r["desats"])
        for k, n in r["by_rule"].items():
            tot_rule[k] += n
        pct = 100.0 * r["no_reading"] / max(r["samples"], 1)
        low = "-" if r["min_spo2"] is None else f"{r['min_spo2']:.0f}"
        counts = " ".join(f"{r['by_rule'][k]:>5d}" for k in ARTEFACT_RULES)
        print(f"{r['session']:<11} {r['samples']:>7d} {pct:>7.1f} {r['loss_s']:>7.0f} {low:>4} "
              f"{counts}  {_desat_text(r['desats'])}")  # fmt: skip
    secs = time.perf_counter() - t0
    counts = " ".join(f"{tot_rule[k]:>5d}" for k in ARTEFACT_RULES)
    print(f"{'TOTAL':<11} {tot['samples']:>7d} "
          f"{100.0 * tot['no_reading'] / max(tot['samples'], 1):>7.1f} {tot['loss_s']:>7.0f} "
          f"{'':>4} {counts}  {tot['desats']} desaturations; {tot['loss_n']} SpO2 signal-loss "
          f"intervals ({tot['loss_s'] / 3600:.1f} h); {len(sessions)} sessions in {secs:.1f} s")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
