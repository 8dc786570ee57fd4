"""The doses table (with per-kg and cumulative totals per drug) and the episode table."""

from __future__ import annotations

import math

from reportlab.lib.styles import ParagraphStyle
from reportlab.platypus import Paragraph, Table, TableStyle

from sedreport.analysis import Analysis
from sedreport.episodes.model import DrugTotal, Episode
from sedreport.render import styles
from sedreport.render.fmt import (
    DASH,
    amount_text,
    clock_text,
    duration_text,
    number_text,
    per_kg_text,
    severity_text,
    significant_text,
    words,
)
from sedreport.render.glossary import TermMark, dose_terms, standard_terms
from sedreport.render.marks import dose_keys
from sedreport.render.styles import para_text
from sedreport.session import Dose, Session

#: Cell styles that wrap on words only: a word is never broken mid-word ("moderat/e"), so
#: column widths must fit the longest word. Hashes (``styles.MONO``) may still break.
_WORD_WRAPPED: dict[str, ParagraphStyle] = {}


def word_wrapped(style: ParagraphStyle) -> ParagraphStyle:
    """``style`` with long-word splitting off (text cells); the monospaced style unchanged."""
    if style is styles.MONO:
        return style
    if style.name not in _WORD_WRAPPED:
        _WORD_WRAPPED[style.name] = ParagraphStyle(
            f"{style.name}_words", parent=style, splitLongWords=0
        )
    return _WORD_WRAPPED[style.name]


def cell(text: object, style=styles.CELL) -> Paragraph:
    """A table cell paragraph (escaped, WinAnsi-safe), wrapped on words only; ``<br/>`` joins
    given lines."""
    style = word_wrapped(style)
    if isinstance(text, list | tuple):
        return Paragraph("<br/>".join(para_text(t) for t in text) or DASH, style)
    return Paragraph(para_text(text), style)


def grid_table(
    rows: list[list], widths: list[float], repeat: int = 1, terms: dict[str, str] | None = None
) -> Table:
    """A table with a shaded heading row, light rules and a repeated heading on new pages.

    ``terms`` are abbreviations the table shows; a :class:`TermMark` in the first heading cell
    names them on every page the table reaches (the heading repeats).
    """
    if terms:
        rows = [[[rows[0][0], TermMark(terms)], *rows[0][1:]], *rows[1:]]
    table = Table(rows, colWidths=widths, repeatRows=repeat, hAlign="LEFT")
    table.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("BACKGROUND", (0, 0), (-1, repeat - 1), styles.HEAD_FILL),
                ("LINEBELOW", (0, 0), (-1, -1), 0.3, styles.GRID),
                ("LINEBELOW", (0, repeat - 1), (-1, repeat - 1), 0.6, styles.AXIS),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
                ("LEFTPADDING", (0, 0), (-1, -1), 2),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return table


def scaled(fractions: list[float], width_pt: float) -> list[float]:
    """Column widths from fractions of the frame width."""
    total = sum(fractions)
    return [width_pt * f / total for f in fractions]


def _is_mcg(unit: str) -> bool:
    return unit.lower().startswith(("mcg", "ug", "\u00b5g"))


def display_unit(doses: list[Dose]) -> tuple[str, float]:
    """Unit in which a drug's amounts are shown, and its factor from mg.

    The boluses decide: ``mcg`` when every bolus was written in mcg, else ``mg``. A drug given
    only by infusion is shown in ``mcg`` when its rates were written in mcg and its whole
    amount stays below 1 mg, else in ``mg``.
    """
    boluses = [d for d in doses if d.kind == "bolus"]
    if boluses:
        return ("mcg", 1000.0) if all(_is_mcg(d.unit) for d in boluses) else ("mg", 1.0)
    if doses and all(_is_mcg(d.unit) for d in doses):
        return ("mcg", 1000.0) if _infusion_mg(doses) < 1.0 else ("mg", 1.0)
    return "mg", 1.0


def _infusion_mg(doses: list[Dose]) -> float:
    """Amount in mg of piecewise-constant infusion lines up to the last line."""
    lines = sorted(doses, key=lambda d: d.time_s)
    return sum(
        d.rate_mg_per_h * (nxt.time_s - d.time_s) / 3600.0
        for d, nxt in zip(lines, lines[1:], strict=False)
    )


