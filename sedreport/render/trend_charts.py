"""Vector charts of the trend document: one strip per index over visit dates, the SpO2
time-in-target bars, and the averaged breaths of every visit overlaid.

Series are told apart by grey level and line style, so the charts read the same printed in
black and white. The x axis of a strip is calendar time (days), so unequal gaps between visits
look unequal.
"""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, PolyLine, Rect

from sedreport.render import styles
from sedreport.render.plot import Panel, frame_box, label, value_axis
from sedreport.trend import Trend, stat_of

#: Label, unit and decimals of each index as charted and tabled.
INDEX_LABELS: dict[str, tuple[str, str, int]] = {
    "etco2_mmHg": ("EtCO2", "mmHg", 1),
    "rr_per_min": ("Respiratory rate", "/min", 1),
    "fico2_mmHg": ("Inspired CO2 (FiCO2)", "mmHg", 1),
    "phase3_slope_mmHg_s": ("Phase III slope", "mmHg/s", 2),
    "phase3_slope_norm_per_s": ("Phase III slope / EtCO2", "1/s", 3),
    "alpha_angle_deg": ("Alpha angle", "deg", 1),
    "upstroke_s": ("Upstroke (phase II) time", "s", 2),
    "phase2_slope_mmHg_s": ("Phase II slope", "mmHg/s", 0),
    "spo2_pct": ("SpO2", "%", 0),
}
#: Strips drawn, in page order.
STRIP_INDICES: tuple[str, ...] = (
    "etco2_mmHg",
    "rr_per_min",
    "phase3_slope_norm_per_s",
    "alpha_angle_deg",
    "phase3_slope_mmHg_s",
    "upstroke_s",
    "fico2_mmHg",
    "spo2_pct",
)
_LEFT_PT, _BOTTOM_PT, _TOP_PT, _RIGHT_PT = 30.0, 20.0, 14.0, 8.0


def visit_days(trend: Trend) -> np.ndarray:
    """Days of each visit since the first (fractional, from the start times)."""
    t0 = trend.visits[0].started
    return np.array([(v.started - t0).total_seconds() / 86400.0 for v in trend.visits])


def _x_range(days: np.ndarray) -> tuple[float, float]:
    span = max(float(days[-1] - days[0]), 1.0)
    return float(days[0]) - 0.06 * span, float(days[-1]) + 0.06 * span


def _nice_range(lo: float, hi: float) -> tuple[float, float, list[float]]:
    """A padded value range and 3-5 round ticks inside it."""
    if not np.isfinite(lo) or not np.isfinite(hi):
        return 0.0, 1.0, [0.0, 0.5, 1.0]
    if hi - lo < 1e-9:
        pad = max(abs(hi) * 0.05, 1e-3)
        lo, hi = lo - pad, hi + pad
    raw = (hi - lo) / 4.0
    mag = 10 ** np.floor(np.log10(raw))
    step = float(min((m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw), default=10 * mag))
    a, b = np.floor(lo / step) * step, np.ceil(hi / step) * step
    ticks = [float(round(v, 10)) for v in np.arange(a, b + step / 2, step)]
    return float(a), float(b), ticks


def _date_axis(panel: Panel, trend: Trend, days: np.ndarray) -> Group:
    """Visit numbers under every tick; dates where there is room (at least 32 pt apart)."""
    g = Group()
    last_x = -np.inf
    for k, (d, v) in enumerate(zip(days, trend.visits, strict=True)):
        x = float(panel.tx(d))
        g.add(Line(x, panel.y, x, panel.y - 2, strokeColor=styles.AXIS, strokeWidth=0.4))
        g.add(label(x, panel.y - 8, f"V{k + 1}", 5.8, "middle", bold=True))
        if x - last_x >= 32.0:
            g.add(label(x, panel.y - 14.5, v.started.strftime("%d %b %y"), 5.0, "middle"))
            last_x = x
    return g


