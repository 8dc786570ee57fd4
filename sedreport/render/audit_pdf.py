"""The committee audit PDF (``sedreport audit -o FILE.pdf``): :func:`render_audit`.

Sections: headline and cautions, overall rates (with a second criteria set and published
reference rates beside them when given), monitoring and response measures, rates by stratum,
funnel plots, p-chart and CUSUM, the case list for review, exclusions, method notes with
sources. Every page carries "sedation audit · page x of y · sedreport version".
"""

from __future__ import annotations

import os
from datetime import UTC, datetime

from reportlab.platypus import BaseDocTemplate, Frame, PageTemplate, Paragraph, Spacer

from sedreport._version import __version__
from sedreport.audit.rates import ADVERSE, RateRow
from sedreport.audit.reference import ReferenceRate, load_reference_rates
from sedreport.audit.report import Audit
from sedreport.render import styles
from sedreport.render.atomic import atomic_output
from sedreport.render.audit_charts import cusum_drawing, funnel_chart, p_chart_drawing
from sedreport.render.audit_methods import method_notes
from sedreport.render.cautions import load_cautions
from sedreport.render.pages import numbered_canvas
from sedreport.render.styles import para_text
from sedreport.render.tables import cell, grid_table, scaled

DASH = "-"
#: Columns of the by-stratum tables: (kind, severity, heading).
STRATUM_COLUMNS: tuple[tuple[str, str, str], ...] = (
    (ADVERSE, "any", "adverse event, any tier"),
    (ADVERSE, "moderate", "moderate event"),
    (ADVERSE, "sentinel", "sentinel event"),
    ("apnoea", "any", "apnoea"),
    ("hypoventilation", "any", "hypoventilation"),
    ("desaturation", "any", "desaturation"),
)
FIELD_WORDS = {
    "area": "area",
    "procedure": "procedure",
    "asa_class": "ASA class",
    "target_depth": "target depth",
    "regimen": "drug regimen (agents given)",
    "provider": "sedation provider",
    "month": "month",
}


def _p(text: str, style=styles.BODY) -> Paragraph:
    return Paragraph(para_text(text), style)


def rate_text(r: RateRow) -> str:
    """``k/n  rate per 1,000 (Wilson low-high)`` of a row."""
    p = r.proportion
    if r.sessions == 0:
        return DASH
    text = f"{r.sessions_with_event}/{r.sessions}: {1000 * p.rate:.1f} ({1000 * p.wilson_low:.1f}-{1000 * p.wilson_high:.1f})"
    return text


def _outcome_words(kind: str, severity: str) -> str:
    if kind == ADVERSE:
        return f"adverse event, {severity} tier" if severity != "any" else "adverse event, any tier"
    return kind.replace("_", " ")


def _headline(audit: Audit, run, job) -> list:
    period = f"{(audit.first_started or '')[:10]} to {(audit.last_started or '')[:10]}"
    ae = next(r for r in audit.rows if r.by == "all" and (r.kind, r.severity) == (ADVERSE, "any"))
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    made = datetime.fromtimestamp(int(epoch), UTC) if epoch else datetime.now(UTC)
    out = [
        Paragraph("Sedation committee audit", styles.TITLE),
        _p(
            f"{audit.sessions} sedation(s) analysed, {period}; {len(audit.excluded)} excluded "
            f"\u00b7 criteria: {', '.join(audit.criteria) or DASH} \u00b7 made "
            f"{made:%Y-%m-%d %H:%M} UTC by sedreport {__version__}",
            styles.SUBTITLE,
        ),
        _p(
            f"Sessions with at least one adverse event (World SIVA, any tier): {rate_text(ae)} "
            "per 1,000 sedations (95 % Wilson interval). "
            + (
                "No adverse event is graded in these records: the counts below are episodes. "
                if ae.events == 0
                else ""
            )
            + f"The charts follow {_outcome_words(*audit.event)}. Cases with a moderate or "
            f"sentinel event: {len(audit.cases)} (listed for review).",
        ),
    ]
    if run is not None:
        out.append(
            _p(
                f"This run: {run.analysed} analysed now, {run.reused} taken from the register, "
                f"{run.failed} failed now; {run.outside_period} outside the period.",
                styles.SMALL,
            )
        )
    for title, text in load_cautions(key="audit_cautions")[:2]:
        out.append(_p(f"{title}. {text}", styles.SMALL))
    return out