def totals_end_s(analysis: Analysis) -> tuple[float, str]:
    """Time up to which totals are summed and how that time was chosen."""
    end = analysis.summary.sedation_end_s
    if isinstance(end, int | float) and math.isfinite(end):
        return float(end), "end of sedation"
    return analysis.session.span_s()[1], "end of the recorded data"


def _per_kg(d: Dose, unit: str, factor: float, weight: float | None) -> str:
    if not weight or (d.kind != "bolus" and d.rate_mg_per_h == 0):
        return DASH
    if d.kind == "bolus":
        return per_kg_text(d.amount_mg * factor / weight, f"{unit}/kg")
    return per_kg_text(d.rate_mg_per_h * factor / weight, f"{unit}/kg/h")


def line_end_s(session: Session, d: Dose, end_s: float) -> float:
    """When an infusion line stops: the next line of the same drug, else ``end_s``."""
    later = [
        x.time_s
        for x in session.doses
        if x.drug == d.drug and x.kind == "infusion" and (x.time_s, x.line) > (d.time_s, d.line)
    ]
    return min(later) if later else max(end_s, d.time_s)


def amount_lines(session: Session, d: Dose, end_s: float) -> list[str]:
    """Absolute amount of a dose line: a bolus in its drug's unit, an infusion in mg/h with
    what that line gave until the next line of the drug (or ``end_s``)."""
    unit, factor = display_unit([x for x in session.doses if x.drug == d.drug])
    if d.kind == "bolus":
        return [amount_text(d.amount_mg * factor, unit)]
    if d.rate_mg_per_h == 0:
        return ["stopped"]
    stop_s = line_end_s(session, d, end_s)
    given = d.rate_mg_per_h * (stop_s - d.time_s) / 3600.0 * factor
    return [
        f"{significant_text(d.rate_mg_per_h, 3)} mg/h",
        f"{amount_text(given, unit)} over {duration_text(stop_s - d.time_s)}",
    ]


def dose_rows(session: Session, end_s: float | None = None) -> list[list]:
    """One row a dose line: key, time, drug, dose as written, route, type, absolute amount
    (mg/h and amount given for an infusion line), per kg, cumulative."""
    weight = session.patient.weight_kg
    end = session.span_s()[1] if end_s is None else end_s
    keys = dose_keys(session)
    rows = []
    for d in sorted(session.doses, key=lambda x: (x.time_s, x.line)):
        unit, factor = display_unit([x for x in session.doses if x.drug == d.drug])
        cumulative = float(session.cumulative_mg(d.drug, d.time_s)) * factor
        kind = (
            "bolus"
            if d.kind == "bolus"
            else ("infusion stop" if d.rate_mg_per_h == 0 else "infusion rate")
        )
        rows.append(
            [
                cell(keys[d], styles.CELL_BOLD),
                cell(clock_text(session, d.time_s)),
                cell(d.drug),
                cell(f"{d.dose:g} {d.unit}"),
                cell(d.route or DASH),
                cell(kind),
                cell(amount_lines(session, d, end)),
                cell(_per_kg(d, unit, factor, weight)),
                cell(amount_text(cumulative, unit)),
            ]
        )
    return rows


def drug_totals(analysis: Analysis) -> list[dict]:
    """Per drug: display unit, bolus count, bolus total, infusion total, total and per kg."""
    s = analysis.session
    end_s, _ = totals_end_s(analysis)
    weight = s.patient.weight_kg
    out = []
    for drug in s.drugs:
        lines = [d for d in s.doses if d.drug == drug]
        unit, factor = display_unit(lines)
        bolus = sum(d.amount_mg for d in lines if d.kind == "bolus") * factor
        total = float(s.cumulative_mg(drug, end_s)) * factor
        out.append(
            {
                "drug": drug,
                "unit": unit,
                "n_bolus": sum(d.kind == "bolus" for d in lines),
                "bolus": bolus,
                "infusion": max(total - bolus, 0.0),
                "total": total,
                "per_kg": total / weight if weight else None,
            }
        )
    return out