def _oxygen_marks(panel: Panel, trend: Trend, days: np.ndarray) -> Group:
    """Dashed vertical line half-way before each visit whose oxygen differs, labelled."""
    g = Group()
    for m in trend.oxygen_marks:
        x = float(panel.tx(0.5 * (days[m.visit - 1] + days[m.visit])))
        g.add(
            Line(
                x,
                panel.y,
                x,
                panel.y + panel.height,
                strokeColor=styles.AXIS,
                strokeWidth=0.6,
                strokeDashArray=[2, 1.5],
            )
        )
        flow = trend.visits[m.visit].flow_l_min
        text = "O2" if flow is None else f"O2 {flow:g} L/min"
        g.add(label(x + 1.5, panel.y + panel.height - 6, text, 5.2, bold=True, color=styles.AXIS))
    return g


def index_strip(trend: Trend, index: str, width_pt: float, height_pt: float) -> Drawing:
    """One index over the visit dates: median (dot), IQR (thin bar), bootstrap interval of the
    median (thick bar); open dot for a visit with too few breaths; O2 marks dashed."""
    name, unit, _ = INDEX_LABELS[index]
    d = Drawing(width_pt, height_pt)
    days = visit_days(trend)
    stats = [stat_of(v, index) for v in trend.visits]
    lows = [s.q1 for s in stats if s is not None and s.n] + [
        s.ci_low for s in stats if s is not None and s.n
    ]
    highs = [s.q3 for s in stats if s is not None and s.n] + [
        s.ci_high for s in stats if s is not None and s.n
    ]
    extra = []
    if index == "spo2_pct":
        extra = [x for v in trend.visits if v.spo2 for x in v.spo2.target_pct]
    y0, y1, ticks = _nice_range(min(lows + extra, default=0.0), max(highs + extra, default=1.0))
    x0, x1 = _x_range(days)
    p = Panel(
        _LEFT_PT,
        _BOTTOM_PT,
        width_pt - _LEFT_PT - _RIGHT_PT,
        height_pt - _BOTTOM_PT - _TOP_PT,
        x0,
        x1,
        y0,
        y1,
    )
    d.add(label(p.x, height_pt - 9, f"{name} ({unit})", 7.2, bold=True))
    if index == "spo2_pct":
        d.add(_target_bands(p, trend, days))
    d.add(value_axis(p, ticks))
    d.add(frame_box(p))
    d.add(_date_axis(p, trend, days))
    d.add(_oxygen_marks(p, trend, days))
    d.add(_median_path(p, days, stats))
    for k, s in enumerate(stats):
        if s is None or not s.n:
            continue
        x = float(p.tx(days[k]))
        d.add(
            Line(
                x, float(p.vy(s.q1)), x, float(p.vy(s.q3)), strokeColor=styles.AXIS, strokeWidth=0.6
            )
        )
        d.add(
            Line(
                x,
                float(p.vy(s.ci_low)),
                x,
                float(p.vy(s.ci_high)),
                strokeColor=styles.INK,
                strokeWidth=2.6,
            )
        )
        reliable = trend.visits[k].reliable
        d.add(
            Circle(
                x,
                float(p.vy(s.median)),
                2.1,
                strokeColor=styles.INK,
                strokeWidth=0.7,
                fillColor=styles.ETCO2.color if reliable else styles.colors.white,
            )
        )
    return d


def _median_path(p: Panel, days: np.ndarray, stats) -> Group:
    g = Group()
    pts = []
    for k, s in enumerate(stats):
        if s is not None and s.n and np.isfinite(s.median):
            pts += [float(p.tx(days[k])), float(p.vy(s.median))]
    if len(pts) >= 4:
        g.add(PolyLine(pts, strokeColor=styles.RULE, strokeWidth=0.5, strokeDashArray=[1.5, 1.5]))
    return g


