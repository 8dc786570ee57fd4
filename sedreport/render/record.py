"""The PDF sedation record: :func:`render_record` assembles every section and writes it.

Sections in order: header, summary with attention sentences, adverse events, episode table and
doses (the first page a nurse reads), the events-and-notes log and the recovery, then the trend strips (never on the first page), episode close-ups, data
quality, caution notes, the two signature blocks, and the appendix (criteria table) with the
provenance on the last page. Every page carries
"session id · page x of y · sedreport version" and explains the abbreviations it shows.
"""

from __future__ import annotations

import os
from contextlib import ExitStack
from functools import partial
from pathlib import Path

from reportlab.platypus import KeepTogether, Paragraph, Spacer

from sedreport._version import __version__
from sedreport.analysis import Analysis
from sedreport.render import closeups, strips, styles
from sedreport.render.atomic import atomic_output
from sedreport.render.eventlog import log_flowables, recovery_flowables
from sedreport.render.events import event_flowables
from sedreport.render.fmt import clock_text, duration_text, severity_text, words
from sedreport.render.glossary import TermMark, span_terms, standard_terms
from sedreport.render.header import header_flowables, summary_flowables
from sedreport.render.json_text import episodes_json
from sedreport.render.legend import codes_text, legend
from sedreport.render.observations import OBS_INTERVAL_MIN, observation_flowables
from sedreport.render.pages import SectionBreak, numbered_canvas, record_document
from sedreport.render.provenance import (
    caution_flowables,
    provenance_flowables,
    signoff_flowables,
)
from sedreport.render.quality import criteria_flowables, quality_flowables
from sedreport.render.shape import shape_overlay
from sedreport.render.styles import para_text
from sedreport.render.tables import dose_flowables, episode_flowables

#: SpO2 reference line when the criteria file names no desaturation threshold in % (the
#: 90 % line is common practice).
DEFAULT_SPO2_LINE_PCT: float = 90.0


def spo2_line_pct(analysis: Analysis) -> float:
    """The criteria's desaturation threshold (``desaturation.spo2_below_pct``), else 90 %."""
    section = getattr(analysis.criteria, "desaturation", None)
    value = getattr(section, "spo2_below_pct", None)
    if isinstance(value, int | float) and 50 <= value <= 100:
        return float(value)
    return DEFAULT_SPO2_LINE_PCT


#: Height (pt) of the trend heading, its sentence, legend and codes line above the first row.
TREND_HEAD_PT: float = 95.0


def trend_flowables(analysis: Analysis, width_pt: float) -> list:
    """Trend heading, legend and one row per fixed span of minutes."""
    plan = strips.plan_rows(analysis)
    line = spo2_line_pct(analysis)
    s = analysis.session
    out: list = [
        SectionBreak(strips.row_height() + TREND_HEAD_PT),
        Paragraph("Trends", styles.H1),
        Paragraph(
            para_text(
                f"{plan.minutes_per_row} min per row, {plan.n_rows} row(s), clock time of the "
                f"session ({s.started.strftime('UTC%z')}). Scales are the same in every row."
            ),
            styles.BODY,
        ),
        legend(width_pt, line),
        TermMark(standard_terms("UTC")),
        Paragraph(para_text(codes_text()), styles.SMALL),
        Spacer(1, 4),
    ]
    rows: list = []
    for i in range(plan.n_rows):
        t0, t1 = plan.row_span(i)
        caption = Paragraph(
            para_text(f"Row {i + 1} of {plan.n_rows}: {clock_text(s, t0)} to {clock_text(s, t1)}"),
            styles.SMALL_BOLD,
        )
        drawing, unlabelled = strips.trend_row(analysis, t0, t1, width_pt, line)
        terms = standard_terms("CO2", "EtCO2", "FiCO2", "RR", "SpO2", "E1, E2")
        parts = [caption, drawing, TermMark(terms | span_terms(s, t0, t1))]
        if unlabelled:
            note = "Bands too crowded to label here: " + ", ".join(unlabelled) + "."
            parts.append(Paragraph(para_text(note), styles.SMALL))
        rows.append(KeepTogether([*parts, Spacer(1, 6)]))
    if not rows:
        return out
    # the heading, its sentence and legend never stand alone at the foot of a page
    return [out[0], KeepTogether([*out[1:], rows[0]]), *rows[1:]]


