"""The observations table of the record: the values a nurse charts at a fixed interval.

One row per mark at the charting interval (every 5 min by default; marks on whole multiples
of the interval on the session's clock, inside the recorded span). Each value is computed from
the recorded data by a stated rule (printed under the table):

- heart rate, SpO2, respiratory rate, EtCO2: the median over the minute before the mark
  (``(mark - 60 s, mark]``) of the artefact-cleaned oximeter trend, the 1 s respiratory-rate
  trend and the per-breath EtCO2; blank when there is no value in that minute;
- blood pressure: the cuff reading nearest the mark within the interval before it
  (``(mark - interval, mark]``; a chart records what was measured by then), else blank;
- depth score: the last ``depth_score`` at or before the mark, with its scale;
- oxygen flow: the last flow at or before the mark (``session.yaml`` ``oxygen`` from the
  start, then each ``oxygen_flow`` / ``oxygen_increase`` event).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from reportlab.platypus import Paragraph, Table, TableStyle

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.fmt import clock_text
from sedreport.render.glossary import TermMark, standard_terms
from sedreport.render.styles import para_text

#: Charting interval used when none is given, minutes (5-minute observations; common practice).
OBS_INTERVAL_MIN: float = 5.0
#: Window before each mark over which continuous values are summarised, seconds.
MEDIAN_WINDOW_S: float = 60.0
#: Column headings with their units, in table order.
HEADINGS: tuple[str, ...] = (
    "Time",
    "BP mmHg",
    "HR /min",
    "SpO2 %",
    "RR /min",
    "EtCO2 mmHg",
    "Depth score",
    "O2 L/min",
)


@dataclass(frozen=True)
class Observation:
    """The charted values at one mark (None = blank: no data by the rule)."""

    time_s: float
    systolic_mmHg: float | None
    diastolic_mmHg: float | None
    heart_rate_bpm: float | None
    spo2_pct: float | None
    rr_per_min: float | None
    etco2_mmHg: float | None
    depth_score: float | None
    depth_scale: str
    oxygen_l_min: float | None


def mark_times_s(analysis: Analysis, interval_min: float) -> np.ndarray:
    """Marks on whole multiples of the interval on the session's clock, inside the span of the
    recorded streams (CO2, SpO2, BP), session-clock seconds."""
    s = analysis.session
    spans = [
        (float(x.time_s[0]), float(x.time_s[-1]))
        for x in (s.co2, s.spo2, s.bp)
        if x is not None and x.time_s.size
    ]
    if not spans:
        return np.array([])
    lo, hi = min(a for a, _ in spans), max(b for _, b in spans)
    step_s = interval_min * 60.0
    midnight = s.started.replace(hour=0, minute=0, second=0, microsecond=0)
    offset_s = (s.started - midnight).total_seconds()  # clock seconds since midnight at t = 0
    first = math.ceil((lo + offset_s) / step_s) * step_s - offset_s
    return np.arange(first, hi + 1e-9, step_s)


def _median_before(t_s: np.ndarray, values: np.ndarray, mark_s: float) -> float | None:
    t = np.asarray(t_s, dtype=float)
    v = np.asarray(values, dtype=float)
    a, b = np.searchsorted(t, [mark_s - MEDIAN_WINDOW_S, mark_s], side="right")
    window = v[a:b]
    window = window[np.isfinite(window)]
    return float(np.median(window)) if window.size else None


def _last_at_or_before(steps: list[tuple[float, float | None, str]], mark_s: float):
    value, note = None, ""
    for t, v, n in steps:
        if t <= mark_s:
            value, note = v, n
    return value, note


def observations(analysis: Analysis, interval_min: float = OBS_INTERVAL_MIN) -> list[Observation]:
    """The observation rows of a session (rules in the module docstring).

    Parameters
    ----------
    analysis : Analysis
    interval_min : float
        Charting interval, minutes (> 0).
    """
    if not (math.isfinite(interval_min) and interval_min > 0):
        raise ValueError(
            f"charting interval must be a positive number of minutes, got {interval_min!r}"
        )
    s, tr = analysis.session, analysis.trends
    depth = [(e.time_s, e.value, e.note) for e in s.events if e.event == "depth_score"]
    oxygen = [(-math.inf if t is None else t, f, "") for t, f, _ in s.oxygen_course()]
    step_s = interval_min * 60.0
    out = []
    for mark in mark_times_s(analysis, interval_min):
        sys_, dia = None, None
        if s.bp is not None:
            sel = np.flatnonzero((s.bp.time_s > mark - step_s) & (s.bp.time_s <= mark))
            if sel.size:
                k = sel[-1]  # nearest the mark: the latest at or before it
                sys_, dia = float(s.bp.systolic_mmHg[k]), float(s.bp.diastolic_mmHg[k])
        score, scale = _last_at_or_before(depth, mark)
        flow, _ = _last_at_or_before(oxygen, mark)
        out.append(
            Observation(
                time_s=float(mark),
                systolic_mmHg=sys_,
                diastolic_mmHg=dia,
                heart_rate_bpm=_median_before(tr.spo2_time_s, tr.pulse_bpm, mark),
                spo2_pct=_median_before(tr.spo2_time_s, tr.spo2_pct, mark),
                rr_per_min=_median_before(tr.rr_time_s, tr.rr_per_min, mark),
                etco2_mmHg=_median_before(tr.breath_time_s, tr.etco2_mmHg, mark),
                depth_score=score,
                depth_scale=scale,
                oxygen_l_min=flow,
            )
        )
    return out


def _num(value: float | None, digits: int = 0) -> str:
    return "" if value is None else f"{value:.{digits}f}"


def observation_cells(analysis: Analysis, row: Observation) -> list[str]:
    """The texts of one table row, in :data:`HEADINGS` order."""
    bp = "" if row.systolic_mmHg is None else f"{row.systolic_mmHg:.0f}/{row.diastolic_mmHg:.0f}"
    depth = "" if row.depth_score is None else f"{row.depth_score:g} {row.depth_scale}".strip()
    return [
        clock_text(analysis.session, row.time_s, seconds=False),
        bp,
        _num(row.heart_rate_bpm),
        _num(row.spo2_pct),
        _num(row.rr_per_min),
        _num(row.etco2_mmHg),
        depth,
        "" if row.oxygen_l_min is None else f"{row.oxygen_l_min:g}",
    ]


def rule_text(interval_min: float) -> str:
    """The rule printed under the table."""
    return (
        f"One row every {interval_min:g} min on the clock. HR, SpO2, RR and EtCO2: median over "
        f"the minute before the time shown (artefact-marked SpO2/pulse readings left out). BP: "
        f"the cuff reading nearest the time shown within the {interval_min:g} min before it "
        "(systolic/diastolic), else blank. Depth score and O2 flow: the last recorded at or "
        "before the time shown. Blank: nothing recorded by that rule."
    )


def observation_flowables(
    analysis: Analysis, width_pt: float, interval_min: float = OBS_INTERVAL_MIN
) -> list:
    """Heading, table and rule; an explaining sentence when there is nothing to chart."""
    out: list = [Paragraph("Observations", styles.H1)]
    rows = observations(analysis, interval_min)
    if not rows:
        out.append(Paragraph("No recorded stream to chart observations from.", styles.BODY))
        return out
    cell = styles.CELL
    data = [[Paragraph(para_text(h), styles.CELL_BOLD) for h in HEADINGS]]
    terms = standard_terms("EtCO2", "SpO2", "RR")
    for r in rows:
        time_cell, *rest = observation_cells(analysis, r)
        # a mark in every row: a table over several pages explains its abbreviations on each
        first = [Paragraph(para_text(time_cell), cell), TermMark(terms)]
        data.append([first, *(Paragraph(para_text(c), cell) for c in rest)])
    fractions = [1.0, 1.2, 0.9, 0.9, 0.9, 1.1, 1.5, 0.9]
    widths = [width_pt * f / sum(fractions) for f in fractions]
    table = Table(data, colWidths=widths, repeatRows=1, hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("BACKGROUND", (0, 0), (-1, 0), styles.HEAD_FILL),
                ("LINEBELOW", (0, 0), (-1, -1), 0.3, styles.GRID),
                ("LINEBELOW", (0, 0), (-1, 0), 0.6, styles.AXIS),
                ("TOPPADDING", (0, 0), (-1, -1), 1.0),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.0),
                ("LEFTPADDING", (0, 0), (-1, -1), 2),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    out += [TermMark(terms), table]
    out += [Paragraph(para_text(rule_text(interval_min)), styles.SMALL), TermMark(terms)]
    return out
