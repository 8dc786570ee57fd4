"""Time the demo generator: all scenarios, and a cohort (target: 1,000 sessions < 2 min, 2 cores).

Usage::

    python benchmarks/bench_demo.py [--n 1000] [--jobs 2] [--seed 0] [--keep DIR]

Prints wall-clock seconds, sessions per second and the size written. Writes into a temporary
folder (removed afterwards) unless ``--keep`` is given.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from sedreport.demo import write_cohort, write_examples


def _size_mb(root: Path) -> float:
    return sum(p.stat().st_size for p in root.rglob("*") if p.is_file()) / 1e6


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1000)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--keep", type=Path, default=None)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        root = args.keep or Path(tmp)
        t0 = time.perf_counter()
        write_examples(root / "scenarios", seed=args.seed)
        t1 = time.perf_counter()
        print(f"scenarios: {t1 - t0:.2f} s, {_size_mb(root / 'scenarios'):.2f} MB")
        folders = write_cohort(root / "cohort", args.n, seed=args.seed, jobs=args.jobs)
        t2 = time.perf_counter()
        print(
            f"cohort: {len(folders)} sessions with {args.jobs} job(s) in {t2 - t1:.1f} s "
            f"({len(folders) / (t2 - t1):.1f} sessions/s), {_size_mb(root / 'cohort'):.0f} MB"
        )
        print(
            f"target 1000 sessions < 120 s: {'met' if (t2 - t1) * 1000 / args.n < 120 else 'NOT met'}"
        )


if __name__ == "__main__":
    main()
