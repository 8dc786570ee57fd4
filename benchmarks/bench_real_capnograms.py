"""Breaths and CO2 findings on the recorded capnograms of the shared real-signal folder.

Usage::

    python benchmarks/bench_real_capnograms.py [FOLDER] [--plots OUTDIR]

FOLDER defaults to ``/work/shared/real-capnograms`` (or ``$SEDREPORT_REAL_CO2``); its
``sessions/`` subfolder (or the folder itself) holds ``sedreport-session/1`` folders. When it
is absent the benchmark says so and exits 0. Nothing from it is copied anywhere.

For each session it prints: breaths found (valid of all), the median rate and EtCO2 of the
valid breaths, the longest apnoea and the CO2 findings (apnoea, co2_signal_absent,
low_amplitude, etco2_fall, hypoventilation), then totals. There are no expert labels for
these recordings: the figures are for looking, not scores. ``--plots`` writes one PNG per
session with the detected breaths shaded (green valid, red invalid) and the findings marked.
Recorded data are documented and reviewed; none of this is an alarm.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

from sedreport.analysis import analyse_session
from sedreport.errors import SedreportError
from sedreport.ingest import load_session

DEFAULT_FOLDER = Path(os.environ.get("SEDREPORT_REAL_CO2", "/work/shared/real-capnograms"))
CO2_KINDS = ("apnoea", "co2_signal_absent", "low_amplitude", "etco2_fall", "hypoventilation")


def session_folders(root: Path) -> list[Path]:
    """Every folder with a ``session.yaml`` under ``root/sessions`` (or ``root``), sorted."""
    base = root / "sessions" if (root / "sessions").is_dir() else root
    return sorted(p.parent for p in base.glob("*/session.yaml"))


def _median(x: np.ndarray) -> float:
    x = x[np.isfinite(x)]
    return float(np.median(x)) if x.size else float("nan")


def describe(analysis) -> dict:
    """The per-session figures printed by this benchmark."""
    b = analysis.breaths
    v = np.asarray(b.valid, dtype=bool)
    eps = analysis.episodes
    apnoeas = [e.duration_s for e in eps if e.kind == "apnoea"]
    found = [
        f"{e.kind}{'/' + e.subtype if e.subtype else ''} {e.start_s:.0f}-{e.end_s:.0f}s"
        for e in eps
        if e.kind in CO2_KINDS
    ]
    return {
        "breaths": len(b),
        "valid": int(v.sum()),
        "rr": _median(b.rr_per_min[v]),
        "etco2": _median(b.etco2_mmHg[v]),
        "longest_apnoea_s": max(apnoeas, default=0.0),
        "findings": found,
        "kinds": [e.kind for e in eps if e.kind in CO2_KINDS],
    }


def plot_session(analysis, out: Path) -> None:
    """One PNG of the whole CO2 trace with breaths and findings (matplotlib, Agg backend)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    cap = analysis.session.co2
    width = float(np.clip((cap.time_s[-1] - cap.time_s[0]) / 6.0, 8.0, 60.0))
    fig, ax = plt.subplots(figsize=(width, 2.2))
    ax.plot(cap.time_s, cap.co2_mmHg, lw=0.6, color="black")
    b = analysis.breaths
    for a, z, ok in zip(b.start_s, b.end_s, b.valid, strict=True):
        ax.axvspan(a, z, color="green" if ok else "red", alpha=0.15, lw=0)
    top = float(np.nanmax(cap.co2_mmHg)) if cap.co2_mmHg.size else 1.0
    for e in analysis.episodes:
        ax.axvspan(e.start_s, e.end_s, ymin=0.93, ymax=1.0, color="tab:blue", alpha=0.6)
        ax.text(e.start_s, top * 0.85, e.kind, fontsize=7, color="tab:blue")
    ax.set_title(f"{analysis.session.session_id}: {len(b)} breaths", fontsize=8, loc="left")
    ax.set_xlabel("s")
    ax.set_ylabel("CO2 mmHg")
    fig.tight_layout()
    fig.savefig(out, dpi=70)
    plt.close(fig)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("folder", nargs="?", type=Path, default=DEFAULT_FOLDER)
    parser.add_argument("--plots", type=Path, default=None)
    args = parser.parse_args()
    folders = session_folders(args.folder) if args.folder.is_dir() else []
    if not folders:
        print(f"real capnograms: none found under {args.folder}; skipped (nothing to score)")
        return 0
    if args.plots:
        args.plots.mkdir(parents=True, exist_ok=True)
    print(f"{'session':<18} {'breaths':>7} {'valid':>5} {'rr/min':>6} {'EtCO2':>5} "
          f"{'apnoea s':>8}  CO2 findings")  # fmt: skip
    totals = {"breaths": 0, "valid": 0, "sessions": 0, "errors": 0}
    counts: dict[str, int] = {}
    t0 = time.perf_counter()
    for folder in folders:
        try:
            analysis = analyse_session(load_session(folder))
        except SedreportError as exc:
            totals["errors"] += 1
            print(f"{folder.name:<18} error: {exc}")
            continue
        d = describe(analysis)
        totals["sessions"] += 1
        totals["breaths"] += d["breaths"]
        totals["valid"] += d["valid"]
        for k in d["kinds"]:
            counts[k] = counts.get(k, 0) + 1
        print(f"{folder.name:<18} {d['breaths']:>7} {d['valid']:>5} {d['rr']:>6.1f} "
              f"{d['etco2']:>5.1f} {d['longest_apnoea_s']:>8.0f}  "
              f"{'; '.join(d['findings']) or '-'}")  # fmt: skip
        if args.plots:
            plot_session(analysis, args.plots / f"{folder.name}.png")
    print(f"{totals['sessions']} sessions ({totals['errors']} refused), {totals['breaths']} "
          f"breaths ({totals['valid']} valid), findings {dict(sorted(counts.items()))}, "
          f"{time.perf_counter() - t0:.1f} s")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