def _target_bands(p: Panel, trend: Trend, days: np.ndarray) -> Group:
    """The SpO2 target range of each visit, shaded around its date."""
    g = Group()
    half = 0.5 * float(np.min(np.diff(days))) if days.size > 1 else 0.5
    for k, v in enumerate(trend.visits):
        if v.spo2 is None:
            continue
        lo, hi = v.spo2.target_pct
        a, b = float(p.tx(days[k] - 0.8 * half)), float(p.tx(days[k] + 0.8 * half))
        a, b = max(a, p.x), min(b, p.x + p.width)
        g.add(
            Rect(
                a,
                float(p.vy(lo)),
                b - a,
                float(p.vy(hi)) - float(p.vy(lo)),
                fillColor=styles.BAND_FILL,
                strokeColor=None,
            )
        )
    return g


#: Fills of the SpO2 bars: below, inside, above the target (light to dark greys differ).
_BELOW = styles.colors.Color(0.35, 0.35, 0.40)
_INSIDE = styles.colors.Color(0.80, 0.84, 0.86)
_ABOVE = styles.colors.Color(0.55, 0.62, 0.70)


def spo2_target_bars(trend: Trend, width_pt: float, height_pt: float) -> Drawing:
    """Share of SpO2 samples below, inside and above the target, one stacked bar per visit."""
    d = Drawing(width_pt, height_pt)
    n = len(trend.visits)
    p = Panel(
        _LEFT_PT,
        _BOTTOM_PT,
        width_pt - _LEFT_PT - _RIGHT_PT,
        height_pt - _BOTTOM_PT - _TOP_PT - 8,
        0,
        n,
        0,
        100,
    )
    d.add(
        label(
            p.x, height_pt - 9, "SpO2 against the target range (% of valid samples)", 7.2, bold=True
        )
    )
    d.add(value_axis(p, [0, 50, 100]))
    d.add(frame_box(p))
    slot = p.width / max(n, 1)
    for k, v in enumerate(trend.visits):
        x = p.x + (k + 0.2) * slot
        d.add(label(x + 0.3 * slot, p.y - 8, f"V{k + 1}", 5.8, "middle", bold=True))
        d.add(label(x + 0.3 * slot, p.y - 14.5, v.started.strftime("%d %b %y"), 5.0, "middle"))
        if v.spo2 is None or not np.isfinite(v.spo2.in_target_pct):
            d.add(label(x + 0.3 * slot, p.y + 4, "no valid SpO2", 5.0, "middle"))
            continue
        y = p.y
        for share, fill in (
            (v.spo2.below_pct, _BELOW),
            (v.spo2.in_target_pct, _INSIDE),
            (v.spo2.above_pct, _ABOVE),
        ):
            h = p.height * share / 100.0
            if h > 0:
                d.add(
                    Rect(
                        x, y, 0.6 * slot, h, fillColor=fill, strokeColor=styles.INK, strokeWidth=0.3
                    )
                )
            y += h
    lx = p.x
    for text, fill in (("below", _BELOW), ("inside", _INSIDE), ("above target", _ABOVE)):
        d.add(
            Rect(lx, height_pt - 19, 7, 5, fillColor=fill, strokeColor=styles.INK, strokeWidth=0.3)
        )
        d.add(label(lx + 9, height_pt - 18.5, text, 6.0))
        lx += 14 + 4.2 * len(text)
    return d


def visit_shade(k: int, n: int) -> styles.SeriesStyle:
    """Line style of visit ``k`` of ``n`` in the overlay: light grey (first) to near black
    (last); every other visit dashed, so neighbours stay apart in print."""
    level = 0.72 - 0.68 * (k / max(n - 1, 1))
    color = styles.colors.Color(level * 0.9, level, level * 1.02 if level < 0.98 else level)
    dash = None if (n - 1 - k) % 2 == 0 else (3.0, 1.2)
    return styles.SeriesStyle(color, 1.5 if k == n - 1 else 1.0, dash)


