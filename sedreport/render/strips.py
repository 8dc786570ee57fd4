"""Time-aligned trend strips: EtCO2 with FiCO2, respiratory rate, SpO2, blood pressure with
heart rate (:mod:`sedreport.render.bp_strip`).

One row covers a fixed number of minutes on one shared clock axis; long sessions continue in
further rows. Dose marks (filled triangles) and intervention marks (open diamonds with a short
code) run in two lanes above the strips; episodes are shaded bands labelled E1, E2...
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from reportlab.graphics.shapes import Drawing, Group, Rect

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.bp_strip import SCALE_FLOOR, bp_hr_strip, bp_scale_top
from sedreport.render.events import rr_for_strip, rr_window_text
from sedreport.render.marks import LANE_PT, lane_marks
from sedreport.render.plot import (
    Panel,
    band,
    frame_box,
    hline,
    label,
    nice_ceiling,
    series_shapes,
    time_axis,
    value_axis,
)

#: Minutes per row, tried in order; the first giving at most MAX_ROWS rows is used.
ROW_MINUTES: tuple[int, ...] = (10, 15, 20, 30, 60, 120, 240)
MAX_ROWS: int = 18
#: Envelope columns per point of strip width (one min/max pair per 2 pt).
TREND_COLS_PER_PT: float = 0.5

LEFT_PT, RIGHT_PT = 34.0, 26.0
STRIP_GAP_PT = 8.0
STRIP_HEIGHTS_PT = (54.0, 34.0, 44.0, 40.0)  # EtCO2/FiCO2, RR, SpO2, BP/HR
AXIS_PT = 12.0


@dataclass(frozen=True)
class RowPlan:
    """How the session is cut into rows: span start, minutes per row, number of rows."""

    t0_s: float
    minutes_per_row: int
    n_rows: int

    def row_span(self, i: int) -> tuple[float, float]:
        """Start and end seconds of row ``i``."""
        start = self.t0_s + i * self.minutes_per_row * 60.0
        return start, start + self.minutes_per_row * 60.0


def plan_rows(analysis: Analysis) -> RowPlan:
    """Cut the data span into rows starting at a whole clock minute."""
    start_s, end_s = data_span(analysis)
    clock = analysis.session.clock_time(start_s)
    start_s -= clock.second + clock.microsecond / 1e6
    duration_s = max(end_s - start_s, 1.0)
    for minutes in ROW_MINUTES:
        n_rows = int(np.ceil(duration_s / (minutes * 60.0)))
        if n_rows <= MAX_ROWS:
            return RowPlan(start_s, minutes, max(n_rows, 1))
    minutes = ROW_MINUTES[-1]
    return RowPlan(start_s, minutes, int(np.ceil(duration_s / (minutes * 60.0))))


def data_span(analysis: Analysis) -> tuple[float, float]:
    """Earliest and latest time of any stream, dose, event or episode (seconds)."""
    lo, hi = analysis.session.span_s()
    times = [lo, hi]
    s = analysis.session
    if s.co2 is not None and s.co2.time_s.size:
        times += [float(s.co2.time_s[0]), float(s.co2.time_s[-1])]
    if s.spo2 is not None and s.spo2.time_s.size:
        times += [float(s.spo2.time_s[0]), float(s.spo2.time_s[-1])]
    for ep in analysis.episodes:
        times += [ep.start_s, ep.end_s]
    if lo == hi == 0.0 and len(times) > 2:
        times = times[2:]
    return min(times), max(times)


def row_height() -> float:
    """Height in points of one row drawing."""
    return 3 * LANE_PT + sum(STRIP_HEIGHTS_PT) + 3 * STRIP_GAP_PT + AXIS_PT


def scales(analysis: Analysis) -> dict[str, float]:
    """Value ranges shared by every row, so rows compare at a glance."""
    tr = analysis.trends
    co2_top = nice_ceiling(_finite_max(tr.etco2_mmHg), 10, 60)
    rr_top = nice_ceiling(_finite_max(tr.rr_per_min), 10, 40)
    spo2_bottom = 70.0
    low = _finite_min(tr.spo2_pct)
    if np.isfinite(low) and low < 72:
        spo2_bottom = max(0.0, float(np.floor((low - 2) / 10) * 10))
    return {
        "co2_top": co2_top,
        "rr_top": rr_top,
        "spo2_bottom": spo2_bottom,
        "bp_top": bp_scale_top(analysis),
    }


def _finite_max(a: np.ndarray) -> float:
    a = np.asarray(a, dtype=float)
    a = a[np.isfinite(a)]
    return float(a.max()) if a.size else float("nan")


def _finite_min(a: np.ndarray) -> float:
    a = np.asarray(a, dtype=float)
    a = a[np.isfinite(a)]
    return float(a.min()) if a.size else float("nan")


def trend_row(
    analysis: Analysis, t0_s: float, t1_s: float, width_pt: float, spo2_line_pct: float
) -> tuple[Drawing, list[str]]:
    """One row of the three strips between ``t0_s`` and ``t1_s`` as a vector Drawing.

    Returns
    -------
    drawing : Drawing
    unlabelled : list of str
        Ids of episodes whose band is drawn but whose label was left out (crowded).
    """
    height = row_height()
    d = Drawing(width_pt, height)
    sc = scales(analysis)
    plot_w = width_pt - LEFT_PT - RIGHT_PT
    y = AXIS_PT
    h_co2, h_rr, h_spo2, h_bp = STRIP_HEIGHTS_PT
    bp = Panel(LEFT_PT, y, plot_w, h_bp, t0_s, t1_s, SCALE_FLOOR, sc["bp_top"])
    y += h_bp + STRIP_GAP_PT
    spo2 = Panel(LEFT_PT, y, plot_w, h_spo2, t0_s, t1_s, sc["spo2_bottom"], 100.0)
    y += h_spo2 + STRIP_GAP_PT
    rr = Panel(LEFT_PT, y, plot_w, h_rr, t0_s, t1_s, 0.0, sc["rr_top"])
    y += h_rr + STRIP_GAP_PT
    co2 = Panel(LEFT_PT, y, plot_w, h_co2, t0_s, t1_s, 0.0, sc["co2_top"])
    top = co2.y + co2.height
    bands, unlabelled = _episode_bands(analysis, co2, bp.y, top)
    d.add(bands)
    d.add(lane_marks(analysis, co2, top, bp.y, RIGHT_PT))
    d.add(
        time_axis(
            bp,
            analysis.session.started,
            tick_s=60.0,
            label_s=300.0 if t1_s - t0_s > 900 else 120.0,
            fmt="%H:%M",
            grid_top=top,
        )
    )
    d.add(_co2_strip(analysis, co2))
    d.add(_rr_strip(analysis, rr))
    d.add(_spo2_strip(analysis, spo2, spo2_line_pct))
    d.add(bp_hr_strip(analysis, bp))
    return d, unlabelled


def _co2_strip(analysis: Analysis, p: Panel) -> Group:
    g = Group()
    step = 20.0 if p.y1 > 60 else 10.0
    g.add(value_axis(p, list(np.arange(0, p.y1 + 1, step))))
    g.add(label(4, p.y + p.height / 2 + 3, "CO2", 6.3, bold=True))
    g.add(label(4, p.y + p.height / 2 - 5, "mmHg", 5.5))
    tr = analysis.trends
    if analysis.session.co2 is None:
        g.add(label(p.x + 6, p.y + p.height / 2, "no CO2 waveform in this session", 7))
    else:
        for values, style in ((tr.fico2_mmHg, styles.FICO2), (tr.etco2_mmHg, styles.ETCO2)):
            for shp in series_shapes(
                p,
                tr.breath_time_s,
                values,
                style,
                max_gap_s=analysis.criteria.apnoea.min_duration_s,  # a pause that is apnoea breaks it
                cols_per_pt=TREND_COLS_PER_PT,
            ):
                g.add(shp)
        g.add(co2_finding_marks(analysis, p))
    g.add(frame_box(p))
    return g


#: Words on the CO2 strip for the CO2 findings that are not about ventilation.
CO2_FINDING_WORDS: dict[str, str] = {
    "low_amplitude": "low amplitude",
    "co2_signal_absent": "no CO2 signal",
}


def co2_finding_marks(analysis: Analysis, p: Panel) -> Group:
    """A bar along the foot of the CO2 strip for each low-amplitude or absent-signal stretch,
    named where it is wide enough."""
    g = Group()
    for ep in analysis.episodes:
        text = CO2_FINDING_WORDS.get(ep.kind)
        if text is None:
            continue
        a, b = max(ep.start_s, p.t0_s), min(ep.end_s, p.t1_s)
        if b <= a:
            continue
        x0, x1 = float(p.tx(a)), float(p.tx(b))
        g.add(
            Rect(x0, p.y + 0.5, max(x1 - x0, 1.5), 3.0, fillColor=styles.CO2_FINDING_FILL,
                 strokeColor=None)
        )  # fmt: skip
        if x1 - x0 >= 5.0 * len(text) * 0.5:
            g.add(label(x0 + 1.0, p.y + 5.0, text, 5.0))
    return g


def _rr_strip(analysis: Analysis, p: Panel) -> Group:
    g = Group()
    g.add(value_axis(p, list(np.arange(0, p.y1 + 1, 10 if p.y1 <= 40 else 20))))
    g.add(label(4, p.y + p.height / 2 + 3, "RR", 6.3, bold=True))
    g.add(label(4, p.y + p.height / 2 - 5, "/min", 5.5))
    if analysis.session.co2 is None:
        g.add(label(p.x + 6, p.y + p.height / 2, "no rate: no CO2 waveform", 7))
    else:
        rr_t, rr = rr_for_strip(analysis)
        for shp in series_shapes(
            p, rr_t, rr, styles.RR, max_gap_s=1.5, cols_per_pt=TREND_COLS_PER_PT
        ):
            g.add(shp)
        g.add(label(p.x + 3, p.y + p.height - 7, rr_window_text(analysis), 5.0))
    g.add(frame_box(p))
    return g


def _spo2_strip(analysis: Analysis, p: Panel, spo2_line_pct: float) -> Group:
    g = Group()
    step = 10.0 if 100 - p.y0 <= 40 else 20.0
    g.add(value_axis(p, list(np.arange(100, p.y0 - 0.1, -step))))
    g.add(label(4, p.y + p.height / 2 + 3, "SpO2", 6.3, bold=True))
    g.add(label(4, p.y + p.height / 2 - 5, "%", 5.5))
    if analysis.session.spo2 is None:
        g.add(label(p.x + 6, p.y + p.height / 2, "no oximetry file in this session", 7))
        g.add(frame_box(p))
        return g
    g.add(hline(p, spo2_line_pct, styles.REFERENCE))
    tr = analysis.trends
    for shp in series_shapes(
        p,
        tr.spo2_time_s,
        tr.spo2_pct,
        styles.SPO2,
        max_gap_s=analysis.quality.spo2_gap_s,
        cols_per_pt=TREND_COLS_PER_PT,
    ):
        g.add(shp)
    g.add(frame_box(p))
    return g


def _episode_bands(
    analysis: Analysis, p: Panel, y_bottom: float, y_top: float
) -> tuple[Group, list[str]]:
    """Bands across all strips; labels above (or just inside) the band, ids left unlabelled."""
    g = Group()
    unlabelled: list[str] = []
    last_x_per_level = [-1e9, -1e9]
    for ep in analysis.episodes:
        shp = band(p, ep.start_s, ep.end_s, y_bottom, y_top)
        if shp is None:
            continue
        g.add(shp)
        x = float(p.tx(max(ep.start_s, p.t0_s)))
        level = 0 if x - last_x_per_level[0] > 14 else 1
        if level == 1 and x - last_x_per_level[1] <= 14:
            unlabelled.append(ep.id)  # both label slots taken: the band stays, named below
            continue
        last_x_per_level[level] = x
        label_y = y_top + 2.5 if level == 0 else y_top - 7.0
        g.add(label(x + 0.8, label_y, ep.id, 5.8, bold=True))
    return g, unlabelled
