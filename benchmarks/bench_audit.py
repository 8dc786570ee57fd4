"""Committee audit at scale: cold and warm time and peak memory over N invented 30-min sessions.

    python3 benchmarks/bench_audit.py [N] [--jobs J] [--keep DIR]

Generates N cohort sessions of 30 minutes (`sedreport demo --cohort`, recipe with
``duration_min: [30, 30]``), then runs ``sedreport audit`` as a separate process twice on a new
register: cold (everything analysed) and warm (nothing new). Peak memory is the maximum
resident set of the audit process (the register writer) and of its largest worker.

Measured on the shared 2-core machine (2026-12-05, --jobs 2, 20-25 Hz CO2, PDF and CSV written):

- 1,000 sessions: generated in 77.6 s; cold audit 63.6 s; warm audit 1.72 s; peak RSS of the
  audit process or a worker 104 MiB; register 1.8 MB.
- 200 sessions: cold 21.8 s (machine busier); warm 1.80 s; peak RSS 105 MiB: memory does not grow
  with the number of sessions.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import yaml

from sedreport.demo import write_cohort
from sedreport.demo.cohort import load_recipe


def _run(cmd: list[str]) -> tuple[float, float, str]:
    """Wall time (s) and peak RSS (MiB) of the audit process and its workers."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    _, status, rusage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    out = proc.stdout.read()
    err = proc.stderr.read()
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"audit failed: {err}")
    return wall, rusage.ru_maxrss / 1024.0, out.strip()


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("n", type=int, nargs="?", default=1000)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--keep", default=None, help="folder to keep the cohort in (reused if there)")
    args = ap.parse_args()
    base = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="bench-audit-"))
    base.mkdir(parents=True, exist_ok=True)
    cohort = base / f"cohort-{args.n}"
    if not cohort.is_dir():
        recipe = load_recipe()
        recipe["duration_min"] = [30, 30]
        rpath = base / "recipe.yaml"
        rpath.write_text(yaml.safe_dump(recipe), encoding="utf-8")
        t0 = time.perf_counter()
        write_cohort(cohort, args.n, seed=11, recipe=rpath, jobs=args.jobs)
        print(f"generated {args.n} sessions of 30 min in {time.perf_counter() - t0:.1f} s")
    reg = base / f"register-{args.n}.sqlite"
    for suffix in ("", "-wal", "-shm"):
        Path(f"{reg}{suffix}").unlink(missing_ok=True)
    cmd = [sys.executable, "-m", "sedreport.cli", "audit", str(cohort), "--csv",
           str(base / "rates.csv"), "-o", str(base / "audit.pdf"), "--register", str(reg),
           "--jobs", str(args.jobs)]  # fmt: skip
    cold, cold_mb, out = _run(cmd)
    print(f"cold audit: {cold:.1f} s, peak RSS of the audit process or a worker {cold_mb:.0f} MiB")
    print(f"  {out}")
    warm, warm_mb, out = _run(cmd)
    print(f"warm audit: {warm:.2f} s, peak RSS {warm_mb:.0f} MiB")
    print(f"  {out}")
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(f"(this benchmark process: {own:.0f} MiB; register {reg.stat().st_size / 1e6:.1f} MB)")


if __name__ == "__main__":
    main()