def _overall(audit: Audit, width: float, compare: Audit | None, reference) -> list:
    head = [
        "outcome",
        "sessions with it / sessions: per 1,000 (95 % Wilson)",
        "exact 95 %",
        "events",
    ]
    fr = [2.2, 3.0, 1.4, 0.8]
    if compare is not None:
        head.append(f"second criteria ({', '.join(compare.criteria)})")
        fr.append(2.6)
    if reference:
        head.append("published reference (per 1,000)")
        fr.append(3.2)
    other = {(r.kind, r.severity): r for r in (compare.rows if compare else ()) if r.by == "all"}
    rows = [[cell(h, styles.CELL_BOLD) for h in head]]
    for r in (r for r in audit.rows if r.by == "all"):
        p = r.proportion
        exact = f"{1000 * p.exact_low:.1f}-{1000 * p.exact_high:.1f}"
        if p.rule_of_three_high is not None:
            exact += f"; rule of three < {1000 * p.rule_of_three_high:.1f}"
        line = [_outcome_words(r.kind, r.severity), rate_text(r), exact, str(r.events)]
        if compare is not None:
            o = other.get((r.kind, r.severity))
            line.append(rate_text(o) if o else DASH)
        if reference:
            refs = [x for x in reference if (x.kind, x.severity) == (r.kind, r.severity)]
            line.append([_reference_text(x) for x in refs] or DASH)
        rows.append([cell(x) for x in line])
    return [
        Paragraph("Rates per 1,000 sedations, all sessions", styles.H1),
        grid_table(rows, scaled(fr, width)),
    ]


def _reference_text(x: ReferenceRate) -> str:
    ci = f" ({x.low_per_1000:g}-{x.high_per_1000:g})" if x.low_per_1000 is not None else ""
    memo = ", from memory" if x.from_memory else ""
    return f"{x.per_1000:g}{ci}, {x.estimate}; {x.source}{memo}"


def _measures(audit: Audit) -> list:
    m = audit.measures

    def num(v, unit):
        return DASH if v is None else f"{v:.0f} {unit}"

    return [
        Paragraph("Monitoring and response", styles.H1),
        _p(
            f"Capnography recorded in {m.with_capnography} of {m.sessions} sessions; median CO2 "
            f"coverage of the sedation window {num(m.median_co2_coverage_pct, '%')}. Median "
            f"capnographic lead time over desaturation {num(m.median_capnographic_lead_s, 's')} "
            f"({m.lead_episodes} episode(s) with a lead). Median time from an episode's onset to "
            f"the first intervention {num(m.median_time_to_intervention_s, 's')} "
            f"({m.intervention_episodes} episode(s) with an intervention)."
        ),
    ]


def _strata(audit: Audit, width: float) -> list:
    out: list = []
    index = {(r.by, r.group, r.kind, r.severity): r for r in audit.rows}
    for field in audit.by:
        groups = sorted({r.group for r in audit.rows if r.by == field})
        head = [FIELD_WORDS[field], "sessions", *(h for _, _, h in STRATUM_COLUMNS)]
        rows = [[cell(h, styles.CELL_BOLD) for h in head]]
        for g in groups:
            n = index[(field, g, ADVERSE, "any")].sessions
            line = [g, str(n)]
            for kind, sev, _ in STRATUM_COLUMNS:
                r = index.get((field, g, kind, sev))
                line.append(rate_text(r) if r else DASH)
            rows.append([cell(x) for x in line])
        out += [
            Paragraph(f"By {FIELD_WORDS[field]}", styles.H2),
            grid_table(rows, scaled([2.2, 0.9, *[1.5] * len(STRATUM_COLUMNS)], width)),
        ]
    if out:
        out.insert(0, Paragraph("Rates by stratum (k/n: per 1,000, 95 % Wilson)", styles.H1))
        out.insert(
            1, _p("Strata with few sessions have wide intervals; see the cautions.", styles.SMALL)
        )
    return out


