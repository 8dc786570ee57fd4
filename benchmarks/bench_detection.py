"""Episode detection on the invented demo scenarios: hits, misses, false positives, onset errors.

Usage::

    python benchmarks/bench_detection.py [--seeds 0 1 2 3 4] [--criteria FILE] [--noise 0 2 3]

For every scenario and seed it writes the demo session to a temporary folder, ingests and
analyses it, and matches the detected episodes to the planted truth (same kind, onset within
3 s). Planted SpO2 dips shorter than the criterion's minimum duration are not expected unless
they are part of a true adverse event (below 75 %: World SIVA).
It prints breath recall, precision and F1 (detected breath starts matched one-to-one to the
planted ones within 0.5 s; breaths cut by a gap not scored) and, per episode kind, the
sensitivity (hits / planted) and positive predictive value (hits / detected). The scenarios
carry the phenomena of recorded nasal capnograms: deep mouth breathing, cardiogenic
oscillations in a pause, oxygen-flow dilution, a disconnected line, an EtCO2 fall, stepped and
two-hump expirations.
``--noise`` repeats the scoring with white noise of each SD (mmHg) added to the capnogram. It
also times the whole analysis of a 2-hour, 100 Hz in-memory session and reports peak memory.
Figures are printed, never asserted. The data is invented.
"""

from __future__ import annotations

import argparse
import dataclasses
import statistics
import sys
import tempfile
import time
import tracemalloc
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from sedreport.analysis import analyse_session
from sedreport.criteria import load_criteria
from sedreport.demo import SCENARIOS, load_truth, write_scenario
from sedreport.episodes.scoring import match_episodes
from sedreport.ingest import load_session
from sedreport.session import Capnogram, OximetryTrend, Session

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from test_capnography_traces import match_breaths  # noqa: E402

ONSET_TOL_S = 3.0
BREATH_TOL_S = 0.5


def breath_counts(breaths, truth: dict) -> tuple[int, int, int]:
    """True positives, detected and planted breath counts (gap-cut detections not scored)."""
    scored = np.array(["gap" not in r for r in breaths.reason], dtype=bool)
    det = breaths.start_s[scored]
    true = np.asarray(truth["breaths"]["start_s"], dtype=float)
    _, _, pairs = match_breaths(det, true, BREATH_TOL_S)
    return int(np.unique(pairs[:, 1]).size), int(det.size), int(true.size)


def print_kind_table(per_kind: dict[str, list[int]], breaths: list[int]) -> None:
    """Breath F1 and per-kind sensitivity / PPV of the whole run."""
    tp, det, true = breaths
    rec, prec = tp / max(true, 1), tp / max(det, 1)
    f1 = 2 * rec * prec / max(rec + prec, 1e-12)
    print(f"breaths: planted {true}  detected {det}  matched {tp}  recall {rec:.4f}  "
          f"precision {prec:.4f}  F1 {f1:.4f}")  # fmt: skip
    print(f"{'kind':<20} {'planted':>7} {'hits':>5} {'fp':>4} {'sensitivity':>11} {'PPV':>6}")
    for kind, (planted, hits, fps) in sorted(per_kind.items()):
        sens = f"{hits / planted:.3f}" if planted else "-"
        ppv = f"{hits / (hits + fps):.3f}" if hits + fps else "-"
        print(f"{kind:<20} {planted:>7} {hits:>5} {fps:>4} {sens:>11} {ppv:>6}")


def with_noise(session: Session, sd_mmHg: float, seed: int) -> Session:
    """The session with white noise of ``sd_mmHg`` added to its capnogram."""
    if sd_mmHg <= 0 or session.co2 is None:
        return session
    c = session.co2
    noisy = c.co2_mmHg + np.random.default_rng(seed).normal(0.0, sd_mmHg, c.co2_mmHg.size)
    return dataclasses.replace(session, co2=Capnogram(c.time_s, noisy, c.sample_rate_hz))


