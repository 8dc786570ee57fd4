"""Benchmark: render the PDF record of a long, dense session and print time and pages.

Target (issue 5): a 4-hour session with CO2 at 100 Hz (1.44 million samples) renders in under
5 s with a bounded page count. Uses the synthetic fixture of tests/record_fixtures.py (invented
data). Run: ``python benchmarks/bench_record.py [hours] [rate_hz]``.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import record_fixtures  # noqa: E402

from sedreport.render.record import render_record  # noqa: E402


def page_count(out_bytes: bytes) -> int:
    """Pages of a PDF, read back with pdfplumber (a test dependency)."""
    import io

    import pdfplumber

    with pdfplumber.open(io.BytesIO(out_bytes)) as pdf:
        return len(pdf.pages)


def run(analysis, label: str) -> None:
    """Render once and print seconds, pages and size."""
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "bench.pdf"
        t1, c1 = time.perf_counter(), time.process_time()
        render_record(analysis, out)
        t_render, c_render = time.perf_counter() - t1, time.process_time() - c1
        data = out.read_bytes()
    print(
        f"{label}: render_record {t_render:.2f} s wall ({c_render:.2f} s CPU), "
        f"{page_count(data)} pages, "
        f"{len(data) / 1e6:.2f} MB"
    )


def main() -> None:
    hours = float(sys.argv[1]) if len(sys.argv) > 1 else 4.0
    rate_hz = float(sys.argv[2]) if len(sys.argv) > 2 else 100.0
    t0 = time.perf_counter()
    analysis = record_fixtures.make_analysis(duration_s=hours * 3600, fs_hz=rate_hz, seed=1)
    t_build = time.perf_counter() - t0
    n = analysis.session.co2.time_s.size
    print(
        f"session: {hours:g} h, CO2 {rate_hz:g} Hz, {n} samples (fixture built in {t_build:.2f} s)"
    )
    run(analysis, f"{len(analysis.episodes)} episodes")
    many = record_fixtures.with_many_episodes(analysis, 200)
    run(many, f"{len(many.episodes)} episodes (close-ups capped)")


if __name__ == "__main__":
    main()
