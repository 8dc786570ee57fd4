"""The trend CSV: one row per visit in date order (DESIGN.md contract columns first).

Empty cells are values that do not exist for that visit (no SpO2 stream, no blood gas).
"""

from __future__ import annotations

import csv
import io
import math

from sedreport.trend import Trend, VisitIndices

#: The contract columns of DESIGN.md, in order.
CONTRACT_COLUMNS: tuple[str, ...] = (
    "visit_date",
    "session_id",
    "breaths_used",
    "etco2_median_mmHg",
    "etco2_iqr_mmHg",
    "rr_median_per_min",
    "fico2_median_mmHg",
    "phase3_slope_mmHg_s",
    "phase3_slope_norm_per_s",
    "alpha_angle_deg",
    "upstroke_s",
    "spo2_median_pct",
    "spo2_in_target_pct",
)
#: Further columns after the contract.
EXTRA_COLUMNS: tuple[str, ...] = (
    "started",
    "patient_ref",
    "breaths_detected",
    "breaths_excluded_pct",
    "excluded_reasons",
    "etco2_ci_low_mmHg",
    "etco2_ci_high_mmHg",
    "rr_iqr_per_min",
    "phase3_slope_norm_iqr_per_s",
    "alpha_angle_iqr_deg",
    "phase2_slope_mmHg_s",
    "etco2_sd_mmHg",
    "breath_interval_cv_pct",
    "spo2_below_target_pct",
    "spo2_above_target_pct",
    "spo2_target_low_pct",
    "spo2_target_high_pct",
    "oxygen_device",
    "flow_l_min",
    "blood_gas_sample",
    "pco2_mmHg",
    "pco2_minus_etco2_mmHg",
    "etco2_change_from_previous_mmHg",
    "etco2_change_within_noise",
    "alpha_scale_mmHg_per_s",
    "reliable",
)


def _num(value: float | None, digits: int) -> str:
    if value is None or not math.isfinite(value):
        return ""
    text = f"{value:.{digits}f}"
    return "0" + text[2:] if text.startswith("-0") and float(text) == 0 else text


def _row(trend: Trend, i: int, v: VisitIndices) -> list[str]:
    s = v.stats
    sp = v.spo2
    gas = v.blood_gas
    ch = trend.from_previous[i].get("etco2_mmHg")
    reasons = ";".join(f"{r}:{n}" for r, n in v.excluded)
    return [
        v.visit_date.isoformat(),
        v.session_id,
        str(v.breaths_used),
        _num(s["etco2_mmHg"].median, 2),
        _num(s["etco2_mmHg"].iqr, 2),
        _num(s["rr_per_min"].median, 2),
        _num(s["fico2_mmHg"].median, 2),
        _num(s["phase3_slope_mmHg_s"].median, 3),
        _num(s["phase3_slope_norm_per_s"].median, 4),
        _num(s["alpha_angle_deg"].median, 2),
        _num(s["upstroke_s"].median, 3),
        _num(sp.stat.median if sp else None, 1),
        _num(sp.in_target_pct if sp else None, 1),
        v.started.isoformat(),
        v.patient_ref,
        str(v.breaths_total),
        _num(v.excluded_pct, 1),
        reasons,
        _num(s["etco2_mmHg"].ci_low, 2),
        _num(s["etco2_mmHg"].ci_high, 2),
        _num(s["rr_per_min"].iqr, 2),
        _num(s["phase3_slope_norm_per_s"].iqr, 4),
        _num(s["alpha_angle_deg"].iqr, 2),
        _num(s["phase2_slope_mmHg_s"].median, 1),
        _num(v.etco2_sd_mmHg, 2),
        _num(v.interval_cv_pct, 1),
        _num(sp.below_pct if sp else None, 1),
        _num(sp.above_pct if sp else None, 1),
        _num(sp.target_pct[0] if sp else None, 0),
        _num(sp.target_pct[1] if sp else None, 0),
        v.oxygen_device or "",
        _num(v.flow_l_min, 1),
        gas.sample if gas else "",
        _num(gas.pco2_mmHg if gas else None, 1),
        _num(v.gradient_mmHg, 1),
        _num(ch.delta if ch else None, 2),
        "" if ch is None else str(ch.within_noise).lower(),
        _num(trend.settings.value("shape.alpha_scale_mmHg_per_s"), 1),
        str(v.reliable).lower(),
    ]


def trend_csv_text(trend: Trend) -> str:
    """CSV text of a trend: header, then one row per visit in date order.

    Examples
    --------
    >>> CONTRACT_COLUMNS[0], CONTRACT_COLUMNS[-1]
    ('visit_date', 'spo2_in_target_pct')
    """
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow([*CONTRACT_COLUMNS, *EXTRA_COLUMNS])
    for i, v in enumerate(trend.visits):
        writer.writerow(_row(trend, i, v))
    return buf.getvalue()
