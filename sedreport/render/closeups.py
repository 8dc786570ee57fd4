"""Episode close-ups: the raw CO2 waveform around an episode with the SpO2 trace beneath.

The window runs from :data:`PRE_S` before onset to :data:`POST_S` after the end, so a reviewer
sees the breaths themselves. An episode longer than :data:`MAX_SINGLE_S` is shown as two panels
side by side (its onset and its end) with the cut stated in the caption.
"""

from __future__ import annotations

import numpy as np
from reportlab.graphics.shapes import Drawing, Group

from sedreport.analysis import Analysis
from sedreport.episodes.model import SEVERITY_TIERS, Episode
from sedreport.render import styles
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

PRE_S: float = 30.0
POST_S: float = 30.0
#: Longest episode shown in a single window (s); longer ones get onset and end panels.
MAX_SINGLE_S: float = 240.0
#: Seconds of a long episode shown after its onset and before its end.
SPLIT_PART_S: float = 90.0
#: At most this many close-ups; the most severe and longest are kept (the rest are named).
MAX_CLOSEUPS: int = 24

LEFT_PT, RIGHT_PT = 34.0, 8.0
CO2_PT, SPO2_PT, GAP_PT, AXIS_PT = 62.0, 36.0, 8.0, 12.0


def choose_closeups(episodes: tuple[Episode, ...]) -> tuple[list[Episode], list[Episode]]:
    """Episodes to show (in onset order) and those left out when there are too many."""
    if len(episodes) <= MAX_CLOSEUPS:
        return list(episodes), []
    rank = sorted(
        episodes,
        key=lambda e: (
            -SEVERITY_TIERS.index(e.severity) if e.severity in SEVERITY_TIERS else 0,
            -e.duration_s,
            e.start_s,
        ),
    )
    keep = {e.id for e in rank[:MAX_CLOSEUPS]}
    shown = [e for e in episodes if e.id in keep]
    left = [e for e in episodes if e.id not in keep]
    return shown, left


def windows(ep: Episode) -> list[tuple[float, float]]:
    """Time windows (s) of the close-up: one, or onset and end for a long episode."""
    if ep.duration_s <= MAX_SINGLE_S:
        return [(ep.start_s - PRE_S, ep.end_s + POST_S)]
    return [
        (ep.start_s - PRE_S, ep.start_s + SPLIT_PART_S),
        (ep.end_s - SPLIT_PART_S, ep.end_s + POST_S),
    ]


def window_note(ep: Episode, clock) -> str:
    """Caption text stating the window shown and any cut."""
    wins = windows(ep)
    if len(wins) == 1:
        a, b = wins[0]
        return f"window {clock(a)} to {clock(b)} ({PRE_S:g} s before onset to {POST_S:g} s after the end)"
    (a1, b1), (a2, b2) = wins
    return (
        f"episode longer than {MAX_SINGLE_S:g} s: left {clock(a1)} to {clock(b1)} (onset), "
        f"right {clock(a2)} to {clock(b2)} (end); the middle "
        f"{max(a2 - b1, 0):.0f} s is in the trend strips"
    )


def closeup_height() -> float:
    """Height in points of one close-up drawing (panels, clock axis, label and mark lanes)."""
    return CO2_PT + SPO2_PT + GAP_PT + AXIS_PT + 3 * LANE_PT + 2


def closeup(analysis: Analysis, ep: Episode, width_pt: float, spo2_line_pct: float) -> Drawing:
    """The close-up drawing of one episode."""
    d = Drawing(width_pt, closeup_height())
    wins = windows(ep)
    gap = 34.0 if len(wins) == 2 else 0.0
    panel_w = (width_pt - LEFT_PT - RIGHT_PT - gap * (len(wins) - 1)) / len(wins)
    co2_top, spo2_bottom = _ranges(analysis, wins)
    for i, (a, b) in enumerate(wins):
        x = LEFT_PT + i * (panel_w + gap)
        spo2 = Panel(x, AXIS_PT, panel_w, SPO2_PT, a, b, spo2_bottom, 100.0)
        co2 = Panel(x, AXIS_PT + SPO2_PT + GAP_PT, panel_w, CO2_PT, a, b, 0.0, co2_top)
        d.add(_one_window(analysis, ep, co2, spo2, spo2_line_pct, with_labels=i == 0))
    return d


