"""The legend of the strips and close-ups: line styles, marks and intervention codes."""

from __future__ import annotations

from reportlab.graphics.shapes import Drawing, Line, Polygon, Rect

from sedreport.render import styles
from sedreport.render.plot import label


def _sample(d: Drawing, x: float, y: float, style: styles.SeriesStyle, text: str) -> float:
    d.add(
        Line(
            x,
            y + 2,
            x + 16,
            y + 2,
            strokeColor=style.color,
            strokeWidth=style.width_pt,
            strokeDashArray=list(style.dash) if style.dash else None,
        )
    )
    d.add(label(x + 19, y, text, 6.3))
    return x + 28 + len(text) * 3.2


def legend(width_pt: float, spo2_line_pct: float) -> Drawing:
    """Two lines: series styles, then marks and bands."""
    d = Drawing(width_pt, 24)
    y = 15
    x = 0.0
    for style, text in (
        (styles.ETCO2, "EtCO2 per breath"),
        (styles.FICO2, "FiCO2 (inspired)"),
        (styles.RR, "resp. rate"),
        (styles.SPO2, "SpO2"),
        (styles.REFERENCE, f"SpO2 {spo2_line_pct:g} %"),
        (styles.PULSE, "pulse"),
        (styles.MEAN_BP, "mean BP, bars sys-dia"),
    ):
        x = _sample(d, x, y, style, text)
    y = 4
    d.add(
        Polygon(
            [2.6, y, 7.4, y, 5, y + 4.2], fillColor=styles.DOSE_MARK, strokeColor=styles.DOSE_MARK
        )
    )
    d.add(label(10, y, "bolus", 6.3))
    d.add(
        Polygon(
            [40, y, 43.5, y + 2.1, 40, y + 4.2],
            fillColor=None,
            strokeColor=styles.DOSE_MARK,
            strokeWidth=0.6,
        )
    )
    d.add(Line(46, y + 1, 60, y + 1, strokeColor=styles.DOSE_MARK, strokeWidth=1.4))
    d.add(label(63, y, "infusion rate line / running", 6.3))
    c = y + 2.2
    d.add(
        Polygon(
            [152, c - 2.6, 154.6, c, 152, c + 2.6, 149.4, c],
            fillColor=None,
            strokeColor=styles.INTERVENTION_MARK,
            strokeWidth=0.7,
        )
    )
    d.add(label(158, y, "intervention", 6.3))
    d.add(
        Rect(
            205,
            y - 1,
            14,
            6.5,
            fillColor=styles.BAND_FILL,
            strokeColor=styles.BAND_EDGE,
            strokeWidth=0.3,
        )
    )
    d.add(label(222, y, "episode band (E1, E2 ... as in the episode table)", 6.3))
    return d


def codes_text() -> str:
    """The intervention codes used on the strips, spelled out."""
    codes = ", ".join(
        f"{code} {name.replace('_', ' ')}" for name, code in styles.INTERVENTION_CODES.items()
    )
    return (
        f"Intervention codes: {codes}. Open squares in the actions lane: DS depth score, RS "
        "recovery score (scale in the events-and-notes log), O2 oxygen flow in L/min. D1, D2... "
        "key the doses to the dose table; solid vertical lines mark procedure start and end."
    )
