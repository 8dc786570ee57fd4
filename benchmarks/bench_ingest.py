"""Time ``load_session`` on a 60-minute, 100 Hz CO2 CSV (360,000 rows); prints the figures.

Target (issue 2): under 1 s on the project's 2-core machine. Also times the same capnogram
with ISO 8601 timestamps and gzip-compressed, which take the slower diagnostic path.

Run: ``python benchmarks/bench_ingest.py``
"""

from __future__ import annotations

import gzip
import tempfile
import time
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np

from sedreport.ingest import load_session

FS_HZ = 100.0
DURATION_S = 3600.0
STARTED = datetime(2026, 3, 14, 9, 12, tzinfo=timezone(timedelta(hours=1)))


def _capnogram() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(7)
    t = np.arange(int(DURATION_S * FS_HZ)) / FS_HZ
    phase = (t * 12.0 / 60.0) % 1.0
    co2 = np.where(phase < 0.45, 38.0, 0.4) + rng.normal(0.0, 0.3, t.size)
    return t, co2


def _write(folder: Path, name: str, body: bytes) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / name).write_bytes(body)
    (folder / "session.yaml").write_text(
        "format: sedreport-session/1\nsession_id: BENCH-1\n"
        f"started: {STARTED.isoformat()}\nsources:\n  co2: {{file: {name}, units: mmHg}}\n",
        encoding="utf-8",
    )
    return folder


def _time_load(folder: Path, repeats: int = 5) -> float:
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        session = load_session(folder)
        best = min(best, time.perf_counter() - t0)
    assert session.co2 is not None and session.co2.time_s.size == int(DURATION_S * FS_HZ)
    return best


def main() -> None:
    t, co2 = _capnogram()
    seconds_csv = (
        "time,co2\n" + "".join(f"{a:.2f},{b:.2f}\n" for a, b in zip(t, co2, strict=True))
    ).encode()
    iso = [(STARTED + timedelta(seconds=float(a))).isoformat(timespec="milliseconds") for a in t]
    iso_csv = (
        "time,co2\n" + "".join(f"{a},{b:.2f}\n" for a, b in zip(iso, co2, strict=True))
    ).encode()
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        cases = {
            "seconds, .csv": _write(root / "a", "co2.csv", seconds_csv),
            "seconds, .csv.gz": _write(root / "b", "co2.csv.gz", gzip.compress(seconds_csv, 6)),
            "ISO 8601, .csv": _write(root / "c", "co2.csv", iso_csv),
        }
        print(
            f"load_session, {t.size} CO2 rows ({DURATION_S / 60:.0f} min at {FS_HZ:g} Hz), best of 5:"
        )
        for label, folder in cases.items():
            print(f"  {label:<18} {_time_load(folder):.3f} s")


if __name__ == "__main__":
    main()
