"""The record's header (who, what, where) and summary (key figures and attention sentences)."""

from __future__ import annotations

from reportlab.platypus import Paragraph, Table, TableStyle

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.fmt import (
    DASH,
    clock_text,
    duration_text,
    number_text,
    words,
)
from sedreport.render.glossary import TermMark, standard_terms
from sedreport.render.styles import para_text
from sedreport.render.tables import cell


def _cell(text: object, style=styles.CELL) -> Paragraph:
    return cell(text, style)


def _grid(pairs: list[tuple[str, str]], width_pt: float, columns: int = 3) -> Table:
    """Label/value pairs laid out in ``columns`` column pairs."""
    rows = []
    for i in range(0, len(pairs), columns):
        row = []
        for label, value in pairs[i : i + columns]:
            row += [_cell(label, styles.CELL_BOLD), _cell(value)]
        row += [""] * (2 * columns - len(row))
        rows.append(row)
    label_w = 0.135 * width_pt
    value_w = width_pt / columns - label_w
    table = Table(rows, colWidths=[label_w, value_w] * columns, hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LINEBELOW", (0, 0), (-1, -1), 0.3, styles.GRID),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                ("LEFTPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return table


def header_pairs(analysis: Analysis) -> list[tuple[str, str]]:
    """Header fields as (label, value) text, ``-`` where the session does not say."""
    s = analysis.session
    p, team, o2 = s.patient, s.team, s.oxygen
    oxygen = DASH
    if o2.device or o2.flow_l_min is not None:
        flow = f", {o2.flow_l_min:g} L/min" if o2.flow_l_min is not None else ""
        oxygen = f"{words(o2.device or 'device not stated')}{flow}"
    return [
        ("Session", s.session_id),
        ("Date", s.started.strftime("%Y-%m-%d")),
        ("Start", s.started.strftime("%H:%M:%S (UTC%z)").replace("(UTC+0000)", "(UTC)")),
        ("Area", words(s.area) if s.area else DASH),
        ("Procedure", words(s.procedure) if s.procedure else DASH),
        ("Target depth", s.target_depth or DASH),
        ("Patient ref", p.ref or DASH),
        ("Age", number_text(p.age_years, 0, "years")),
        ("Sex", p.sex or DASH),
        ("Weight", number_text(p.weight_kg, 1, "kg")),
        ("Height", number_text(p.height_cm, 0, "cm")),
        ("ASA class", f"ASA {p.asa_class}" if p.asa_class is not None else DASH),
        ("Conditions", ", ".join(words(c) for c in p.conditions) or "none recorded"),
        ("Oxygen at start", oxygen),
        ("Outcome", outcome_text(s.outcome)),
        ("Sedation provider", team.sedation_provider or "not stated (signs at the end)"),
        ("Proceduralist", team.proceduralist or DASH),
        ("Reviewer", getattr(team, "reviewer", None) or "signs at the end of the record"),
    ]


def outcome_text(outcome: tuple[str, ...]) -> str:
    """The outcome words of ``session.yaml`` (World SIVA outcomes), ``none recorded`` without."""
    return ", ".join(words(o) for o in outcome) or "none recorded"


def criteria_sentence(analysis: Analysis) -> str:
    """One line naming the criteria file and the first 12 hex digits of its SHA-256; the full
    table is in the appendix at the end."""
    c = analysis.criteria
    return (
        f"Criteria: {c.name} ({c.path or 'built in'}), SHA-256 {c.sha256[:12]}...; every "
        "threshold with its source is in the appendix at the end."
    )


def header_flowables(analysis: Analysis, width_pt: float) -> list:
    """Title block and header grid."""
    s = analysis.session
    title = Paragraph(para_text(f"Sedation record - {s.session_id}"), styles.TITLE)
    sub = Paragraph(
        para_text(
            f"{s.started.strftime('%Y-%m-%d %H:%M')} \u00b7 {words(s.area or 'area not stated')} "
            f"\u00b7 {words(s.procedure or 'procedure not stated')} \u00b7 documents and reviews recorded "
            "monitoring data; not an alarm, not a diagnosis"
        ),
        styles.SUBTITLE,
    )
    grid = _grid(header_pairs(analysis), width_pt)
    crit = Paragraph(para_text(criteria_sentence(analysis)), styles.SMALL)
    return [title, sub, grid, crit, TermMark(standard_terms("ASA", "UTC", "SHA-256"))]


def _counts_text(counts: dict | None, name=words) -> str:
    if not counts:
        return "none"
    return ", ".join(f"{name(str(k))} {v}" for k, v in counts.items() if v) or "none"


def _episodes_text(analysis: Analysis) -> str:
    """``2: apnoea 1, desaturation 1``, or ``none`` when no episode was found."""
    if not analysis.episodes:
        return "none"
    return f"{len(analysis.episodes)}: {_counts_text(analysis.summary.episodes_by_kind)}"


def _events_text(analysis: Analysis) -> str:
    """``2: minor 1, sentinel 1`` (World SIVA tiers of the adverse events), or ``none``."""
    if not analysis.events:
        return "none"
    return f"{len(analysis.events)}: {_counts_text(analysis.summary.events_by_severity)}"


def _coverage_text(present: bool, pct: float | None, missing: str) -> str:
    return number_text(pct, 0, "% of sedation time") if present else missing


def _longest_apnoea_text(analysis: Analysis) -> str:
    """Longest apnoea, or why there is none (no apnoea found / no CO2 to look in)."""
    if analysis.session.co2 is None:
        return "not assessed (no CO2)"
    if not any(e.kind == "apnoea" for e in analysis.episodes):
        return "none detected"
    return duration_text(analysis.summary.longest_apnoea_s)


def summary_pairs(analysis: Analysis) -> list[tuple[str, str]]:
    """Key figures of the summary as (label, value) text."""
    sm, s = analysis.summary, analysis.session
    start, end = sm.sedation_start_s, sm.sedation_end_s
    span = f"{clock_text(s, start, False)} to {clock_text(s, end, False)}"
    b = analysis.baseline
    return [
        ("Sedation", f"{duration_text(sm.sedation_duration_s)} ({span})"),
        (
            "CO2 coverage",
            _coverage_text(s.co2 is not None, sm.co2_coverage_pct, "no CO2 file"),
        ),
        (
            "SpO2 coverage",
            _coverage_text(s.spo2 is not None, sm.spo2_coverage_pct, "no oximetry file"),
        ),
        ("Episodes", _episodes_text(analysis)),
        ("Adverse events", _events_text(analysis)),
        ("Longest apnoea", _longest_apnoea_text(analysis)),
        ("Lowest SpO2", number_text(sm.min_spo2_pct, 0, "%")),
        (f"SpO2 < {sm.spo2_threshold_pct:g} %", duration_text(sm.time_below_spo2_threshold_s)),
        ("Highest EtCO2", number_text(sm.max_etco2_mmHg, 0, "mmHg")),
        ("Median RR", number_text(sm.median_rr_per_min, 1, "/min")),
        ("Breaths", f"{sm.n_breaths} ({sm.n_valid_breaths} valid)"),
        (
            "Baseline",
            f"EtCO2 {number_text(b.etco2_mmHg, 0, 'mmHg')}, RR {number_text(b.rr_per_min, 1, '/min')}"
            f" ({b.n_breaths} breaths)",
        ),
    ]


def summary_flowables(analysis: Analysis, width_pt: float) -> list:
    """Summary heading, key-figure grid and one sentence per finding needing attention."""
    out: list = [Paragraph("Summary", styles.H1), _grid(summary_pairs(analysis), width_pt)]
    attention = list(analysis.summary.attention)
    out.append(Paragraph("Needs the reader's attention", styles.H2))
    if not attention:
        out.append(Paragraph("No finding was flagged for attention.", styles.BODY))
    rows = [[Paragraph(para_text(f"\u2022 {sentence}"), styles.BODY)] for sentence in attention]
    if rows:
        box = Table(rows, colWidths=[width_pt], hAlign="LEFT")
        box.setStyle(
            TableStyle(
                [
                    ("BACKGROUND", (0, 0), (-1, -1), styles.ATTENTION_FILL),
                    ("BOX", (0, 0), (-1, -1), 0.8, styles.INK),
                    ("LEFTPADDING", (0, 0), (-1, -1), 6),
                    ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                    ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                ]
            )
        )
        out.append(box)
    out.append(Paragraph(para_text(baseline_sentence(analysis)), styles.SMALL))
    out.append(TermMark(standard_terms("CO2", "SpO2", "EtCO2", "RR")))
    return out


def baseline_sentence(analysis: Analysis) -> str:
    """Where the patient's own baseline came from, with its window in clock time."""
    b, s = analysis.baseline, analysis.session
    a, z = b.window_s
    return (
        f"Baseline (the patient's own reference values) from {clock_text(s, a)} to "
        f"{clock_text(s, z)}: {b.method}."
    )
