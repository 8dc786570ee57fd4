"""Benchmark of the capnography stage: speed, peak memory and detection scores.

Prints
1. the time and tracemalloc peak memory of ``find_breaths`` + ``compute_trends`` on a
   synthetic 2-hour, 100 Hz trace (720,000 samples; target well under 1 s);
2. breath recall / precision and the median EtCO2 error on every demo scenario with ground
   truth (when ``sedreport.demo`` and ``sedreport.ingest`` are importable);
3. a white-noise sweep at 20 and 100 Hz showing where the figures start to degrade.

Run: ``python benchmarks/bench_capnography.py [--quick]``.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from datetime import UTC

from test_capnography_traces import TraceSpec, make_trace, score  # noqa: E402

from sedreport.capnography import compute_trends, find_breaths  # noqa: E402
from sedreport.session import Session  # noqa: E402


def bench_speed(repeats: int = 5) -> None:
    spec = TraceSpec(fs_hz=100.0, duration_s=7200.0, noise_sd_mmHg=1.0, pauses=[(3000.0, 40.0)])
    cap, truth = make_trace(spec)
    from datetime import datetime

    session = Session(
        session_id="BENCH", started=datetime(2026, 1, 1, tzinfo=UTC), folder=Path(".")
    )
    session = Session(**{**session.__dict__, "co2": cap})
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        breaths = find_breaths(cap)
        compute_trends(session, breaths)
        times.append(time.perf_counter() - t0)
    tracemalloc.start()
    breaths = find_breaths(cap)
    compute_trends(session, breaths)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    s = score(breaths, truth)
    print(f"2-hour 100 Hz trace: {cap.time_s.size} samples, {len(breaths)} breaths")
    print(
        f"  find_breaths + compute_trends: best {min(times):.3f} s, median {np.median(times):.3f} s"
    )
    print(
        f"  peak traced memory: {peak / 1e6:.1f} MB (input arrays {2 * cap.time_s.nbytes / 1e6:.1f} MB)"
    )
    print(
        f"  recall {s['recall']:.4f} precision {s['precision']:.4f} EtCO2 err {s['etco2_err_median_mmHg']:.2f} mmHg"
    )


def score_demo(seed: int = 0) -> None:
    try:
        from sedreport.demo import SCENARIOS, write_scenario
        from sedreport.ingest import load_session
    except ImportError as exc:
        print(f"demo scenarios: skipped ({exc})")
        return
    print(f"demo scenarios (seed {seed}):")
    print(
        f"  {'scenario':36s} {'Hz':>5s} {'true':>5s} {'found':>5s} {'recall':>7s} {'prec':>7s} {'EtCO2 err':>9s}"
    )
    with tempfile.TemporaryDirectory() as tmp:
        for name in SCENARIOS:
            folder = write_scenario(tmp, name, seed=seed)
            truth = json.loads(Path(str(folder) + ".truth.json").read_text())
            tb = {k: np.asarray(v, dtype=float) for k, v in truth["breaths"].items()}
            session = load_session(folder)
            b = find_breaths(session.co2)
            s = score(b, tb)
            print(
                f"  {name:36s} {session.co2.sample_rate_hz:5.0f} {tb['start_s'].size:5d} {len(b):5d}"
                f" {s['recall']:7.4f} {s['precision']:7.4f} {s['etco2_err_median_mmHg']:9.2f}"
            )


def noise_sweep(levels=(0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0)) -> None:
    print("white-noise sweep (5 min, 12/min, EtCO2 38 mmHg; and 15 mmHg diluted plateau):")
    print(
        f"  {'Hz':>4s} {'plateau':>7s} {'SD mmHg':>8s} {'recall':>7s} {'prec':>7s} {'EtCO2 err':>9s}"
    )
    for fs in (20.0, 100.0):
        for plateau in (38.0, 15.0):
            for sd in levels:
                rec, prec, err = [], [], []
                for seed in range(3):
                    spec = TraceSpec(fs_hz=fs, etco2_mmHg=plateau, noise_sd_mmHg=sd, seed=seed)
                    cap, truth = make_trace(spec)
                    s = score(find_breaths(cap), truth)
                    rec.append(s["recall"])
                    prec.append(s["precision"])
                    err.append(s["etco2_err_median_mmHg"])
                print(
                    f"  {fs:4.0f} {plateau:7.0f} {sd:8.1f} {min(rec):7.3f} {min(prec):7.3f}"
                    f" {max(err):9.2f}"
                )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="skip the noise sweep")
    args = parser.parse_args()
    bench_speed()
    score_demo()
    if not args.quick:
        noise_sweep()


if __name__ == "__main__":
    main()
