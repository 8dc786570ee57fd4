"""Dose and intervention marks of the trend strips, in two lanes above the strips.

Boluses are filled triangles, infusion rate lines open triangles with a bar while the infusion
runs, interventions open diamonds with a short code; a faint vertical line carries each mark
down through the strips. Every dose mark is labelled with its key (``D1``, ``D2``...), the same
key as its row of the dose table, so a crowded label never names the wrong dose: crowded keys
are joined (``D2, D3``) rather than overprinted. Depth scores, recovery scores and oxygen-flow
steps are small open squares in the actions lane (``DS 3``, ``RS 9``, ``O2 2``); procedure start
and end are solid vertical lines through the strips, dividing sedation, procedure and recovery.
"""

from __future__ import annotations

from reportlab.graphics.shapes import Group, Line, Polygon

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.plot import Panel, label

#: Lane height in points (one lane for doses, one for interventions).
LANE_PT = 10.0

#: Codes of the logged values marked in the actions lane, before the value (``DS 3``).
VALUE_CODES: dict[str, str] = {
    "depth_score": "DS",
    "recovery_score": "RS",
    "oxygen_flow": "O2",
}
#: Words beside the procedure lines.
PROCEDURE_WORDS: dict[str, str] = {
    "procedure_start": "procedure start",
    "procedure_end": "procedure end",
}


def dose_keys(session) -> dict:
    """Key of every dose line, ``D1``, ``D2``... in time order (file line breaks ties).

    The same keys label the marks of the strips and close-ups and the rows of the dose table.

    Examples
    --------
    >>> from datetime import datetime, timezone
    >>> from sedreport.session import Dose, Session
    >>> a = Dose(60.0, "propofol", 40, "mg", "iv", "bolus", 40.0, 0.0, 3)
    >>> b = Dose(0.0, "fentanyl", 50, "mcg", "iv", "bolus", 0.05, 0.0, 2)
    >>> s = Session("K", datetime(2026, 1, 1, tzinfo=timezone.utc), doses=(a, b))
    >>> [dose_keys(s)[d] for d in (a, b)]
    ['D2', 'D1']
    """
    ordered = sorted(session.doses, key=lambda d: (d.time_s, d.line))
    return {d: f"D{i}" for i, d in enumerate(ordered, start=1)}


def lane_marks(
    analysis: Analysis,
    p: Panel,
    top: float,
    bottom: float,
    right_pt: float = 26.0,
    names: bool = True,
) -> Group:
    """Dose lane (triangles, infusion bars) and intervention lane (diamonds) above a panel.

    The lanes start one :data:`LANE_PT` above ``top`` (the lane just above ``top`` holds the
    episode labels); vertical hairlines run from ``bottom`` to ``top``.
    """
    g = Group()
    dose_y = top + LANE_PT + 2
    int_y = top + 2 * LANE_PT + 2
    if names:
        g.add(label(4, dose_y + 1, "doses", 5.5))
        g.add(label(4, int_y + 1, "actions", 5.5))
    right_edge = p.x + p.width + right_pt
    _dose_marks(analysis, p, g, dose_y, bottom, top, right_edge)
    _intervention_marks(analysis, p, g, int_y, bottom, top, right_edge)
    _procedure_lines(analysis, p, g, bottom, top)
    return g


def _procedure_lines(analysis, p: Panel, g: Group, bottom: float, top: float) -> None:
    """Solid lines at procedure start and end through the strips, named inside the top strip
    (right of the line; left of it when the words would run past the plot)."""
    for e in analysis.session.events:
        if e.event not in PROCEDURE_WORDS or not (p.t0_s <= e.time_s <= p.t1_s):
            continue
        x = float(p.tx(e.time_s))
        g.add(Line(x, bottom, x, top, strokeColor=styles.INK, strokeWidth=1.3))
        text = PROCEDURE_WORDS[e.event]
        width = len(text) * 2.7
        if x + 2 + width <= p.x + p.width:
            g.add(label(x + 2, top - 6.5, text, 5.4, color=styles.INK))
        else:
            g.add(label(x - 2, top - 6.5, text, 5.4, anchor="end", color=styles.INK))


def value_code(e) -> str:
    """Actions-lane label of a logged value: ``DS 3`` (depth score), ``O2 2`` (L/min)."""
    value = "" if e.value is None else f" {e.value:g}"
    return VALUE_CODES[e.event] + value