def breath_overlay(
    trend: Trend,
    width_pt: float,
    height_pt: float,
    normalised: bool,
    span_s: tuple[float, float] | None = None,
) -> Drawing:
    """Averaged breath of every visit overlaid (CO2 in mmHg, or as a fraction of each visit's
    median EtCO2 so the shape can be compared when the level differs); ``span_s`` zooms the
    time axis (seconds from the upstroke start)."""
    d = Drawing(width_pt, height_pt)
    curves = []
    for v in trend.visits:
        a = v.averaged
        scale = v.stats["etco2_mmHg"].median if normalised else 1.0
        curves.append((a.time_s, a.co2_mmHg / scale))
    t_hi = max((float(t[-1]) for t, _ in curves if t.size), default=3.0)
    y_hi = max((float(np.nanmax(y)) for _, y in curves if np.isfinite(y).any()), default=1.0)
    y0, y1, ticks = _nice_range(0.0, y_hi)
    t_lo, t_hi = span_s if span_s is not None else (-0.3, t_hi)
    p = Panel(
        _LEFT_PT,
        _BOTTOM_PT,
        width_pt - _LEFT_PT - _RIGHT_PT,
        height_pt - _BOTTOM_PT - _TOP_PT,
        t_lo,
        t_hi,
        y0,
        y1,
    )
    title = "CO2 / visit's median EtCO2" if normalised else "CO2 (mmHg)"
    if span_s is not None:
        title += f", first {t_hi:g} s: upstroke (phase II) and start of the plateau"
    d.add(label(p.x, height_pt - 9, title, 7.2, bold=True))
    d.add(value_axis(p, ticks))
    d.add(frame_box(p))
    step = 0.5 if t_hi - t_lo > 2.0 else 0.1
    for s in np.arange(0.0, t_hi + 1e-9, step):
        x = float(p.tx(s))
        d.add(Line(x, p.y, x, p.y - 2, strokeColor=styles.AXIS, strokeWidth=0.4))
        d.add(label(x, p.y - 8, f"{round(s, 2):g}", 5.6, "middle"))
    d.add(label(p.x + p.width, p.y - 15.5, "seconds from the start of the upstroke", 5.6, "end"))
    n = len(curves)
    for k, (t, y) in enumerate(curves):
        st = visit_shade(k, n)
        ok = np.isfinite(y) & (t >= t_lo) & (t <= t_hi)
        pts = np.column_stack([p.tx(t[ok]), p.vy(y[ok])]).ravel().tolist()
        if len(pts) >= 4:
            d.add(
                PolyLine(
                    pts,
                    strokeColor=st.color,
                    strokeWidth=st.width_pt,
                    strokeDashArray=list(st.dash) if st.dash else None,
                )
            )
        if span_s is None and k in (0, n - 1) and ok.any():
            j = int(np.argmax(np.where(ok, y, -np.inf)))
            d.add(label(float(p.tx(t[j])) + 2, float(p.vy(y[j])) + 2, f"V{k + 1}", 6.5, bold=True))
    return d


def overlay_legend(trend: Trend, width_pt: float) -> Drawing:
    """Line sample and label of every visit of the overlay, in rows."""
    n = len(trend.visits)
    per_row = 4
    rows = -(-n // per_row)
    d = Drawing(width_pt, 11 * rows + 2)
    col = width_pt / per_row
    for k, v in enumerate(trend.visits):
        r, c = divmod(k, per_row)
        x, y = c * col, 11 * (rows - r - 1) + 4
        st = visit_shade(k, n)
        d.add(
            Line(
                x,
                y + 2,
                x + 22,
                y + 2,
                strokeColor=st.color,
                strokeWidth=st.width_pt,
                strokeDashArray=list(st.dash) if st.dash else None,
            )
        )
        d.add(label(x + 26, y, f"V{k + 1} {v.started.strftime('%d %b %Y')}", 6.5))
    return d
