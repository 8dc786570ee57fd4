"""The sloped-plateau close-up inset: the patient's averaged baseline breath and an averaged
breath from the episode on one axis, so the shape the detector used is visible."""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Drawing
from reportlab.lib import colors

from sedreport.analysis import Analysis
from sedreport.episodes.model import Episode
from sedreport.episodes.shape import averaged_breath, typical_length_s
from sedreport.render import styles
from sedreport.render.plot import Panel, frame_box, label, nice_ceiling, series_shapes, value_axis

HEIGHT_PT, LEFT_PT, AXIS_PT = 78.0, 34.0, 12.0
#: The baseline breath: a grey dashed line (the episode's is the waveform colour).
BASELINE = styles.SeriesStyle(colors.Color(0.45, 0.45, 0.45), 0.9, (2.5, 1.5))


def shape_overlay(analysis: Analysis, ep: Episode, width_pt: float) -> Drawing | None:
    """Averaged baseline and episode breaths for a sloped-plateau episode (None otherwise, or
    without a CO2 waveform)."""
    co2 = analysis.session.co2
    if ep.kind != "sloped_plateau" or co2 is None:
        return None
    lo, hi = analysis.baseline.window_s
    b = analysis.breaths
    length = max(typical_length_s(b, lo, hi), typical_length_s(b, ep.start_s, ep.end_s))
    x, base, n_base = averaged_breath(co2, b, lo, hi, length)
    _, epi, n_ep = averaged_breath(co2, b, ep.start_s, ep.end_s, length)
    top = nice_ceiling(float(np.nanmax(np.r_[base, epi, 10.0])), 10, 60)
    plot_w = min(width_pt * 0.45, 220.0) - LEFT_PT
    d = Drawing(width_pt, HEIGHT_PT + AXIS_PT + 10)
    p = Panel(LEFT_PT, AXIS_PT, plot_w, HEIGHT_PT, 0.0, length, 0.0, top)
    d.add(value_axis(p, list(np.arange(0, top + 1, 10 if top <= 60 else 20))))
    for series, style in ((base, BASELINE), (epi, styles.CO2_WAVE)):
        for shp in series_shapes(p, x, series, style, max_gap_s=1.0):
            d.add(shp)
    d.add(frame_box(p))
    d.add(label(4, AXIS_PT + HEIGHT_PT / 2, "CO2", 6.3, bold=True))
    d.add(label(4, AXIS_PT + HEIGHT_PT / 2 - 8, "mmHg", 5.5))
    d.add(label(LEFT_PT, 2, f"0 to {length:.1f} s from the upstroke onset", 5.5))
    tx = LEFT_PT + plot_w + 8
    d.add(label(tx, AXIS_PT + HEIGHT_PT - 8, "Averaged breaths", 6.3, bold=True))
    d.add(label(tx, AXIS_PT + HEIGHT_PT - 20, f"dashed grey: baseline ({n_base} breaths)", 6.0))
    d.add(label(tx, AXIS_PT + HEIGHT_PT - 30, f"solid: this episode ({n_ep} breaths)", 6.0))
    d.add(label(tx, AXIS_PT + HEIGHT_PT - 42, "a steeper plateau (phase III) and a slower", 6.0))
    d.add(label(tx, AXIS_PT + HEIGHT_PT - 51, "upstroke than baseline made this finding", 6.0))
    return d