def _charts(audit: Audit, width: float) -> list:
    what = _outcome_words(*audit.event)
    out: list = [Paragraph(f"Funnel plots and control charts: {what}", styles.H1)]
    if audit.p_chart is None or sum(audit.p_chart.k) == 0:
        return out + [
            _p(
                f"No session in this audit had {what}, so there is nothing to chart; the upper "
                "bound of its rate is in the table above. Choose another outcome with --event "
                "(an episode kind, or adverse_event:TIER)."
            )
        ]
    for f in audit.funnels:
        outside = f.outside[0.998]
        note = ", ".join(outside) if outside else "none"
        out += [
            Paragraph(f"Funnel plot by {FIELD_WORDS[f.field]}", styles.H2),
            funnel_chart(f, width),
            _p(
                f"Overall rate {1000 * f.p0:.1f} per 1,000. Outside the 99.8 % limits: {note}; "
                f"outside the 95 % limits: {', '.join(f.outside[0.95]) or 'none'}. A point outside "
                "is a reason to look at its cases and case mix, not a verdict. Units inside the 95 % "
                "limits are not named on the chart (their rates are in the tables).",
                styles.SMALL,
            ),
        ]
    if audit.p_chart is not None:
        c = audit.p_chart
        out += [
            Paragraph("Month by month (p-chart, 3-sigma limits)", styles.H2),
            p_chart_drawing(c, width),
            _p(
                f"Months outside the limits: {', '.join(c.out_of_control) or 'none'}.", styles.SMALL
            ),
        ]
    if audit.cusum is not None:
        c = audit.cusum
        where = ", ".join(audit.cusum_labels[i] for i in c.signals) or "none"
        adj = (
            "risk-adjusted by ASA class and target depth"
            if c.risk_adjusted
            else "not risk-adjusted"
        )
        out += [
            Paragraph(f"Bernoulli CUSUM ({adj})", styles.H2),
            cusum_drawing(c, width),
            _p(
                f"Tuned to a doubling of the odds (odds ratio {c.odds_ratio:g}), limit h = "
                f"{c.threshold:g}. Signals at sessions: {where}.",
                styles.SMALL,
            ),
        ]
    return out


def _cases(audit: Audit, width: float) -> list:
    out: list = [Paragraph("Case list for review (moderate and sentinel events)", styles.H1)]
    if not audit.cases:
        return out + [_p("No session has a moderate or sentinel adverse event.")]
    rows = [
        [
            cell(h, styles.CELL_BOLD)
            for h in ("session", "started", "area / provider", "worst", "events", "session folder")
        ]
    ]
    for c in audit.cases:
        rows.append([cell(c.session_id), cell(c.started[:16]), cell(f"{c.area} / {c.provider}"), cell(c.worst), cell(list(c.events)), cell(c.path)])  # fmt: skip
    return out + [grid_table(rows, scaled([1.1, 1.2, 1.5, 0.8, 2.6, 2.8], width))]


def _excluded(audit: Audit, width: float) -> list:
    out: list = [Paragraph("Excluded sessions", styles.H1)]
    if not audit.excluded:
        return out + [_p("None: every session found was analysed.")]
    rows = [[cell(h, styles.CELL_BOLD) for h in ("session", "reason", "folder")]]
    rows += [[cell(s), cell(e), cell(p)] for s, p, e in audit.excluded]
    return out + [grid_table(rows, scaled([1.2, 4.0, 2.8], width))]


def _methods() -> list:
    out: list = [Paragraph("Methods and sources", styles.H1)]
    for title, text in method_notes():
        out.append(_p(f"{title}. {text}", styles.SMALL))
        out.append(Spacer(1, 2))
    out.append(Paragraph("Cautions", styles.H1))
    for title, text in load_cautions(key="audit_cautions"):
        out.append(_p(f"{title}. {text}", styles.SMALL))
    return out


def audit_flowables(audit: Audit, width: float, *, run=None, compare=None, reference=()) -> list:
    """Every flowable of the audit document, in order."""
    return [
        *_headline(audit, run, None),
        *_overall(audit, width, compare, reference),
        *_measures(audit),
        *_strata(audit, width),
        *_charts(audit, width),
        *_cases(audit, width),
        *_excluded(audit, width),
        *_methods(),
    ]


def render_audit(
    audit: Audit, path, *, run=None, compare: Audit | None = None, job=None, paper: str = "a4"
):
    """Write the audit PDF atomically; returns the path.

    ``job.reference_path`` (when given) names a reference-rate YAML to show beside the rates.
    With ``SOURCE_DATE_EPOCH`` set the same inputs give the same bytes.
    """
    reference = load_reference_rates(job.reference_path) if job and job.reference_path else ()
    paper = job.paper if job else paper
    width, height = styles.page_size(paper)
    m = styles.MARGIN_PT
    invariant = bool(os.environ.get("SOURCE_DATE_EPOCH"))
    with atomic_output(path) as tmp:
        doc = BaseDocTemplate(
            str(tmp), pagesize=(width, height), leftMargin=m, rightMargin=m, topMargin=m,
            bottomMargin=m + 14, title="Sedation committee audit", author=f"sedreport {__version__}",
            creator=f"sedreport {__version__}", invariant=1 if invariant else 0,
        )  # fmt: skip
        frame = Frame(m, m + 14, width - 2 * m, height - 2 * m - 14, id="body")
        doc.addPageTemplates([PageTemplate(id="page", frames=[frame])])
        story = audit_flowables(audit, width - 2 * m, run=run, compare=compare, reference=reference)
        doc.build(
            story,
            canvasmaker=numbered_canvas("sedation audit", __version__, "Sedation committee audit"),
        )
    return path
