"""The COPD trend PDF (``sedreport trend``): :func:`render_trend` assembles and writes it.

Pages: summary (visits, indices per visit, changes from the previous and the first visit), the
strips of each index over the visit dates, the averaged breaths overlaid, then methods with
sources, settings, cautions and the SHA-256 of every input. Every page carries "patient ·
page x of y · sedreport version" and a running caution.
"""

from __future__ import annotations

import os
from contextlib import ExitStack
from datetime import UTC, datetime
from pathlib import Path

from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import (
    BaseDocTemplate,
    Frame,
    KeepTogether,
    PageBreak,
    PageTemplate,
    Paragraph,
    Spacer,
    Table,
)

from sedreport._version import __version__
from sedreport.errors import SedreportError
from sedreport.render import styles
from sedreport.render.atomic import atomic_output
from sedreport.render.styles import para_text
from sedreport.render.trend_charts import (
    STRIP_INDICES,
    breath_overlay,
    index_strip,
    overlay_legend,
    spo2_target_bars,
)
from sedreport.render.trend_csv import trend_csv_text
from sedreport.render.trend_methods import definitions, load_trend_cautions, noise_text
from sedreport.render.trend_tables import (
    changes_table,
    indices_table,
    provenance_table,
    settings_table,
    variability_table,
    visits_table,
)
from sedreport.trend import Trend, oxygen_text, usual_oxygen

RUNNING_HEAD = "Trend of recorded resting data - documentation, not a diagnosis"
ABBREVIATIONS = (
    "EtCO2 end-tidal CO2; FiCO2 inspired CO2; SpO2 pulse-oximeter saturation; IQR interquartile "
    "range; V1, V2 visits in date order; O2 oxygen; CV coefficient of variation; PCO2 blood "
    "CO2 partial pressure."
)


def _canvas(patient: str, version: str) -> type[rl_canvas.Canvas]:
    """Canvas writing the footer with the final page count and the running head."""

    class _TrendCanvas(rl_canvas.Canvas):
        def __init__(self, *args: object, **kwargs: object) -> None:
            super().__init__(*args, **kwargs)
            self._states: list[dict] = []

        def showPage(self) -> None:  # noqa: N802 (reportlab API name)
            self._states.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            for state in self._states:
                self.__dict__.update(state)
                self._decorate(len(self._states))
                rl_canvas.Canvas.showPage(self)
            rl_canvas.Canvas.save(self)

        def _decorate(self, total: int) -> None:
            width, height = self._pagesize
            m = styles.MARGIN_PT
            self.saveState()
            self.setStrokeColor(styles.RULE)
            self.setLineWidth(0.4)
            self.line(m, styles.FOOTER_PT + 8, width - m, styles.FOOTER_PT + 8)
            self.setFont(styles.FONT, 7.5)
            self.setFillColor(styles.INK)
            text = f"{patient} trend \u00b7 page {self.getPageNumber()} of {total} \u00b7 sedreport {version}"
            self.drawCentredString(width / 2, styles.FOOTER_PT, styles.pdf_text(text))
            self.setFont(styles.FONT, 5.8)
            self.drawString(m, styles.FOOTER_PT + 11, styles.pdf_text(ABBREVIATIONS))
            self.setFont(styles.FONT, 6.5)
            self.setFillColor(styles.AXIS)
            self.drawString(m, height - m + 12, RUNNING_HEAD)
            self.drawRightString(
                width - m, height - m + 12, styles.pdf_text(f"COPD trend {patient}")
            )
            self.restoreState()

    return _TrendCanvas


def _document(path: str, paper: str, patient: str, invariant: bool) -> BaseDocTemplate:
    width, height = styles.page_size(paper)
    m = styles.MARGIN_PT
    bottom = m + 14
    doc = BaseDocTemplate(
        path,
        pagesize=(width, height),
        leftMargin=m,
        rightMargin=m,
        topMargin=m,
        bottomMargin=bottom,
        title=f"COPD clinic trend {patient}",
        author=f"sedreport {__version__}",
        subject=f"Trend of recorded resting capnography and oximetry, patient {patient}",
        creator=f"sedreport {__version__}",
        invariant=1 if invariant else 0,
        pageCompression=1,
    )
    frame = Frame(m, bottom, width - 2 * m, height - m - bottom, id="body")
    doc.addPageTemplates([PageTemplate(id="page", frames=[frame])])
    return doc


def _p(text: str, style=styles.BODY) -> Paragraph:
    return Paragraph(para_text(text), style)


def _made_at(epoch: str | None) -> str:
    when = datetime.fromtimestamp(int(epoch), UTC) if epoch else datetime.now(UTC)
    return when.strftime("%Y-%m-%d %H:%M UTC")