def _dose_marks(
    analysis, p: Panel, g: Group, lane_y: float, bottom: float, top: float, right_edge: float
) -> None:
    marks = []
    keys = dose_keys(analysis.session)
    for d in sorted(analysis.session.doses, key=lambda d: (d.time_s, d.line)):
        if not (p.t0_s <= d.time_s <= p.t1_s):
            continue
        x = float(p.tx(d.time_s))
        g.add(Line(x, bottom, x, top, strokeColor=styles.GRID, strokeWidth=0.5))
        if d.kind == "bolus":
            g.add(
                Polygon(
                    [x - 2.4, lane_y, x + 2.4, lane_y, x, lane_y + 4.2],
                    fillColor=styles.DOSE_MARK,
                    strokeColor=styles.DOSE_MARK,
                    strokeWidth=0.3,
                )
            )
        else:
            g.add(
                Polygon(
                    [x, lane_y, x + 3.5, lane_y + 2.1, x, lane_y + 4.2],
                    fillColor=None,
                    strokeColor=styles.DOSE_MARK,
                    strokeWidth=0.6,
                )
            )
        marks.append((x, keys[d]))
    for x, text in cluster_labels(marks, 4.5, right_edge, char_pt=2.8):
        g.add(label(x, lane_y + 0.3, text, 5.4))
    _infusion_bars(analysis, p, g, lane_y - 1.6)


def cluster_labels(
    marks: list[tuple[float, str]], offset_pt: float, right_pt: float, char_pt: float = 2.9
) -> list[tuple[float, str]]:
    """Labels of marks; marks that would crowd share one label placed after the last of them.

    Parameters
    ----------
    marks : list of (x, text)
        Mark positions in points, in time order, and their labels.
    offset_pt : float
        Gap between a mark and its label.
    right_pt : float
        Right edge available; a label that would run past it goes before the marks instead.
    char_pt : float
        Approximate width of one label character in points.
    """
    clusters: list[list[tuple[float, str]]] = []
    for x, text in marks:
        if clusters:
            last = clusters[-1]
            joined = ", ".join(t for _, t in last)
            label_end = last[-1][0] + offset_pt + len(joined) * char_pt
            # the next mark's own glyph (about offset_pt wide) must not touch the label either
            if x - last[-1][0] < 3 * offset_pt or x - offset_pt <= label_end:
                last.append((x, text))
                continue
        clusters.append([(x, text)])
    placed = []
    for cl in clusters:
        text = ", ".join(t for _, t in cl)
        width = len(text) * char_pt
        x = cl[-1][0] + offset_pt
        if x + width > right_pt:  # no room after the marks: end the label before the first
            x = max(cl[0][0] - offset_pt - width, 0.0)
        placed.append((x, text))
    return placed


def _infusion_bars(analysis, p: Panel, g: Group, y: float) -> None:
    """A thin bar while an infusion runs (from its rate line until the next line or the end)."""
    s = analysis.session
    for drug in s.drugs:
        lines = [d for d in s.doses if d.drug == drug and d.kind == "infusion"]
        for i, d in enumerate(lines):
            stop = lines[i + 1].time_s if i + 1 < len(lines) else p.t1_s
            if d.rate_mg_per_h <= 0:
                continue
            a, b = max(d.time_s, p.t0_s), min(stop, p.t1_s)
            if b > a:
                g.add(
                    Line(
                        float(p.tx(a)),
                        y,
                        float(p.tx(b)),
                        y,
                        strokeColor=styles.DOSE_MARK,
                        strokeWidth=1.4,
                    )
                )


def _intervention_marks(
    analysis, p: Panel, g: Group, lane_y: float, bottom: float, top: float, right_edge: float
) -> None:
    marks = []
    shown = [e for e in analysis.session.events if e.is_intervention or e.event in VALUE_CODES]
    for e in sorted(shown, key=lambda e: (e.time_s, e.line)):
        if not (p.t0_s <= e.time_s <= p.t1_s):
            continue
        x = float(p.tx(e.time_s))
        if e.event in VALUE_CODES:
            c = lane_y + 2.2
            g.add(
                Polygon(
                    [x - 2.0, c - 2.0, x + 2.0, c - 2.0, x + 2.0, c + 2.0, x - 2.0, c + 2.0],
                    fillColor=None,
                    strokeColor=styles.INK,
                    strokeWidth=0.6,
                )
            )
            marks.append((x, value_code(e)))
            continue
        g.add(
            Line(
                x,
                bottom,
                x,
                top,
                strokeColor=styles.INTERVENTION_MARK,
                strokeWidth=0.4,
                strokeDashArray=[0.8, 1.6],
            )
        )
        c = lane_y + 2.2
        g.add(
            Polygon(
                [x, c - 2.6, x + 2.6, c, x, c + 2.6, x - 2.6, c],
                fillColor=None,
                strokeColor=styles.INTERVENTION_MARK,
                strokeWidth=0.7,
            )
        )
        marks.append((x, styles.INTERVENTION_CODES.get(e.event, e.event[:3].upper())))
    for x, text in cluster_labels(marks, 4.0, right_edge, char_pt=3.4):
        g.add(label(x, lane_y + 0.3, text, 5.4))
