"""Drawing primitives shared by the trend strips and the close-ups (reportlab vector shapes).

Long series are reduced to a min/max envelope per pixel column before drawing (common practice
in waveform displays): a column keeps its lowest and highest sample, so peaks, troughs and flat
apnoeas stay visible while a 4-hour 100 Hz waveform never turns into 1.4 million path points.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

import numpy as np
from reportlab.graphics.shapes import Group, Line, PolyLine, Rect, String

from sedreport.render import styles


@dataclass(frozen=True)
class Panel:
    """A plotting box in drawing coordinates and the data ranges it shows.

    Attributes
    ----------
    x, y, width, height : float
        Box in points (origin bottom left).
    t0_s, t1_s : float
        Session-clock seconds at the left and right edge.
    y0, y1 : float
        Data values at the bottom and top edge.
    """

    x: float
    y: float
    width: float
    height: float
    t0_s: float
    t1_s: float
    y0: float
    y1: float

    def tx(self, t_s: np.ndarray | float) -> np.ndarray | float:
        """x in points of session-clock seconds."""
        return (
            self.x
            + (np.asarray(t_s, dtype=float) - self.t0_s) / (self.t1_s - self.t0_s) * self.width
        )

    def vy(self, v: np.ndarray | float, lo: float | None = None, hi: float | None = None):
        """y in points of data values (clipped to the box), optionally on another scale."""
        lo = self.y0 if lo is None else lo
        hi = self.y1 if hi is None else hi
        frac = np.clip((np.asarray(v, dtype=float) - lo) / (hi - lo), 0.0, 1.0)
        return self.y + frac * self.height


def split_runs(t_s: np.ndarray, y: np.ndarray, max_gap_s: float) -> list[tuple[int, int]]:
    """Index ranges ``[i, j)`` of finite samples with no time step above ``max_gap_s``."""
    ok = np.isfinite(y) & np.isfinite(t_s)
    if not ok.any():
        return []
    idx = np.flatnonzero(ok)
    breaks = np.flatnonzero((np.diff(idx) > 1) | (np.diff(t_s[idx]) > max_gap_s)) + 1
    starts = np.concatenate(([0], breaks))
    ends = np.concatenate((breaks, [idx.size]))
    return [(int(idx[a]), int(idx[b - 1]) + 1) for a, b in zip(starts, ends, strict=True)]


def envelope(
    t_s: np.ndarray, y: np.ndarray, t0_s: float, t1_s: float, n_cols: int
) -> tuple[np.ndarray, np.ndarray]:
    """Min/max envelope of one gap-free run, at most two points per pixel column.

    Parameters
    ----------
    t_s, y : ndarray
        Increasing times (seconds) and finite values of one run.
    t0_s, t1_s : float
        Time span of the panel, seconds.
    n_cols : int
        Pixel columns across the panel.

    Returns
    -------
    t_s, y : ndarray
        The samples themselves when few enough, else per column the minimum and maximum in
        the order they occur.
    """
    if t_s.size <= 2 * n_cols:
        return t_s, y
    col = np.floor((t_s - t0_s) / (t1_s - t0_s) * n_cols).astype(np.int64)
    starts = np.flatnonzero(np.r_[True, np.diff(col) != 0])
    lengths = np.diff(np.r_[starts, col.size])
    # position of min and max inside each column (reduceat on argmin is not available)
    order_min = np.minimum.reduceat(y, starts)
    order_max = np.maximum.reduceat(y, starts)
    t_mid = t_s[starts] + 0.5 * (t_s[np.minimum(starts + lengths - 1, t_s.size - 1)] - t_s[starts])
    tt = np.repeat(t_mid, 2)
    yy = np.empty(2 * starts.size)
    rising = y[starts] <= y[np.minimum(starts + lengths - 1, y.size - 1)]
    yy[0::2] = np.where(rising, order_min, order_max)
    yy[1::2] = np.where(rising, order_max, order_min)
    return tt, yy


def series_shapes(
    panel: Panel,
    t_s: np.ndarray,
    y: np.ndarray,
    style: styles.SeriesStyle,
    *,
    max_gap_s: float,
    scale: tuple[float, float] | None = None,
    cols_per_pt: float = 1.0,
) -> list[PolyLine]:
    """Polylines of a series inside the panel, broken at NaN and at steps above ``max_gap_s``.

    ``cols_per_pt`` sets the envelope's column width: 1.0 keeps a min and a max per point of
    width (close-ups of the raw waveform), 0.5 per two points (trend strips).
    """
    t_s = np.asarray(t_s, dtype=float)
    y = np.asarray(y, dtype=float)
    lo, hi = np.searchsorted(t_s, [panel.t0_s, panel.t1_s])
    lo, hi = max(int(lo) - 1, 0), min(int(hi) + 1, t_s.size)
    t_win, y_win = t_s[lo:hi], y[lo:hi]
    n_cols = max(int(panel.width * cols_per_pt), 10)
    shapes = []
    for a, b in split_runs(t_win, y_win, max_gap_s):
        tt, yy = envelope(t_win[a:b], y_win[a:b], panel.t0_s, panel.t1_s, n_cols)
        keep = (tt >= panel.t0_s - 1e-9) & (tt <= panel.t1_s + 1e-9)
        tt, yy = tt[keep], yy[keep]
        if tt.size == 0:
            continue
        xs = panel.tx(tt)
        ys = panel.vy(yy, *(scale or (None, None)))
        if tt.size == 1:
            xs = np.array([xs[0] - 0.6, xs[0] + 0.6])
            ys = np.array([ys[0], ys[0]])
        pts = np.column_stack((xs, ys)).ravel().round(2).tolist()
        shapes.append(
            PolyLine(
                pts,
                strokeColor=style.color,
                strokeWidth=style.width_pt,
                strokeDashArray=list(style.dash) if style.dash else None,
                strokeLineJoin=1,
            )
        )
    return shapes


def clock_ticks(
    started: datetime, t0_s: float, t1_s: float, step_s: float
) -> list[tuple[float, datetime]]:
    """Session-clock seconds of whole wall-clock multiples of ``step_s`` inside the span."""
    first = started + timedelta(seconds=t0_s)
    midnight = first.replace(hour=0, minute=0, second=0, microsecond=0)
    since = (first - midnight).total_seconds()
    k = np.ceil(since / step_s - 1e-9)
    ticks = []
    t = t0_s + (k * step_s - since)
    while t <= t1_s + 1e-9:
        ticks.append((float(t), started + timedelta(seconds=float(t))))
        t += step_s
    return ticks


def time_axis(
    panel: Panel,
    started: datetime,
    *,
    tick_s: float,
    label_s: float,
    fmt: str,
    grid_top: float,
) -> Group:
    """Clock-time ticks under the panel, labels every ``label_s``, faint grid lines to the top."""
    g = Group()
    for t, clock in clock_ticks(started, panel.t0_s, panel.t1_s, tick_s):
        x = float(panel.tx(t))
        labelled = (clock.hour * 3600 + clock.minute * 60 + clock.second) % label_s == 0
        g.add(Line(x, panel.y, x, grid_top, strokeColor=styles.GRID, strokeWidth=0.3))
        g.add(Line(x, panel.y - (3 if labelled else 1.5), x, panel.y, strokeColor=styles.AXIS))
        if labelled:
            g.add(
                String(
                    x,
                    panel.y - 9,
                    clock.strftime(fmt),
                    fontName=styles.FONT,
                    fontSize=6.3,
                    textAnchor="middle",
                    fillColor=styles.INK,
                )
            )
    return g


def value_axis(
    panel: Panel,
    ticks: list[float],
    *,
    side: str = "left",
    lo: float | None = None,
    hi: float | None = None,
    grid: bool = True,
) -> Group:
    """Value labels at the left or right edge with optional faint horizontal grid lines."""
    g = Group()
    for v in ticks:
        y = float(panel.vy(v, lo, hi))
        if grid:
            g.add(
                Line(panel.x, y, panel.x + panel.width, y, strokeColor=styles.GRID, strokeWidth=0.3)
            )
        if side == "left":
            g.add(
                String(
                    panel.x - 2,
                    y - 2.2,
                    f"{v:g}",
                    fontName=styles.FONT,
                    fontSize=6,
                    textAnchor="end",
                    fillColor=styles.INK,
                )
            )
        else:
            g.add(
                String(
                    panel.x + panel.width + 2,
                    y - 2.2,
                    f"{v:g}",
                    fontName=styles.FONT,
                    fontSize=6,
                    textAnchor="start",
                    fillColor=styles.PULSE.color,
                )
            )
    return g


def hline(panel: Panel, value: float, style: styles.SeriesStyle) -> Line:
    """A horizontal reference line across the panel at a data value."""
    y = float(panel.vy(value))
    return Line(
        panel.x,
        y,
        panel.x + panel.width,
        y,
        strokeColor=style.color,
        strokeWidth=style.width_pt,
        strokeDashArray=list(style.dash) if style.dash else None,
    )


def frame_box(panel: Panel) -> Rect:
    """Thin outline of the panel."""
    return Rect(
        panel.x,
        panel.y,
        panel.width,
        panel.height,
        fillColor=None,
        strokeColor=styles.AXIS,
        strokeWidth=0.5,
    )


def band(panel: Panel, start_s: float, end_s: float, y_bottom: float, y_top: float) -> Rect | None:
    """Shaded episode band between two times (at least 1.5 pt wide), or None if outside."""
    a, b = max(start_s, panel.t0_s), min(end_s, panel.t1_s)
    if b < a:
        return None
    x0, x1 = float(panel.tx(a)), float(panel.tx(b))
    if x1 - x0 < 1.5:
        x0, x1 = x0 - 0.75, x0 + 0.75
    return Rect(
        x0,
        y_bottom,
        x1 - x0,
        y_top - y_bottom,
        fillColor=styles.BAND_FILL,
        strokeColor=styles.BAND_EDGE,
        strokeWidth=0.3,
    )


def nice_ceiling(value: float, step: float, floor: float) -> float:
    """Smallest multiple of ``step`` at or above ``value``, never below ``floor``."""
    if not np.isfinite(value):
        return floor
    return max(floor, float(np.ceil(value / step) * step))


def label(
    x: float,
    y: float,
    text: str,
    size: float = 6.3,
    anchor: str = "start",
    bold: bool = False,
    color=None,
) -> String:
    """A text label in the standard font."""
    return String(
        x,
        y,
        styles.pdf_text(text),
        fontName=styles.FONT_BOLD if bold else styles.FONT,
        fontSize=size,
        textAnchor=anchor,
        fillColor=color or styles.INK,
    )
