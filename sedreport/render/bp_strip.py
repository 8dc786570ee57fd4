"""The blood pressure and heart rate strip of the trend rows.

Each cuff reading is a vertical bar from diastolic to systolic with a short cap at both ends;
the mean pressures are joined by a thin line (broken where readings are further apart than
:data:`MEAN_JOIN_MAX_S`). The cleaned oximeter pulse is drawn on the same numeric scale
(mmHg and beats per minute share the axis, as on a paper anaesthesia chart; common practice).
"""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Group, Line

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.plot import Panel, frame_box, label, nice_ceiling, series_shapes, value_axis

#: Scale of the strip, mmHg and /min: 40 up to at least 200 (higher when a reading is).
SCALE_FLOOR: float = 40.0
SCALE_TOP_MIN: float = 200.0
#: Mean pressures further apart than this (s) are not joined (a missed cuff cycle shows).
MEAN_JOIN_MAX_S: float = 600.0
#: Half width of the caps at systolic and diastolic, points.
CAP_PT: float = 1.6


def bp_scale_top(analysis: Analysis) -> float:
    """Top of the strip's scale, shared by every row (mmHg and /min)."""
    tops = [SCALE_TOP_MIN]
    bp = analysis.session.bp
    if bp is not None and bp.systolic_mmHg.size:
        tops.append(float(np.max(bp.systolic_mmHg)))
    pulse = np.asarray(analysis.trends.pulse_bpm, dtype=float)
    if np.isfinite(pulse).any():
        tops.append(float(np.nanmax(pulse)))
    return nice_ceiling(max(tops), 50, SCALE_TOP_MIN)


def bp_hr_strip(analysis: Analysis, p: Panel) -> Group:
    """The strip in panel ``p`` (whose y range is :data:`SCALE_FLOOR` to the scale top)."""
    g = Group()
    g.add(value_axis(p, list(np.arange(50.0, p.y1 + 1, 50.0))))
    top = p.y + p.height
    g.add(label(4, top - 8, "BP", 6.3, bold=True, color=styles.BP.color))
    g.add(label(4, top - 15, "mmHg", 5.0))
    g.add(label(4, p.y + 9, "HR", 6.3, bold=True, color=styles.PULSE.color))
    g.add(label(4, p.y + 2, "/min", 5.0))
    bp = analysis.session.bp
    if bp is None:
        g.add(label(p.x + 6, p.y + p.height - 8, "no blood pressure file in this session", 6))
    else:
        g.add(_readings(bp, p))
        for shp in series_shapes(
            p, bp.time_s, bp.mean_mmHg, styles.MEAN_BP, max_gap_s=MEAN_JOIN_MAX_S
        ):
            g.add(shp)  # fmt: skip
    tr = analysis.trends
    for shp in series_shapes(
        p,
        tr.spo2_time_s,
        tr.pulse_bpm,
        styles.PULSE,
        max_gap_s=analysis.quality.spo2_gap_s,
        cols_per_pt=0.5,
    ):
        g.add(shp)
    g.add(frame_box(p))
    return g


def _readings(bp, p: Panel) -> Group:
    g = Group()
    inside = (bp.time_s >= p.t0_s) & (bp.time_s <= p.t1_s)
    color, width = styles.BP.color, styles.BP.width_pt
    for t, sys_, dia in zip(
        bp.time_s[inside], bp.systolic_mmHg[inside], bp.diastolic_mmHg[inside], strict=True
    ):
        x = float(p.tx(t))
        y_sys, y_dia = float(p.vy(sys_)), float(p.vy(dia))
        g.add(Line(x, y_dia, x, y_sys, strokeColor=color, strokeWidth=width))
        for y in (y_sys, y_dia):
            g.add(Line(x - CAP_PT, y, x + CAP_PT, y, strokeColor=color, strokeWidth=width))
    return g