def _summary(trend: Trend, width: float, epoch: str | None) -> list:
    vs = trend.visits
    first, last = vs[0].visit_date, vs[-1].visit_date
    out: list = [
        Paragraph(para_text(f"COPD clinic trend \u00b7 patient {trend.patient_ref}"), styles.TITLE),
        _p(
            f"{len(vs)} resting visit(s) from {first:%d %b %Y} to {last:%d %b %Y}, in date "
            f"order \u00b7 made {_made_at(epoch)} by sedreport {__version__}",
            styles.SUBTITLE,
        ),
        _p(
            "Trend documentation of recorded data, not a diagnosis and not an alarm. "
            "Nasal-cannula EtCO2 reads below arterial CO2, more so in obstructive disease; "
            "compare EtCO2 only between visits on the same oxygen device and flow. Cautions "
            "and methods are on the last pages.",
            styles.BODY,
        ),
        *_headline(trend),
        Paragraph("Visits", styles.H1),
        *_oxygen_note(trend),
        visits_table(trend, width),
        Paragraph("Indices per visit (median, IQR over valid breaths)", styles.H1),
        indices_table(trend, width),
    ]
    if len(vs) > 1:
        out += [
            Paragraph("Change from the previous visit", styles.H1),
            _p(
                "Bold: beyond the within-visit noise; (noise): the change is within it (method "
                "on the last pages). Dashed O2 lines on the strips mark a change of oxygen.",
                styles.SMALL,
            ),
            changes_table(trend, width, "previous"),
        ]
    return out


def _changes(trend: Trend, width: float) -> list:
    """Change from the first visit, the noise of each median, and SpO2 against the target."""
    out: list = []
    if len(trend.visits) > 1:
        out += [
            Paragraph("Change from the first visit (V1)", styles.H1),
            changes_table(trend, width, "first"),
        ]
    out += [
        Paragraph("Breath-to-breath variability and noise of the medians", styles.H1),
        _p(
            "Interval: the bootstrap interval of the visit's median (method on the last pages); "
            "a change between two visits smaller than the noise of both is marked (noise).",
            styles.SMALL,
        ),
        variability_table(trend, width),
    ]
    return out


#: Indices named in the headline sentence, with their label and decimals.
_HEADLINE = (
    ("etco2_mmHg", "EtCO2", "mmHg", 1),
    ("rr_per_min", "rate", "/min", 1),
    ("phase3_slope_norm_per_s", "phase III slope / EtCO2", "1/s", 3),
    ("alpha_angle_deg", "alpha angle", "deg", 1),
    ("upstroke_s", "upstroke time", "s", 2),
    ("spo2_pct", "SpO2", "%", 0),
)


def _headline(trend: Trend) -> list:
    """One sentence: latest visit against the first, each change with its noise verdict."""
    if len(trend.visits) < 2:
        return []
    n = len(trend.visits)
    ch = trend.from_first[-1]
    parts = []
    for key, name, unit, digits in _HEADLINE:
        c = ch.get(key)
        if c is None:
            continue
        verdict = "within the noise" if c.within_noise else "beyond the noise"
        parts.append(f"{name} {c.delta:+.{digits}f} {unit} ({verdict})")
    text = f"Latest visit V{n} against the first V1: " + "; ".join(parts) + "."
    if oxygen_text(trend.visits[0]) != oxygen_text(trend.visits[-1]):
        text += " The two were recorded on different oxygen settings: EtCO2 and SpO2 are not "
        text += "directly comparable."
    return [Spacer(1, 2), Paragraph(f"<b>{para_text(text)}</b>", styles.BODY)]


def _oxygen_note(trend: Trend) -> list:
    """A sentence naming the visits on another oxygen setting than most (shaded rows)."""
    usual = usual_oxygen(trend.visits)
    odd = [f"V{k + 1}" for k, v in enumerate(trend.visits) if oxygen_text(v) != usual]
    if not odd:
        return []
    text = (
        f"Most visits were recorded on {usual.replace('_', ' ')}; {', '.join(odd)} on another "
        "setting (shaded). More oxygen flow dilutes nasal-cannula CO2 and raises SpO2, so their "
        "EtCO2 and SpO2 are not directly comparable with the other visits."
    )
    return [_p(text, styles.SMALL), Spacer(1, 2)]


def _strips(trend: Trend, width: float) -> list:
    half = (width - 8) / 2.0
    h = 118.0
    drawings = [index_strip(trend, i, half, h) for i in STRIP_INDICES]
    grid = [drawings[i : i + 2] for i in range(0, len(drawings), 2)]
    t = Table(grid, colWidths=[half + 4, half + 4], hAlign="LEFT")
    return [
        PageBreak(),
        Paragraph("Indices over time", styles.H1),
        _p(
            "One strip per index over the visit dates (x: calendar time). Dot: visit median; "
            "thick bar: its bootstrap interval (noise of the median); thin bar: IQR over the "
            "breaths (spread); open dot: too few breaths. Dashed line marked O2: the oxygen "
            "device or flow changed from the previous visit. SpO2: shaded band is the target.",
            styles.SMALL,
        ),
        t,
        Spacer(1, 6),
        spo2_target_bars(trend, width, 120.0),
    ]


