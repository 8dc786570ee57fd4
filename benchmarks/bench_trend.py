"""Benchmark: `sedreport trend` over 12 invented visits of 10 minutes (CO2 25 Hz, SpO2 1 Hz).

Prints the time to load the visits, compute the indices and bootstrap intervals, and write the
PDF and CSV, plus the page count and peak memory. Invented data (sedreport.demo.visits); the
visits are written to a temporary folder first (not timed).
Run: ``python benchmarks/bench_trend.py [visits] [minutes]``.

Measured on the shared 2-core machine (December 2026): 12 x 10 min, 2423 breaths: load 0.08 s,
indices 0.72 s, PDF + CSV 0.46 s (8 pages), total about 1.3 s, peak RSS 183 MiB; 12 x 60 min:
total 4.7 s, peak RSS 297 MiB.
"""

from __future__ import annotations

import resource
import sys
import tempfile
import time
from pathlib import Path

from sedreport.demo import case_rng
from sedreport.demo.visits import write_visit
from sedreport.ingest import load_session
from sedreport.render.trend_pdf import render_trend
from sedreport.trend import build_trend


def write_cohort(root: Path, n: int, minutes: float) -> list[Path]:
    """``n`` monthly visits of one invented patient, ``minutes`` long each."""
    folders = []
    for k in range(n):
        month = 1 + k % 12
        start = f"{2026 + k // 12}-{month:02d}-12T10:00:00+00:00"
        rng = case_rng(0, f"bench-{k}")
        folders.append(write_visit(root, k, rng, 0, duration_s=60.0 * minutes, start=start))
    return folders


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 12
    minutes = float(sys.argv[2]) if len(sys.argv) > 2 else 10.0
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        folders = write_cohort(root, n, minutes)
        t0 = time.perf_counter()
        sessions = [load_session(f) for f in folders]
        t1 = time.perf_counter()
        trend = build_trend(sessions)
        t2 = time.perf_counter()
        pdf = render_trend(trend, root / "trend.pdf", csv_path=root / "trend.csv")
        t3 = time.perf_counter()
        import pdfplumber

        with pdfplumber.open(pdf) as doc:
            pages = len(doc.pages)
        size_kb = pdf.stat().st_size / 1024
    breaths = sum(v.breaths_total for v in trend.visits)
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"trend of {n} visits x {minutes:g} min ({breaths} breaths)")
    print(f"  load     {t1 - t0:6.2f} s")
    print(f"  indices  {t2 - t1:6.2f} s  (breaths, shape, bootstrap)")
    print(f"  render   {t3 - t2:6.2f} s  ({pages} pages, {size_kb:.0f} KiB PDF + CSV)")
    print(f"  total    {t3 - t0:6.2f} s  peak RSS {peak_mb:.0f} MiB")


if __name__ == "__main__":
    main()