def _window_values(t_s: np.ndarray, v: np.ndarray, wins: list[tuple[float, float]]) -> np.ndarray:
    """Finite values of a series inside the windows."""
    parts = []
    for a, b in wins:
        lo, hi = np.searchsorted(t_s, [a, b])
        parts.append(v[lo:hi])
    out = np.concatenate(parts) if parts else np.zeros(0)
    return out[np.isfinite(out)]


def _ranges(analysis: Analysis, wins: list[tuple[float, float]]) -> tuple[float, float]:
    """CO2 top (mmHg) and SpO2 bottom (%) shared by the panels of one close-up."""
    s, tr = analysis.session, analysis.trends
    co2 = _window_values(s.co2.time_s, s.co2.co2_mmHg, wins) if s.co2 is not None else []
    spo2 = _window_values(tr.spo2_time_s, tr.spo2_pct, wins)
    top = float(np.max(co2)) if len(co2) else float("nan")
    spo2_bottom = 80.0
    if spo2.size and spo2.min() < 82:
        spo2_bottom = max(0.0, float(np.floor((spo2.min() - 2) / 10) * 10))
    return nice_ceiling(top, 10, 50), spo2_bottom


def _one_window(
    analysis: Analysis,
    ep: Episode,
    co2: Panel,
    spo2: Panel,
    spo2_line_pct: float,
    with_labels: bool,
) -> Group:
    g = Group()
    s = analysis.session
    shp = band(co2, ep.start_s, ep.end_s, spo2.y, co2.y + co2.height)
    if shp is not None:
        g.add(shp)
    span = co2.t1_s - co2.t0_s
    g.add(
        time_axis(
            spo2,
            s.started,
            tick_s=10.0 if span <= 200 else 30.0,
            label_s=30.0 if span <= 200 else 60.0,
            fmt="%H:%M:%S",
            grid_top=co2.y + co2.height,
        )
    )
    g.add(value_axis(co2, list(np.arange(0, co2.y1 + 1, 20 if co2.y1 > 60 else 10))))
    g.add(value_axis(spo2, list(np.arange(100, spo2.y0 - 0.1, -10 if spo2.y0 >= 60 else -20))))
    if with_labels:
        g.add(label(3, co2.y + co2.height / 2 + 3, "CO2", 6.3, bold=True))
        g.add(label(3, co2.y + co2.height / 2 - 5, "mmHg", 5.5))
        g.add(label(3, spo2.y + spo2.height / 2 + 3, "SpO2", 6.3, bold=True))
        g.add(label(3, spo2.y + spo2.height / 2 - 5, "%", 5.5))
    if s.co2 is not None:
        for line in series_shapes(
            co2, s.co2.time_s, s.co2.co2_mmHg, styles.CO2_WAVE, max_gap_s=analysis.quality.co2_gap_s
        ):
            g.add(line)
    else:
        g.add(label(co2.x + 6, co2.y + co2.height / 2, "no CO2 waveform in this session", 7))
    tr = analysis.trends
    if s.spo2 is not None:
        g.add(hline(spo2, spo2_line_pct, styles.REFERENCE))
        for line in series_shapes(
            spo2, tr.spo2_time_s, tr.spo2_pct, styles.SPO2, max_gap_s=analysis.quality.spo2_gap_s
        ):
            g.add(line)
    else:
        g.add(label(spo2.x + 6, spo2.y + spo2.height / 2, "no oximetry file in this session", 7))
    g.add(frame_box(co2))
    g.add(frame_box(spo2))
    top = co2.y + co2.height
    g.add(lane_marks(analysis, co2, top, spo2.y, RIGHT_PT, names=with_labels))
    g.add(label(float(co2.tx(max(ep.start_s, co2.t0_s))) + 0.8, top + 2.5, ep.id, 5.8, bold=True))
    return g
