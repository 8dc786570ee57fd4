"""The adverse-events table of the record (World SIVA grading) and the brief SpO2 dips.

An adverse event is linked episodes graded once after the World SIVA adverse sedation event
tool (Mason et al., Br J Anaesth 2012): the highest of its descriptors, interventions and
outcome. Episodes that are findings, not adverse events, stay in the episode table only.
"""

from __future__ import annotations

import numpy as np
from reportlab.platypus import Paragraph

from sedreport.analysis import Analysis
from sedreport.episodes.model import AdverseEvent
from sedreport.render import styles
from sedreport.render.fmt import DASH, clock_text, duration_text, number_text, words
from sedreport.render.glossary import standard_terms
from sedreport.render.styles import para_text
from sedreport.render.tables import cell, grid_table, offset_text, scaled


def _tier(tier: str | None) -> str:
    return f" ({tier})" if tier else " (no tier)"


def event_row(analysis: Analysis, ev: AdverseEvent) -> list:
    """One row: id, start, episodes, descriptors, interventions, outcome, lead, tier."""
    kinds = {e.id: words(e.kind) for e in analysis.episodes}
    episodes = [f"{i} {kinds.get(i, '')}".strip() for i in ev.episodes] or ["none"]
    descriptors = [d.text + _tier(d.tier) for d in ev.descriptors] or [DASH]
    acts = [
        f"{words(i.event)} {offset_text(i.seconds_after_onset)}{_tier(i.tier)}"
        for i in ev.interventions
    ] or ["none (minimal)"]
    outcome = [words(o.text) + _tier(o.tier) for o in ev.outcome] or ["no adverse outcome"]
    lead = DASH if ev.capnographic_lead_s is None else duration_text(ev.capnographic_lead_s)
    return [
        cell(ev.id, styles.CELL_BOLD),
        cell(clock_text(analysis.session, ev.start_s)),
        cell(episodes),
        cell(descriptors),
        cell(acts),
        cell(outcome),
        cell(lead),
        cell(ev.severity, styles.CELL_BOLD),
    ]


def event_flowables(analysis: Analysis, width_pt: float) -> list:
    """The adverse-events heading, table and explanation; the brief SpO2 dips after it."""
    out: list = [Paragraph("Adverse events", styles.H1)]
    if analysis.events:
        head = [
            cell(h, styles.CELL_BOLD)
            for h in (
                "ID",
                "Start",
                "Episodes",
                "Descriptors (tier)",
                "Interventions (tier)",
                "Outcome",
                "CO2 lead",
                "Tier",
            )
        ]
        rows = [head] + [event_row(analysis, ev) for ev in analysis.events]
        widths = scaled([0.4, 0.75, 1.2, 2.4, 2.3, 1.2, 0.7, 0.7], width_pt)
        out.append(grid_table(rows, widths, terms=standard_terms("CO2", "SpO2", "E1, E2")))
    else:
        out.append(Paragraph("No adverse event in the recorded data.", styles.BODY))
    out.append(
        Paragraph(
            para_text(
                "Linked episodes (overlapping, or within "
                f"{analysis.criteria.events.link_window_s:g} s of the previous end) graded once "
                "by the highest of descriptor, intervention and outcome tier (World SIVA tool, "
                "Mason et al., Br J Anaesth 2012). A gap, a sloped plateau or rebreathing with no "
                "graded intervention is a finding, not an adverse event."
            ),
            styles.SMALL,
        )
    )
    out += dip_flowables(analysis)
    return out


def dip_flowables(analysis: Analysis) -> list:
    """Brief SpO2 dips: below the threshold, shorter than the listing minimum, not below the
    severe level; listed here so that none is dropped silently."""
    if not analysis.brief_dips:
        return []
    c = analysis.criteria.desaturation
    lines = [
        f"{clock_text(analysis.session, d.start_s)}: lowest {number_text(d.min_spo2_pct, 0, '%')}"
        f" for {duration_text(d.duration_s)}"
        + ("" if d.observed else " (fall or recovery not recorded)")
        for d in analysis.brief_dips
    ]
    text = (
        f"Brief SpO2 dips below {c.spo2_below_pct:g} %, listed, not episodes (shorter than the "
        f"{c.min_duration_s:g} s listing minimum and not below {c.severe_below_pct:g} %, or "
        "not seen to fall and recover): " + "; ".join(lines) + "."
    )
    return [Paragraph(para_text(text), styles.SMALL)]


def rr_for_strip(analysis: Analysis) -> tuple[np.ndarray, np.ndarray]:
    """The RR trend as drawn: zero across every apnoea episode (no breath means a rate of
    zero, whatever the trailing window still counts), unchanged elsewhere."""
    t = np.asarray(analysis.trends.rr_time_s, dtype=float)
    rr = np.array(analysis.trends.rr_per_min, dtype=float)
    for e in analysis.episodes:
        if e.kind == "apnoea":
            rr[(t >= e.start_s) & (t <= e.end_s)] = 0.0
    return t, rr


def rr_window_text(analysis: Analysis) -> str:
    """How the drawn rate was taken, for the strip's label."""
    return f"trailing {analysis.trends.rr_window_s:g} s window; 0 across apnoea"
