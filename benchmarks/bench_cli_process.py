"""Whole-process time of ``sedreport breaths`` on a 2-hour, 100 Hz capnogram; prints figures.

Target (groundwork issue): under 1 s on the project's 2-core machine, as a user runs it (a new
Python process: interpreter start, imports, reading 720,000 CSV rows, breath detection, CSV out).
Also prints the import time of the command line alone and of each heavy library, so a slow
import shows where it comes from.

Run: ``python benchmarks/bench_cli_process.py``
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

FS_HZ = 100.0
DURATION_S = 7200.0
REPEATS = 5


def write_session(folder: Path) -> Path:
    """An invented 2-hour capnogram at 12 breaths a minute, 0.3 mmHg noise."""
    rng = np.random.default_rng(7)
    t = np.arange(int(DURATION_S * FS_HZ)) / FS_HZ
    co2 = np.where((t * 12.0 / 60.0) % 1.0 < 0.45, 38.0, 0.4) + rng.normal(0.0, 0.3, t.size)
    folder.mkdir(parents=True, exist_ok=True)
    rows = np.column_stack([t, co2])
    with (folder / "co2.csv").open("w", encoding="ascii") as fh:
        fh.write("time,co2\n")
        np.savetxt(fh, rows, fmt=["%.2f", "%.1f"], delimiter=",")
    (folder / "session.yaml").write_text(
        "format: sedreport-session/1\nsession_id: BENCH-2H\n"
        "started: 2026-03-14T09:12:00+01:00\nsources:\n  co2: {file: co2.csv, units: mmHg}\n",
        encoding="utf-8",
    )
    return folder


def wall_s(args: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(args, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def median_wall_s(args: list[str]) -> float:
    wall_s(args)  # warm the file cache
    return statistics.median(wall_s(args) for _ in range(REPEATS))


def main() -> None:
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        folder = write_session(Path(tmp) / "BENCH-2H")
        print(
            f"session: {DURATION_S / 3600:.0f} h at {FS_HZ:.0f} Hz, {int(DURATION_S * FS_HZ):,} rows"
        )
        print(f"python -c pass:              {median_wall_s([py, '-c', 'pass']):.3f} s")
        for lib in ("numpy", "pandas", "scipy.ndimage", "yaml", "click", "reportlab.platypus"):
            print(f"import {lib:<22} {median_wall_s([py, '-c', f'import {lib}']):.3f} s")
        print(
            f"import sedreport.cli          {median_wall_s([py, '-c', 'import sedreport.cli']):.3f} s"
        )
        cmd = [py, "-m", "sedreport.cli", "breaths", str(folder), "--format", "csv"]
        total = median_wall_s(cmd)
        verdict = "under" if total < 1.0 else "OVER"
        print(
            f"sedreport breaths --format csv (whole process, median of {REPEATS}): "
            f"{total:.3f} s ({verdict} the 1 s target)"
        )


if __name__ == "__main__":
    main()