def closeup_flowables(analysis: Analysis, width_pt: float) -> list:
    """One close-up per episode (the most severe and longest when there are too many)."""
    if not analysis.episodes:
        return []
    shown, left = closeups.choose_closeups(analysis.episodes)
    s = analysis.session
    line = spo2_line_pct(analysis)
    # the heading and its sentences travel in the first close-up's KeepTogether (reportlab's
    # keepWithNext does not reach into a KeepTogether), so they never stand alone at a page foot
    head: list = [
        Paragraph("Episode close-ups", styles.H1),
        Paragraph(
            para_text(
                "Raw CO2 waveform with the SpO2 trend beneath, from shortly before onset to after "
                f"the end; the shaded band is the episode, the dashed line SpO2 {line:g} %. Marks "
                "above the waveform are doses and actions as on the trend strips."
            ),
            styles.BODY,
        ),
    ]
    if left:
        head.append(
            Paragraph(
                para_text(
                    f"{len(left)} of {len(analysis.episodes)} episodes have no close-up (at most "
                    f"{closeups.MAX_CLOSEUPS}, most severe and longest kept): "
                    + ", ".join(e.id for e in left)
                    + ". They are in the table and the strips."
                ),
                styles.BODY,
            )
        )
    clock = partial(clock_text, s)
    out: list = []
    for ep in shown:
        caption = Paragraph(
            para_text(
                f"{ep.id} \u00b7 {words(ep.kind)} \u00b7 onset {clock(ep.start_s)} \u00b7 "
                f"{duration_text(ep.duration_s)} \u00b7 "
                f"{ep.event + ' ' if ep.event else ''}{severity_text(ep.severity)} \u2014 "
                f"{closeups.window_note(ep, clock)}"
            ),
            styles.SMALL_BOLD,
        )
        a, b = closeups.windows(ep)[0][0], closeups.windows(ep)[-1][1]
        terms = standard_terms("CO2", "SpO2", "E1, E2") | span_terms(s, a, b)
        drawing = closeups.closeup(analysis, ep, width_pt, line)
        inset = shape_overlay(analysis, ep, width_pt)
        extra = [inset] if inset is not None else []
        lead, head = head, []
        out.append(KeepTogether([*lead, caption, drawing, *extra, TermMark(terms), Spacer(1, 6)]))
    return out


def build_story(
    analysis: Analysis,
    width_pt: float,
    source_date_epoch: str | None,
    obs_interval_min: float = OBS_INTERVAL_MIN,
) -> list:
    """Every flowable of the record, in page order."""
    story: list = []
    story += header_flowables(analysis, width_pt)
    story += summary_flowables(analysis, width_pt)
    story += event_flowables(analysis, width_pt)
    story += episode_flowables(analysis, width_pt)
    story += dose_flowables(analysis, width_pt)
    story += observation_flowables(analysis, width_pt, obs_interval_min)
    story += log_flowables(analysis, width_pt)
    story += recovery_flowables(analysis)
    story += trend_flowables(analysis, width_pt)
    story += closeup_flowables(analysis, width_pt)
    story += quality_flowables(analysis, width_pt)
    story.append(KeepTogether(caution_flowables(analysis)))
    story.append(KeepTogether(signoff_flowables(width_pt)))
    # the appendix (criteria table) and provenance close the record; the hashes stay on the
    # last page
    story += criteria_flowables(analysis, width_pt)
    story.append(Spacer(1, 10))
    story.append(KeepTogether(provenance_flowables(analysis, width_pt, source_date_epoch)))
    return story


def render_record(
    analysis: Analysis,
    path: str | os.PathLike[str],
    paper: str = "a4",
    json_path: str | os.PathLike[str] | None = None,
    obs_interval_min: float = OBS_INTERVAL_MIN,
) -> Path:
    """Write the PDF sedation record of one analysed session.

    Parameters
    ----------
    analysis : Analysis
        The analysed session (``sedreport.analysis.analyse_session``).
    path : path-like
        Output PDF. Written atomically: a temporary file in the same directory is moved into
        place only when complete; on any error no file is left behind.
    paper : {"a4", "letter"}
        Paper size.
    json_path : path-like, optional
        Also write the episodes JSON there (same content as ``sedreport episodes --format
        json``); written atomically, and only when the PDF succeeds.
    obs_interval_min : float
        Charting interval of the observations table, minutes (5 by default).

    Returns
    -------
    Path
        The written PDF.

    Notes
    -----
    With ``SOURCE_DATE_EPOCH`` set, the PDF's dates come from it and its document id is fixed,
    so the same inputs give byte-identical files (reproducible-builds.org convention).

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> import sedreport
    >>> from sedreport.demo import write_scenario
    >>> out = Path(tempfile.mkdtemp())
    >>> folder = write_scenario(out, "upper_gi_apnoea", seed=0)  # invented case
    >>> analysis = sedreport.analyse_session(sedreport.load_session(folder))
    >>> pdf = render_record(analysis, out / "record.pdf")
    >>> pdf.name, pdf.read_bytes()[:5]
    ('record.pdf', b'%PDF-')
    """
    width_pt = styles.frame_width(paper)
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip() or None
    story = build_story(analysis, width_pt, epoch, obs_interval_min)
    json_text = episodes_json(analysis) if json_path is not None else None
    sid = analysis.session.session_id
    target = Path(path)
    with atomic_output(target) as tmp, ExitStack() as extra:
        doc = record_document(
            str(tmp),
            paper,
            session_id=sid,
            title=f"Sedation record {sid}",
            subject=f"Review of recorded monitoring data, session {sid}",
            version=__version__,
            invariant=epoch is not None,
        )
        doc.build(story, canvasmaker=numbered_canvas(sid, __version__))
        if json_text is not None:
            tmp_json = extra.enter_context(atomic_output(json_path))
            tmp_json.write_text(json_text, encoding="utf-8")
    return target
