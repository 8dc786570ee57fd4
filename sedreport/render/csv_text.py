"""CSV forms of the command-line outputs: breaths and episodes (the contract of DESIGN.md).

Breaths: one row a breath, the contract columns first (``start_s, end_s, etco2_mmHg,
fico2_mmHg, rr_per_min, phase3_slope_mmHg_s, valid``), then ``duration_s, upstroke_s,
phase3_slope_norm_per_s, reason``; ``valid`` is ``true``/``false``, a missing value is empty.
Episodes: one row an episode with the scalar fields of :data:`EPISODE_SCALARS` (``event`` is the
id of its adverse event, empty for a finding) and counts.
"""

from __future__ import annotations

import io
import math
from collections import Counter
from typing import TYPE_CHECKING

import pandas as pd

from sedreport.capnography.breaths import breaths_to_frame
from sedreport.capnography.model import BreathTable

if TYPE_CHECKING:  # types only: the text outputs must not load the detectors
    from sedreport.analysis import Analysis


#: Decimal places per breath column in CSV, JSON and table output.
BREATH_DECIMALS = {
    "start_s": 3,
    "end_s": 3,
    "etco2_mmHg": 2,
    "fico2_mmHg": 2,
    "rr_per_min": 2,
    "phase3_slope_mmHg_s": 3,
    "duration_s": 3,
    "upstroke_s": 3,
    "phase3_slope_norm_per_s": 5,
}

#: Scalar episode fields of the csv output, in column order.
EPISODE_SCALARS: tuple[str, ...] = (
    "id",
    "kind",
    "subtype",
    "start_s",
    "end_s",
    "duration_s",
    "start_time",
    "severity",
    "peak_etco2_mmHg",
    "min_spo2_pct",
    "min_rr_per_min",
    "time_to_first_intervention_s",
    "time_to_resolution_s",
    "capnographic_lead_s",
    "event",
)


def breath_cell(column: str, value: object) -> str:
    """One breath value as CSV text (empty when missing).

    Examples
    --------
    >>> breath_cell("etco2_mmHg", 38.456), breath_cell("valid", True), breath_cell("rr_per_min", float("nan"))
    ('38.46', 'true', '')
    """
    if column == "valid":
        return "true" if value else "false"
    if column == "reason":
        return str(value)
    v = float(value)
    if not math.isfinite(v):
        return ""
    return f"{v:.{BREATH_DECIMALS[column]}f}"


def breath_reason_counts(breaths: BreathTable) -> dict[str, int]:
    """Invalid breaths per reason (a breath with two reasons counts under both)."""
    counts: Counter[str] = Counter()
    for r in breaths.reason:
        for part in filter(None, r.split(";")):
            counts[part] += 1
    return dict(sorted(counts.items()))


def breaths_csv(breaths: BreathTable) -> str:
    """The breath table as CSV text (contract columns first)."""
    frame = breaths_to_frame(breaths)
    out = io.StringIO()
    columns = list(frame.columns)
    out.write(",".join(columns) + "\n")
    for row in frame.itertuples(index=False):
        out.write(",".join(breath_cell(c, v) for c, v in zip(columns, row, strict=True)) + "\n")
    return out.getvalue()


def episodes_to_frame(analysis: Analysis) -> pd.DataFrame:
    """One row an episode with the scalar fields of :data:`EPISODE_SCALARS` plus counts."""
    rows = []
    for e in analysis.episodes:
        row = {k: getattr(e, k) for k in EPISODE_SCALARS}
        row["n_preceding_doses"] = len(e.preceding_doses)
        row["n_interventions"] = len(e.interventions)
        rows.append(row)
    columns = [*EPISODE_SCALARS, "n_preceding_doses", "n_interventions"]
    return pd.DataFrame(rows, columns=columns)


def episodes_csv(analysis: Analysis) -> str:
    """The ``sedreport episodes --format csv`` text."""
    return episodes_to_frame(analysis).to_csv(index=False, lineterminator="\n")