def _shape(trend: Trend, width: float) -> list:
    half = (width - 8) / 2.0
    pair = Table(
        [[breath_overlay(trend, half, 250.0, False), breath_overlay(trend, half, 250.0, True)]],
        colWidths=[half + 4, half + 4],
        hAlign="LEFT",
    )
    return [
        PageBreak(),
        Paragraph("Representative breath per visit", styles.H1),
        _p(
            "Point-wise median of each visit's valid breaths aligned at the start of the "
            "upstroke (phase II); left in mmHg, right divided by the visit's median EtCO2 so the "
            "shape can be compared when the level differs. A slower upstroke and a steeper, "
            "rounder plateau go with obstruction. Light grey: first visit; darkest: latest.",
            styles.SMALL,
        ),
        pair,
        overlay_legend(trend, width),
        Spacer(1, 8),
        breath_overlay(trend, width, 230.0, True, (-0.1, 1.2)),
        _p(
            "Zoom on the upstroke: a later, less steep rise means a slower phase II; the angle "
            "between the rise and the plateau is the alpha angle (definition on the last pages).",
            styles.SMALL,
        ),
    ]


def _methods(trend: Trend, width: float, epoch: str | None) -> list:
    out: list = [PageBreak(), Paragraph("Methods and sources", styles.H1)]
    for name, text in definitions(trend):
        out.append(Paragraph(f"<b>{para_text(name)}.</b> {para_text(text)}", styles.BODY))
    out.append(
        Paragraph(f"<b>Noise between visits.</b> {para_text(noise_text(trend))}", styles.BODY)
    )
    cautions = [Paragraph("Cautions", styles.H1)]
    for title, text in load_trend_cautions():
        cautions.append(Paragraph(f"<b>{para_text(title)}.</b> {para_text(text)}", styles.BODY))
    out.append(KeepTogether(cautions))
    out += [Paragraph("Trend settings", styles.H1), settings_table(trend, width)]
    out += _quality(trend)
    out += [
        Paragraph("Inputs", styles.H1),
        _p(
            f"SHA-256 of every input file; trend settings {trend.settings.path}. Generated "
            f"{_made_at(epoch)}.",
            styles.SMALL,
        ),
        provenance_table(trend, width),
    ]
    return out


def _quality(trend: Trend) -> list:
    """Per visit: what ingest found (gaps, dropped rows...) and the SpO2 samples left out."""
    out: list = [Paragraph("Data quality", styles.H1)]
    for k, v in enumerate(trend.visits):
        items = list(v.quality)
        if v.spo2 is not None and (v.spo2.artefact_samples or v.spo2.missing_samples):
            items.append(
                f"SpO2: {v.spo2.artefact_samples} artefact and {v.spo2.missing_samples} missing "
                f"sample(s) left out of {v.spo2.samples + v.spo2.artefact_samples + v.spo2.missing_samples}"
            )
        text = "; ".join(items) if items else "nothing to report"
        out.append(_p(f"V{k + 1} {v.session_id}: {text}.", styles.SMALL))
    return out


def build_story(trend: Trend, width_pt: float, epoch: str | None) -> list:
    """Every flowable of the trend document, in page order."""
    return (
        _summary(trend, width_pt, epoch)
        + _changes(trend, width_pt)
        + _strips(trend, width_pt)
        + _shape(trend, width_pt)
        + _methods(trend, width_pt, epoch)
    )


def render_trend(
    trend: Trend,
    path: str | os.PathLike[str],
    csv_path: str | os.PathLike[str] | None = None,
    paper: str = "a4",
) -> Path:
    """Write the trend PDF (and optionally the CSV) of one patient's visits.

    Parameters
    ----------
    trend : Trend
        From :func:`sedreport.trend.build_trend`.
    path : path-like
        Output PDF; must end in ``.pdf``. Written atomically with the CSV: both or neither.
    csv_path : path-like, optional
        Also write the per-visit CSV (:func:`sedreport.render.trend_csv.trend_csv_text`).
    paper : {"a4", "letter"}

    Raises
    ------
    SedreportError
        A wrong output name or an unwritable place; no file is left behind.

    Notes
    -----
    With ``SOURCE_DATE_EPOCH`` set, dates come from it and the document id is fixed, so the
    same inputs give byte-identical files.
    """
    target = Path(path)
    if target.suffix.lower() != ".pdf":
        raise SedreportError(f"-o {target}: the trend output must be a .pdf file")
    if csv_path is not None and Path(csv_path).resolve() == target.resolve():
        raise SedreportError(f"--csv {csv_path}: must differ from the PDF output")
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip() or None
    if epoch is not None and not epoch.isdigit():
        raise SedreportError(f"SOURCE_DATE_EPOCH: must be whole seconds, got {epoch!r}")
    width = styles.frame_width(paper)
    story = build_story(trend, width, epoch)
    csv_text = trend_csv_text(trend) if csv_path is not None else None
    with atomic_output(target) as tmp, ExitStack() as extra:
        doc = _document(str(tmp), paper, trend.patient_ref, epoch is not None)
        doc.build(story, canvasmaker=_canvas(trend.patient_ref, __version__))
        if csv_text is not None:
            tmp_csv = extra.enter_context(atomic_output(csv_path))
            tmp_csv.write_text(csv_text, encoding="utf-8")
    return target
