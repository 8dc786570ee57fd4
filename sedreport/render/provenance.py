"""Caution notes, the sign-off block and the provenance list (SHA-256 of every input)."""

from __future__ import annotations

from datetime import UTC, datetime

from reportlab.platypus import Paragraph, Spacer, Table, TableStyle

from sedreport._version import __version__
from sedreport.analysis import Analysis
from sedreport.errors import SedreportError
from sedreport.render import styles
from sedreport.render.cautions import load_cautions
from sedreport.render.fmt import DASH, number_text
from sedreport.render.glossary import TermMark, standard_terms
from sedreport.render.quality import missing_streams
from sedreport.render.styles import para_text
from sedreport.render.tables import cell, grid_table, scaled


def limits_sentence(analysis: Analysis) -> str:
    """The data-quality limits of this particular record, in one paragraph."""
    sm = analysis.summary
    parts = [
        f"CO2 was usable for {number_text(sm.co2_coverage_pct, 0, '%')} and SpO2 for "
        f"{number_text(sm.spo2_coverage_pct, 0, '%')} of the sedation time."
    ]
    gaps = analysis.quality.gaps
    if gaps:
        parts.append(
            f"{len(gaps)} gap(s) in the recorded streams are listed under data quality;"
            " nothing is known about the patient's breathing or saturation in them."
        )
    missing = missing_streams(analysis)
    if missing:
        parts.append("Missing from this session - " + "; ".join(missing) + ".")
    return " ".join(parts)


def caution_flowables(analysis: Analysis) -> list:
    """Caution heading, the caution file's notes and this record's own limits."""
    out: list = [Paragraph("Caution notes", styles.H1)]
    for title, text in load_cautions():
        out.append(Paragraph(f"<b>{para_text(title)}.</b> {para_text(text)}", styles.BODY))
    out.append(
        Paragraph(
            f"<b>Limits of this record.</b> {para_text(limits_sentence(analysis))}", styles.BODY
        )
    )
    out.append(TermMark(standard_terms("CO2", "EtCO2", "SpO2")))
    return out


def _signature_block(labels: tuple[str, ...], heights: tuple[float, ...], width_pt: float):
    """Labels with empty ruled lines beside them; nothing is pre-filled."""
    rows = [[cell(lab, styles.CELL_BOLD), ""] for lab in labels]
    table = Table(
        rows, colWidths=[0.28 * width_pt, 0.72 * width_pt], rowHeights=list(heights), hAlign="LEFT"
    )
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "BOTTOM"),
                ("LINEBELOW", (1, 0), (1, -1), 0.6, styles.INK),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return table


def signoff_flowables(width_pt: float) -> list:
    """Two signature blocks, the sedation provider's and the reviewing clinician's; nothing is
    pre-filled."""
    provider = _signature_block(
        ("Sedation provider (name)", "Signature", "Date and time"), (20, 26, 20), width_pt
    )
    reviewer = _signature_block(
        ("Reviewing clinician (name)", "Role", "Signature", "Date and time", "Comments"),
        (20, 20, 26, 20, 40),
        width_pt,
    )
    return [
        Paragraph("Review and sign-off", styles.H1),
        Paragraph("Sedation provider", styles.H2),
        Paragraph("I gave and monitored the sedation documented in this record.", styles.BODY),
        provider,
        Spacer(1, 8),
        Paragraph("Reviewing clinician", styles.H2),
        Paragraph("I have reviewed this record against the clinical notes.", styles.BODY),
        reviewer,
    ]


def generated_at(source_date_epoch: str | None) -> str:
    """Generation time, UTC: ``SOURCE_DATE_EPOCH`` when set (reproducible), else now."""
    if source_date_epoch:
        try:
            when = datetime.fromtimestamp(int(source_date_epoch), tz=UTC)
        except (ValueError, OverflowError, OSError) as exc:
            raise SedreportError(
                f"SOURCE_DATE_EPOCH: expected whole seconds since 1970, got {source_date_epoch!r}"
            ) from exc
    else:
        when = datetime.now(tz=UTC).replace(microsecond=0)
    return when.strftime("%Y-%m-%d %H:%M:%S UTC")


def provenance_flowables(
    analysis: Analysis, width_pt: float, source_date_epoch: str | None
) -> list:
    """SHA-256 of every input file and of the criteria file, version and generation time."""
    s, c = analysis.session, analysis.criteria
    head = [cell(h, styles.CELL_BOLD) for h in ("Input", "File", "SHA-256")]
    rows = [head] + [
        [cell(src.role), cell(src.file), cell(src.sha256, styles.MONO)] for src in s.sources
    ]
    rows.append([cell("criteria"), cell(c.path or c.name), cell(c.sha256, styles.MONO)])
    return [
        Paragraph("Provenance", styles.H1),
        Paragraph(
            para_text(
                f"Session {s.session_id}, folder {s.folder.name if s.folder else DASH}. Produced by sedreport {__version__}"
                f" on {generated_at(source_date_epoch)}. With SOURCE_DATE_EPOCH set, the same "
                "files and version give a byte-identical record."
            ),
            styles.BODY,
        ),
        Spacer(1, 3),
        grid_table(rows, scaled([0.7, 1.6, 3.6], width_pt), terms=standard_terms("SHA-256", "UTC")),
    ]