def dose_flowables(analysis: Analysis, width_pt: float) -> list:
    """Doses heading, one row per dose line, and totals per drug."""
    s = analysis.session
    out: list = [Paragraph("Doses", styles.H1)]
    if s.source("doses") is None and not s.doses:
        out.append(
            Paragraph("No dose log was given for this session: no doses are shown.", styles.BODY)
        )
        return out
    if not s.doses:
        out.append(Paragraph("The dose log holds no doses.", styles.BODY))
        return out
    end_s, why = totals_end_s(analysis)
    head = [
        cell(h, styles.CELL_BOLD)
        for h in (
            "Key",
            "Time",
            "Drug",
            "Dose as written",
            "Route",
            "Type",
            "Amount",
            "Per kg",
            "Cumulative",
        )
    ]
    out.append(
        Paragraph(
            para_text(
                "D1, D2... are the keys of the dose marks on the trend strips and close-ups. "
                "An infusion line runs at its rate until the next line of the drug (or "
                f"{clock_text(s, end_s)}, {why}); 'Amount' is what it gave in that time."
            ),
            styles.SMALL_KEEP,
        )
    )
    out.append(
        grid_table(
            [head] + dose_rows(s, end_s),
            scaled([0.4, 0.85, 1.0, 1.15, 0.5, 1.0, 1.95, 1.1, 0.9], width_pt),
            terms=dose_terms(s.doses),
        )
    )
    out.append(Paragraph("Totals per drug", styles.H2))
    out.append(
        Paragraph(
            para_text(
                f"Summed up to {clock_text(s, end_s)} ({why}); infusions integrated at the written "
                "rate until the next rate line."
            ),
            styles.SMALL_KEEP,
        )
    )
    head = [
        cell(h, styles.CELL_BOLD)
        for h in ("Drug", "Boluses", "Bolus total", "Infusion total", "Total", "Total per kg")
    ]
    rows = [head]
    for t in drug_totals(analysis):
        rows.append(
            [
                cell(t["drug"]),
                cell(str(t["n_bolus"])),
                cell(amount_text(t["bolus"], t["unit"])),
                cell(amount_text(t["infusion"], t["unit"])),
                cell(amount_text(t["total"], t["unit"]), styles.CELL_BOLD),
                cell(
                    per_kg_text(t["per_kg"], f"{t['unit']}/kg")
                    if t["per_kg"] is not None
                    else "- (no weight)"
                ),
            ]
        )
    out.append(
        grid_table(
            rows, scaled([1.3, 0.8, 1.2, 1.2, 1.2, 1.3], width_pt), terms=dose_terms(s.doses)
        )
    )
    return out


def worst_lines(ep: Episode) -> list[str]:
    """Worst values of an episode, one per line. An apnoea says how long there was no breath
    (the rate of the breath that ended it says nothing about the pause)."""
    lines = []
    if ep.kind == "apnoea":
        lines.append(f"no breath for {duration_text(ep.duration_s)}")
    if ep.peak_etco2_mmHg is not None:
        lines.append(f"EtCO2 max {number_text(ep.peak_etco2_mmHg, 0)} mmHg")
    if ep.min_spo2_pct is not None:
        lines.append(f"SpO2 min {number_text(ep.min_spo2_pct, 0)} %")
    if ep.min_rr_per_min is not None and ep.kind != "apnoea":
        lines.append(f"RR min {number_text(ep.min_rr_per_min, 1)} /min")
    return lines or [DASH]


def key_lookup(session: Session) -> dict[tuple[float, str], str]:
    """Dose keys (``D1``...) by (time on the session clock, drug), for linked doses."""
    return {(d.time_s, d.drug): k for d, k in dose_keys(session).items()}


def dose_lines(ep: Episode, keys: dict[tuple[float, str], str] | None = None) -> list[str]:
    """Drugs around the onset: boluses in the look-back (amount as written, minutes before),
    infusions running at onset (rate as written and in mg/h), doses given during the episode,
    and each drug's cumulative mg and mg/kg at onset. With ``keys`` (:func:`key_lookup`), a
    bolus or dose during starts with its dose-table key (``D2 propofol 40 mg``)."""
    keys = keys or {}

    def key(d) -> str:
        k = keys.get((d.time_s, d.drug))
        return f"{k} " if k else ""

    lines = [
        f"{key(d)}{d.drug} {d.dose:g} {d.unit}, {d.seconds_before_onset / 60:.1f} min before"
        for d in ep.preceding_doses
        if d.kind == "bolus"
    ] or ["no bolus in look-back"]
    lines += [
        f"running: {i.drug} {i.rate:g} {i.unit} ({significant_text(i.rate_mg_per_h)} mg/h)"
        for i in ep.infusions_at_onset
    ]
    lines += [
        f"during: {key(d)}{d.drug} {d.dose:g} {d.unit} {offset_text(-d.seconds_before_onset)}"
        for d in ep.doses_during
    ]
    lines += [f"total at onset: {total_text(t)}" for t in ep.cumulative_at_onset]
    return lines


