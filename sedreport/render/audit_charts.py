"""Vector charts of the audit document: funnel plot, p-chart and CUSUM (reportlab shapes).

Series are told apart by grey level and line style, so the charts read the same printed in
black and white. Rates are shown per 1,000 sedations.
"""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, PolyLine, Rect, String

from sedreport.audit.report import FUNNEL_LEVELS, Funnel
from sedreport.audit.stats import Cusum, PChart
from sedreport.render import styles

_LEFT, _BOTTOM, _TOP, _RIGHT = 36.0, 26.0, 14.0, 10.0
_LIMIT_DASH = {FUNNEL_LEVELS[0]: (3.0, 2.0), FUNNEL_LEVELS[1]: (1.0, 1.6)}


def nice_ticks(hi: float, n: int = 4) -> list[float]:
    """Round ticks from 0 to at least ``hi``.

    Examples
    --------
    >>> nice_ticks(87.0)
    [0.0, 25.0, 50.0, 75.0, 100.0]
    """
    if not np.isfinite(hi) or hi <= 0:
        return [0.0, 1.0]
    raw = hi / n
    mag = 10 ** np.floor(np.log10(raw))
    step = float(min(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw))
    return [float(round(i * step, 10)) for i in range(int(np.ceil(hi / step)) + 1)]


class _Box:
    """A plotting box: data (x0..x1, y0..y1) onto a rectangle of the drawing, in points."""

    def __init__(self, width: float, height: float, x_range, y_range):
        self.x, self.y = _LEFT, _BOTTOM
        self.w, self.h = width - _LEFT - _RIGHT, height - _BOTTOM - _TOP
        self.x0, self.x1 = x_range
        self.y0, self.y1 = y_range

    def px(self, v):
        return self.x + (np.asarray(v, dtype=float) - self.x0) / (self.x1 - self.x0) * self.w

    def py(self, v):
        frac = (np.asarray(v, dtype=float) - self.y0) / (self.y1 - self.y0)
        return self.y + np.clip(frac, 0.0, 1.0) * self.h


def _text(x, y, text, size=6.0, anchor="start", bold=False, color=None) -> String:
    return String(
        x,
        y,
        styles.pdf_text(text),
        fontName=styles.FONT_BOLD if bold else styles.FONT,
        fontSize=size,
        textAnchor=anchor,
        fillColor=color or styles.INK,
    )


def _axes(box: _Box, y_ticks, y_label: str, x_label: str) -> Group:
    g = Group()
    g.add(
        Rect(box.x, box.y, box.w, box.h, fillColor=None, strokeColor=styles.AXIS, strokeWidth=0.5)
    )
    for t in y_ticks:
        y = float(box.py(t))
        g.add(Line(box.x, y, box.x + box.w, y, strokeColor=styles.GRID, strokeWidth=0.3))
        g.add(_text(box.x - 3, y - 2, f"{t:g}", 5.8, "end"))
    g.add(_text(box.x, box.y + box.h + 4, y_label, 6.2, bold=True))
    g.add(_text(box.x + box.w, box.y - 20, x_label, 6.0, "end"))
    return g


def _line(box: _Box, xs, ys, color, width=0.7, dash=None) -> PolyLine:
    pts = [c for xy in zip(box.px(xs), box.py(ys), strict=True) for c in xy]
    return PolyLine(pts, strokeColor=color, strokeWidth=width, strokeDashArray=dash)


def funnel_chart(f: Funnel, width: float, height: float = 190.0) -> Drawing:
    """Each unit's rate per 1,000 against its number of sessions, with the overall rate and
    the 95 % and 99.8 % funnel limits (Spiegelhalter, Stat Med 2005)."""
    rates = 1000.0 * np.array(f.k) / np.array(f.n)
    # The y axis reaches the outer upper limit at the smallest unit, not at n = 1.
    shown = f.grid_n >= min(f.n) * 0.8
    hi_limit = 1000.0 * float(np.nanmax(f.limits[FUNNEL_LEVELS[1]][1][shown]))
    y_ticks = nice_ticks(max(float(rates.max()), 1000.0 * f.p0 * 2, hi_limit, 1.0) * 1.05)
    box = _Box(width, height, (0.0, float(f.grid_n[-1])), (0.0, y_ticks[-1]))
    d = Drawing(width, height)
    d.add(_axes(box, y_ticks, "per 1,000 sedations", "sessions of the unit"))
    for t in nice_ticks(float(f.grid_n[-1]), 5):
        if t <= f.grid_n[-1]:
            d.add(_text(float(box.px(t)), box.y - 8, f"{t:g}", 5.8, "middle"))
    d.add(_line(box, [0, f.grid_n[-1]], [1000 * f.p0] * 2, styles.INK, 0.9))
    for level in FUNNEL_LEVELS:
        lo, hi = f.limits[level]
        for series in (lo, hi):
            d.add(
                _line(
                    box,
                    f.grid_n[shown],
                    1000.0 * series[shown],
                    styles.AXIS,
                    0.6,
                    _LIMIT_DASH[level],
                )
            )
    outer = set(f.outside[FUNNEL_LEVELS[1]])
    inner = set(f.outside[FUNNEL_LEVELS[0]])
    for g, n, r in zip(f.groups, f.n, rates, strict=True):
        x, y = float(box.px(n)), float(box.py(r))
        filled = styles.INK if g in inner else None
        d.add(
            Circle(
                x,
                y,
                2.6 if g in outer else 2.0,
                fillColor=filled,
                strokeColor=styles.INK,
                strokeWidth=0.6,
            )
        )
        if g in inner:  # only units outside the 95 % limits are named on the chart
            d.add(_text(x + 3.5, y + 2, g, 5.4))
    d.add(
        _legend(
            box,
            [
                ("overall rate", None),
                ("95 % limits", _LIMIT_DASH[0.95]),
                ("99.8 % limits", _LIMIT_DASH[0.998]),
            ],
        )
    )
    return d


