"""Data-quality section: sources, missing streams, gaps and findings, warnings, criteria used."""

from __future__ import annotations

from reportlab.platypus import Paragraph

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.fmt import DASH, clock_text, number_text, words
from sedreport.render.styles import para_text
from sedreport.render.tables import cell, grid_table, scaled

#: Streams a complete session has (DESIGN.md), with what their absence means for the record.
EXPECTED_STREAMS: dict[str, str] = {
    "co2": "no CO2 waveform: no breaths, rate, EtCO2 or apnoea detection",
    "spo2": "no oximetry: no SpO2, pulse or desaturation detection",
    "doses": "no dose log: no doses, totals or dose linking",
    "events": "no event log: no interventions or procedure times",
}


def missing_streams(analysis: Analysis) -> list[str]:
    """One sentence per expected stream the session did not give."""
    s = analysis.session
    given = {src.role for src in s.sources}
    present = {
        "co2": s.co2 is not None,
        "spo2": s.spo2 is not None,
        "doses": "doses" in given or bool(s.doses),
        "events": "events" in given or bool(s.events),
    }
    return [f"{role}: {text}" for role, text in EXPECTED_STREAMS.items() if not present[role]]


def _span_text(analysis: Analysis, span: tuple[float, float] | None) -> str:
    if span is None:
        return DASH
    s = analysis.session
    return f"{clock_text(s, span[0])} to {clock_text(s, span[1])}"


def sources_table(analysis: Analysis, width_pt: float):
    """One row per input file."""
    head = [
        cell(h, styles.CELL_BOLD)
        for h in (
            "Stream",
            "File",
            "Reader",
            "Rows",
            "Rate",
            "Clock offset",
            "Units and conversion",
            "Span",
        )
    ]
    rows = [head]
    for src in analysis.session.sources:
        conv = src.units_in + (
            f"; {src.conversion}" if src.conversion not in ("", "none") else "; no conversion"
        )
        rows.append(
            [
                cell(src.role),
                cell(src.file + (f" [{src.channel}]" if src.channel else "")),
                cell(src.reader),
                cell(str(src.rows)),
                cell(number_text(src.sample_rate_hz, 1, "Hz")),
                cell(number_text(src.clock_offset_s, 1, "s")),
                cell(conv.strip("; ")),
                cell(_span_text(analysis, src.span_s)),
            ]
        )
    return grid_table(rows, scaled([0.6, 1.3, 0.6, 0.6, 0.65, 0.7, 1.6, 1.3], width_pt))


def findings_flowables(analysis: Analysis, width_pt: float) -> list:
    """Ingest findings (gaps, dropped rows...) and warnings."""
    s = analysis.session
    out: list = []
    if s.findings:
        head = [cell(h, styles.CELL_BOLD) for h in ("Finding", "Stream", "When", "What")]
        rows = [head]
        for f in s.findings:
            when = DASH
            if f.start_s is not None:
                end = f" to {clock_text(s, f.end_s)}" if f.end_s is not None else ""
                when = clock_text(s, f.start_s) + end
            rows.append([cell(f.kind), cell(f.source), cell(when), cell(f.message)])
        out.append(grid_table(rows, scaled([0.8, 0.6, 1.4, 4.0], width_pt)))
    else:
        out.append(
            Paragraph("Ingest reported no gaps, dropped rows or clock problems.", styles.BODY)
        )
    for w in s.warnings:
        out.append(Paragraph(para_text(f"\u2022 Warning: {w}"), styles.BODY))
    return out


def _count_text(value: object) -> str:
    """``3 (short 2, low plateau 1)`` from ``{"count", "by_reason"}``, or a plain count."""
    if isinstance(value, dict):
        reasons = value.get("by_reason") or {}
        detail = ", ".join(f"{words(str(k))} {v}" for k, v in reasons.items())
        return f"{value.get('count', 0)}" + (f" ({detail})" if detail else "")
    return str(value if value is not None else 0)


def _value_text(value: float, unit: str) -> str:
    if value is None or value != value:
        return "switched off"
    return f"{value:g} {unit}"


def criteria_flowables(analysis: Analysis, width_pt: float) -> list:
    """Criteria file used, with every threshold and its source."""
    c = analysis.criteria
    out: list = [
        Paragraph("Criteria used", styles.H2),
        Paragraph(para_text(f"{c.name} ({c.path}) - {c.description}"), styles.BODY),
    ]
    head = [cell(h, styles.CELL_BOLD) for h in ("Section", "Threshold", "Value", "Source", "Note")]
    rows = [head] + [
        [
            cell(i.section),
            cell(i.name),
            cell(_value_text(i.value, i.unit)),
            cell(i.source),
            cell(i.note or DASH),
        ]
        for i in c.items
    ]
    out.append(grid_table(rows, scaled([0.9, 1.4, 0.8, 2.3, 1.8], width_pt)))
    return out


def quality_flowables(analysis: Analysis, width_pt: float) -> list:
    """The whole data-quality section."""
    q = analysis.quality
    out: list = [
        Paragraph("Data quality", styles.H1),
        Paragraph("Input files", styles.H2),
        sources_table(analysis, width_pt),
    ]
    missing = missing_streams(analysis)
    out.append(Paragraph("Missing streams", styles.H2))
    if missing:
        for m in missing:
            out.append(Paragraph(para_text(f"\u2022 {m}"), styles.BODY))
    else:
        out.append(
            Paragraph("All four streams (CO2, SpO2, doses, events) were given.", styles.BODY)
        )
    for limit in q.get("limitations") or []:
        out.append(Paragraph(para_text(f"\u2022 Not assessed: {limit}"), styles.BODY))
    out.append(Paragraph("Gaps, artefacts and warnings", styles.H2))
    out += findings_flowables(analysis, width_pt)
    out.append(
        Paragraph(
            para_text(
                f"Breaths not usable for trends: {_count_text(q.get('invalid_breaths'))}. "
                f"SpO2 samples marked as artefact: {_count_text(q.get('spo2_artefact_samples'))}."
            ),
            styles.BODY,
        )
    )
    out += criteria_flowables(analysis, width_pt)
    return out