def total_text(t: DrugTotal) -> str:
    """A drug's cumulative amount and per-kg amount; under 1 mg in mcg (``50 mcg (0.61
    mcg/kg)``), as doses of such drugs are written."""
    factor, unit = (1000.0, "mcg") if t.cumulative_mg < 1.0 else (1.0, "mg")
    text = f"{t.drug} {amount_text(t.cumulative_mg * factor, unit)}"
    if t.cumulative_mg_per_kg:
        text += f" ({per_kg_text(t.cumulative_mg_per_kg * factor, f'{unit}/kg')})"
    return text


def offset_text(seconds_after_onset: float) -> str:
    """``at +20 s`` after onset, or ``13 s before onset`` for a negative offset."""
    if seconds_after_onset < 0:
        return f"{duration_text(-seconds_after_onset)} before onset"
    return f"at +{duration_text(seconds_after_onset)}"


def intervention_lines(ep: Episode) -> list[str]:
    """Interventions with their timing relative to onset."""
    out = []
    for i in ep.interventions:
        value = f" ({i.value:g})" if i.value is not None else ""
        out.append(f"{words(i.event)}{value} {offset_text(i.seconds_after_onset)}")
    return out or ["none"]


#: Stream names as a person writes them (a signal_loss subtype names its stream).
STREAM_WORDS: dict[str, str] = {"co2": "CO2", "spo2": "SpO2"}


def episode_row(session: Session, ep: Episode) -> list:
    """One episode-table row."""
    subtype = STREAM_WORDS.get(ep.subtype, ep.subtype) if ep.subtype else ""
    kind = ep.kind + (f" ({subtype})" if subtype else "")
    lead = DASH if ep.capnographic_lead_s is None else duration_text(ep.capnographic_lead_s)
    return [
        cell(ep.id, styles.CELL_BOLD),
        cell(words(kind)),
        cell(clock_text(session, ep.start_s)),
        cell(duration_text(ep.duration_s)),
        cell(worst_lines(ep)),
        cell(dose_lines(ep, key_lookup(session))),
        cell(intervention_lines(ep)),
        cell(duration_text(ep.time_to_resolution_s)),
        cell(lead),
        cell([ep.event, severity_text(ep.severity)] if ep.event else "finding", styles.CELL_BOLD),
    ]


def episode_flowables(analysis: Analysis, width_pt: float) -> list:
    """Episode table and the notes of each episode."""
    out: list = [Paragraph("Respiratory episodes", styles.H1)]
    if not analysis.episodes:
        out.append(
            Paragraph(
                para_text(
                    f"No episode met the criteria of '{analysis.criteria.name}' in the recorded data."
                ),
                styles.BODY,
            )
        )
        return out
    head = [
        cell(h, styles.CELL_BOLD)
        for h in (
            "ID",
            "Kind",
            "Start",
            "Duration",
            "Worst values",
            "Drugs (look-back, running, during, total)",
            "Interventions (from onset)",
            "Resolved after",
            "CO2 lead",
            "Event",
        )
    ]
    rows = [head] + [episode_row(analysis.session, ep) for ep in analysis.episodes]
    terms = standard_terms("CO2", "EtCO2", "SpO2", "RR", "E1, E2")
    terms |= dose_terms(d for ep in analysis.episodes for d in ep.preceding_doses)
    widths = scaled([0.4, 1.5, 0.8, 0.8, 1.6, 1.75, 1.9, 0.85, 0.8, 0.95], width_pt)
    out.append(grid_table(rows, widths, terms=terms))
    out.append(
        Paragraph(
            "'Event': the adverse event the episode belongs to, with its tier; 'finding' means "
            "listed, not an adverse event. 'CO2 lead': from the apnoea or hypoventilation onset "
            "to the first SpO2 below the threshold. '+24 s' is after onset.",
            styles.SMALL,
        )
    )
    noted = [ep for ep in analysis.episodes if ep.notes]
    if noted:
        out.append(Paragraph("Episode notes", styles.H2))
        for ep in noted:
            out.append(
                Paragraph(
                    f"<b>{para_text(ep.id)}</b> " + para_text(" ".join(ep.notes)), styles.SMALL
                )
            )
        out.append(TermMark(standard_terms("CO2", "EtCO2", "FiCO2", "SpO2", "RR")))
    return out