def score_scenarios(seeds: list[int], criteria_path: str | None, noise_sd: float = 0.0) -> None:
    crit = load_criteria(criteria_path)
    print(
        f"criteria {crit.name}  onset tolerance {ONSET_TOL_S:g} s  seeds {seeds}  "
        f"added CO2 noise SD {noise_sd:g} mmHg"
    )
    print(f"{'scenario':<34} {'planted':>7} {'hits':>5} {'miss':>5} {'fp':>4} "
          f"{'onset med s':>11} {'onset max s':>11} {'analyse s':>9}")  # fmt: skip
    totals = [0, 0, 0, 0]
    all_err: list[float] = []
    per_kind: dict[str, list[int]] = {}
    breath_tot = [0, 0, 0]
    with tempfile.TemporaryDirectory() as tmp:
        for name in SCENARIOS:
            planted = hits = misses = fps = 0
            errs: list[float] = []
            secs: list[float] = []
            notes: list[str] = []
            for seed in seeds:
                folder = write_scenario(Path(tmp) / str(seed), name, seed)
                truth = load_truth(folder.parent / f"{folder.name}.truth.json")
                in_event = {i for ev in truth["events"] for i in ev["episodes"]}
                want = [
                    e
                    for i, e in enumerate(truth["episodes"])
                    if i in in_event
                    or not (
                        e["kind"] == "desaturation"
                        and e["end_s"] - e["start_s"] < crit.desaturation.min_duration_s
                    )
                ]
                t0 = time.perf_counter()
                session = with_noise(load_session(folder), noise_sd, seed + 1)
                analysis = analyse_session(session, crit)
                secs.append(time.perf_counter() - t0)
                score = match_episodes(analysis.episodes, want, ONSET_TOL_S)
                for k, v in enumerate(breath_counts(analysis.breaths, truth)):
                    breath_tot[k] += v
                for e in want:
                    per_kind.setdefault(e["kind"], [0, 0, 0])[0] += 1
                for h in score.hits:
                    per_kind[h[0]["kind"]][1] += 1
                for e in score.false_positives:
                    per_kind.setdefault(e.kind, [0, 0, 0])[2] += 1
                planted += len(want)
                hits += len(score.hits)
                misses += len(score.misses)
                fps += len(score.false_positives)
                errs += score.onset_errors_s
                notes += [
                    f"seed {seed} miss {m['kind']} at {m['start_s']:.1f} s" for m in score.misses
                ]
                notes += [
                    f"seed {seed} false positive {e.kind} at {e.start_s:.1f} s"
                    for e in score.false_positives
                ]
            abs_err = [abs(e) for e in errs]
            med = f"{statistics.median(abs_err):.2f}" if abs_err else "-"
            mx = f"{max(abs_err):.2f}" if abs_err else "-"
            print(f"{name:<34} {planted:>7} {hits:>5} {misses:>5} {fps:>4} {med:>11} {mx:>11} "
                  f"{statistics.median(secs):>9.2f}")  # fmt: skip
            for n in notes:
                print(f"    {n}")
            totals = [totals[0] + planted, totals[1] + hits, totals[2] + misses, totals[3] + fps]
            all_err += abs_err
    print(f"{'total':<34} {totals[0]:>7} {totals[1]:>5} {totals[2]:>5} {totals[3]:>4} "
          f"{statistics.median(all_err) if all_err else float('nan'):>11.2f} "
          f"{max(all_err) if all_err else float('nan'):>11.2f}")  # fmt: skip
    print_kind_table(per_kind, breath_tot)


def long_session(hours: float = 2.0, rate_hz: float = 100.0) -> Session:
    """An in-memory session: 15/min square-ish capnogram at 38 mmHg, 1 Hz SpO2 at 97 %."""
    rng = np.random.default_rng(7)
    t = np.arange(0.0, hours * 3600.0, 1.0 / rate_hz)
    phase = (t % 4.0) / 4.0
    co2 = np.where((phase > 0.05) & (phase < 0.6), 38.0, 0.0) + rng.normal(0, 0.3, t.size)
    ts = np.arange(0.0, hours * 3600.0, 1.0)
    spo2 = OximetryTrend(ts, np.full(ts.size, 97.0), np.full(ts.size, 72.0), 1.0)
    return Session(
        session_id="BENCH-2H",
        started=datetime(2026, 1, 1, tzinfo=UTC),
        folder=Path("."),
        co2=Capnogram(t, co2, rate_hz),
        spo2=spo2,
    )


def time_long_session() -> None:
    session = long_session()
    analyse_session(session)  # warm-up (imports, caches)
    t0 = time.perf_counter()
    analysis = analyse_session(session)
    dt = time.perf_counter() - t0
    tracemalloc.start()
    analyse_session(session)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    n = session.co2.time_s.size
    print(f"2-hour 100 Hz session ({n} CO2 samples): analyse_session {dt:.3f} s, "
          f"{len(analysis.breaths)} breaths, {len(analysis.episodes)} episodes, "
          f"peak traced memory {peak / 1e6:.0f} MB")  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, nargs="+", default=[0, 1, 2, 3, 4])
    parser.add_argument("--criteria", default=None)
    parser.add_argument("--noise", type=float, nargs="+", default=[0.0])
    args = parser.parse_args()
    for sd in args.noise:
        score_scenarios(args.seeds, args.criteria, sd)
    time_long_session()


if __name__ == "__main__":
    main()