def _legend(box: _Box, entries) -> Group:
    g = Group()
    x = box.x + box.w - 150
    y = box.y + box.h + 4
    for name, dash in entries:
        g.add(
            Line(
                x,
                y + 2,
                x + 12,
                y + 2,
                strokeColor=styles.INK,
                strokeWidth=0.7,
                strokeDashArray=dash,
            )
        )
        g.add(_text(x + 14, y, name, 5.6))
        x += 52
    return g


def p_chart_drawing(c: PChart, width: float, height: float = 170.0) -> Drawing:
    """Monthly rate per 1,000 with the centre line and stepped 3-sigma limits."""
    m = len(c.labels)
    xs = np.arange(m, dtype=float)
    top = max(max(c.high), max(c.p), 2 * c.centre, 1e-3) * 1000.0
    y_ticks = nice_ticks(top)
    box = _Box(width, height, (-0.5, m - 0.5), (0.0, y_ticks[-1]))
    d = Drawing(width, height)
    d.add(_axes(box, y_ticks, "per 1,000 sedations, by month", "month"))
    d.add(_line(box, [-0.5, m - 0.5], [1000 * c.centre] * 2, styles.INK, 0.9))
    for lim in (c.low, c.high):
        sx = np.repeat(xs, 2) + np.tile([-0.5, 0.5], m)
        d.add(_line(box, sx, 1000.0 * np.repeat(lim, 2), styles.AXIS, 0.6, (3.0, 2.0)))
    d.add(_line(box, xs, 1000.0 * np.array(c.p), styles.INK, 0.7))
    step = max(1, int(np.ceil(m / 12)))
    for i, (lab, p) in enumerate(zip(c.labels, c.p, strict=True)):
        out = lab in c.out_of_control
        d.add(Circle(float(box.px(i)), float(box.py(1000 * p)), 2.6 if out else 1.8,
                     fillColor=styles.INK if out else None, strokeColor=styles.INK, strokeWidth=0.6))  # fmt: skip
        if i % step == 0:
            d.add(_text(float(box.px(i)), box.y - 8, lab, 5.6, "middle"))
            d.add(
                _text(float(box.px(i)), box.y - 15, f"n={c.n[i]}", 5.0, "middle", color=styles.AXIS)
            )
    return d


def cusum_drawing(c: Cusum, width: float, height: float = 170.0) -> Drawing:
    """The CUSUM path over sessions in time order with the decision limit ``h``."""
    n = len(c.path)
    y_ticks = nice_ticks(max(float(c.path.max()) if n else 0.0, c.threshold) * 1.05)
    box = _Box(width, height, (0.0, max(n, 1)), (0.0, y_ticks[-1]))
    d = Drawing(width, height)
    d.add(_axes(box, y_ticks, "CUSUM (log-likelihood ratio)", "sessions in time order"))
    for t in nice_ticks(float(max(n, 1)), 5):
        if t <= n:
            d.add(_text(float(box.px(t)), box.y - 8, f"{t:g}", 5.8, "middle"))
    d.add(_line(box, [0, max(n, 1)], [c.threshold] * 2, styles.AXIS, 0.8, (3.0, 2.0)))
    d.add(_text(box.x + 3, float(box.py(c.threshold)) + 2, f"h = {c.threshold:g}", 5.6))
    if n:
        d.add(_line(box, np.arange(1, n + 1), c.path, styles.INK, 0.7))
    for i in c.signals:
        d.add(Circle(float(box.px(i + 1)), float(box.py(c.path[i])), 2.4, fillColor=styles.INK, strokeColor=styles.INK))  # fmt: skip
    return d
