"""Data-quality section: sources, missing streams, gaps and findings, warnings, criteria used."""

from __future__ import annotations

from reportlab.platypus import CondPageBreak, Paragraph

from sedreport.analysis import Analysis
from sedreport.render import styles
from sedreport.render.fmt import DASH, clock_text, number_text, words
from sedreport.render.glossary import standard_terms, unit_terms
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
    widths = scaled([0.6, 1.3, 0.6, 0.6, 0.65, 0.7, 1.6, 1.3], width_pt)
    conversions = [src.conversion for src in analysis.session.sources]
    return grid_table(rows, widths, terms=standard_terms("CO2", "SpO2") | unit_terms(conversions))


def findings_flowables(analysis: Analysis, width_pt: float) -> list:
    """Findings (gaps by the criteria's gap rule, streams that do not overlap...) and warnings."""
    s, q = analysis.session, analysis.quality
    out: list = [
        Paragraph(
            para_text(
                f"Gap rule (criteria {q.criteria.name}): a CO2 sample step longer than "
                f"{q.co2_gap_s:g} s or an SpO2 step longer than {q.spo2_gap_s:g} s is a gap; "
                "gaps are shown as gaps and never filled in."
            ),
            styles.BODY,
        )
    ]
    if q.findings:
        head = [cell(h, styles.CELL_BOLD) for h in ("Finding", "Stream", "When", "What")]
        rows = [head]
        for f in q.findings:
            when = DASH
            if f.start_s is not None:
                end = f" to {clock_text(s, f.end_s)}" if f.end_s is not None else ""
                when = clock_text(s, f.start_s) + end
            rows.append([cell(words(f.kind)), cell(f.source), cell(when), cell(f.message)])
        out.append(grid_table(rows, scaled([0.8, 0.6, 1.4, 4.0], width_pt)))
    else:
        out.append(Paragraph("No gaps, dropped rows or clock problems were found.", styles.BODY))
    for w in q.warnings:
        out.append(Paragraph(para_text(f"\u2022 Warning: {w}"), styles.BODY))
    return out


#: What the reader should do about each CO2 signal finding.
CO2_SIGNAL_TEXT: dict[str, str] = {
    "low_amplitude": "Low-amplitude capnogram: mouth breathing, a displaced cannula or shallow "
    "breathing - check against the clinical notes",
    "co2_signal_absent": "No CO2 signal: disconnected or displaced line, or apnoea - check",
}


def co2_signal_flowables(analysis: Analysis) -> list:
    """Low-amplitude and absent-CO2 stretches: when, how long, and their share of the window."""
    s, summ = analysis.session, analysis.summary
    out: list = []
    shares = {
        "low_amplitude": summ.co2_low_amplitude_pct,
        "co2_signal_absent": summ.co2_signal_absent_pct,
    }
    for kind, text in CO2_SIGNAL_TEXT.items():
        eps = [e for e in analysis.episodes if e.kind == kind]
        if not eps:
            continue
        when = ", ".join(
            f"{e.id} {clock_text(s, e.start_s)} to {clock_text(s, e.end_s)} ({e.duration_s:.0f} s)"
            for e in eps
        )
        share = shares[kind]
        pct = f"; {share:.1f} % of the sedation window" if share is not None else ""
        out.append(Paragraph(para_text(f"\u2022 {text}: {when}{pct}."), styles.BODY))
    return out


def _invalid_text(count: int, by_reason: dict[str, int]) -> str:
    """``3 (short 2, low plateau 1)``, or ``0``."""
    detail = ", ".join(f"{words(str(k))} {v}" for k, v in by_reason.items())
    return f"{count}" + (f" ({detail})" if detail else "")


def _value_text(value: float, unit: str) -> str:
    if value is None or value != value:
        return "switched off"
    unit = UNIT_WORDS.get(unit, unit)
    return f"{value:g}{unit}" if unit == "x" else f"{value:g} {unit}"


#: Space (pt) the criteria heading needs below it (its sentence and the first rows), else it
#: starts on a new page rather than stand alone at a page foot.
CRITERIA_START_PT: float = 150.0

#: Plain wording of each criteria key (the table shows both, the key for whoever edits the file).
CRITERION_WORDS: dict[str, str] = {
    "apnoea.min_duration_s": "shortest apnoea counted",
    "apnoea.prolonged_s": "prolonged apnoea from",
    "apnoea.breath_min_etco2_mmHg": "lowest EtCO2 that still counts as a breath",
    "apnoea.rhythm_breaths": "smaller breaths count in a rhythmic run of",
    "apnoea.rhythm_rate_min_per_min": "slowest rate of such a run",
    "apnoea.rhythm_rate_max_per_min": "fastest rate of such a run",
    "hypoventilation.etco2_high_mmHg": "EtCO2 at or above",
    "hypoventilation.rise_from_baseline_mmHg": "EtCO2 rise above baseline",
    "hypoventilation.rise_from_baseline_pct": "relative EtCO2 rise above baseline",
    "hypoventilation.bradypnoea_rr_per_min": "slow breathing: RR below",
    "hypoventilation.hypopnoea_amplitude_fraction": "shallow breathing: CO2 amplitude below",
    "hypoventilation.min_duration_s": "shortest episode counted",
    "hypoventilation.max_interruption_s": "longest normal spell inside one episode",
    "desaturation.spo2_below_pct": "SpO2 below",
    "desaturation.min_duration_s": "shortest episode counted",
    "desaturation.severe_below_pct": "severe: SpO2 below",
    "desaturation.prolonged_s": "prolonged from",
    "oximetry.min_reading_pct": "SpO2 below this is no reading",
    "oximetry.spike_min_pct": "spike: step of at least",
    "oximetry.spike_return_pct": "spike: back within",
    "oximetry.spike_max_s": "spike: back within (time)",
    "oximetry.drop_min_pct": "drop: fall in one update of at least",
    "oximetry.drop_steady_s": "drop: only from a level steady for",
    "oximetry.drop_max_s": "drop: back within (time)",
    "oximetry.flat_s": "flat line: unchanged for",
    "oximetry.flat_below_pct": "flat line: only below",
    "oximetry.acquisition_s": "after a dropout: readings judged for",
    "oximetry.startup_s": "after the probe is put on: readings judged for",
    "oximetry.startup_after_s": "probe off when no reading for",
    "oximetry.acquisition_tolerance_pct": "start-up reading: lower than what follows by",
    "oximetry.pulse_max_bpm": "pulse above this is no reading",
    "rebreathing.fico2_above_mmHg": "FiCO2 above",
    "rebreathing.min_duration_s": "shortest episode counted",
    "rebreathing.max_interruption_s": "longest normal spell inside one episode",
    "sloped_plateau.slope_ratio": "plateau slope, times the patient's baseline",
    "sloped_plateau.slope_floor_per_s": "smallest baseline slope used",
    "sloped_plateau.upstroke_ratio": "upstroke time, times the patient's baseline",
    "sloped_plateau.smoothing_breaths": "breaths in the running median",
    "sloped_plateau.min_duration_s": "shortest episode counted",
    "sloped_plateau.max_interruption_s": "longest normal spell inside one episode",
    "etco2_fall.fall_from_baseline_mmHg": "EtCO2 fall below baseline",
    "etco2_fall.fall_from_baseline_pct": "relative EtCO2 fall below baseline",
    "etco2_fall.min_duration_s": "shortest fall counted",
    "etco2_fall.max_interruption_s": "longest normal spell inside one fall",
    "low_amplitude.amplitude_fraction": "small breath: CO2 amplitude below",
    "low_amplitude.onset_s": "abrupt: the amplitude halved within",
    "low_amplitude.rate_change_pct": "unchanged rate: within",
    "low_amplitude.spo2_fall_pct": "SpO2 fall that makes it hypoventilation",
    "low_amplitude.min_duration_s": "shortest stretch counted",
    "low_amplitude.max_interruption_s": "longest normal spell inside one stretch",
    "co2_signal.flat_exact_s": "CO2 not changing at all for",
    "co2_signal.max_apnoea_s": "pause read as no signal after",
    "co2_signal.spo2_fall_pct": "SpO2 fall that keeps a long pause an apnoea",
    "co2_signal.small_wave_mmHg": "rhythmic waves in a pause from",
    "signal_loss.co2_gap_s": "CO2 sample step that is a gap",
    "signal_loss.spo2_gap_s": "SpO2 sample step that is a gap",
    "signal_loss.min_duration_s": "shortest gap reported as an episode",
    "linking.dose_lookback_s": "doses linked from this long before onset",
    "linking.intervention_after_s": "actions linked up to this long after the end",
    "linking.lead_window_s": "SpO2 fall linked up to this long after the end",
    "linking.intervention_before_s": "actions linked from this long before onset",
    "events.link_window_s": "episodes starting within this of the last end: one event",
    "cardiovascular.systolic_below_mmHg": "hypotension: systolic BP below",
    "cardiovascular.systolic_fall_pct": "hypotension: systolic fall from baseline over",
    "cardiovascular.pulse_below_bpm": "bradycardia: pulse below",
    "cardiovascular.pulse_fall_pct": "bradycardia: pulse fall from baseline over",
    "cardiovascular.bradycardia_min_duration_s": "bradycardia: slow pulse lasting at least",
    "cardiovascular.pulse_baseline_window_s": "baseline pulse: median over this before the first dose",
}

#: Units of the criteria files as a person reads them.
UNIT_WORDS: dict[str, str] = {"1/min": "/min", "fraction": "of baseline", "ratio": "x"}


def criterion_cell(section: str, name: str) -> Paragraph:
    """The plain wording of a criteria key, with the key itself small beneath it."""
    plain = CRITERION_WORDS.get(f"{section}.{name}", words(name))
    return Paragraph(
        f'{para_text(plain)}<br/><font size="{styles.KEY_PT}" color="#595959">'
        f"{para_text(name)}</font>",
        styles.CELL,
    )


def criteria_flowables(analysis: Analysis, width_pt: float) -> list:
    """Appendix: the criteria file used, with every threshold and its source."""
    c = analysis.criteria
    out: list = [
        CondPageBreak(CRITERIA_START_PT),
        Paragraph("Appendix", styles.H1),
        Paragraph("Criteria used", styles.H2),
        Paragraph(para_text(f"{c.name} ({c.path}) - {c.description}"), styles.BODY),
    ]
    head = [cell(h, styles.CELL_BOLD) for h in ("Section", "Threshold", "Value", "Source", "Note")]
    rows = [head] + [
        [
            cell(words(i.section)),
            criterion_cell(i.section, i.name),
            cell(_value_text(i.value, i.unit)),
            cell(i.source),
            cell(i.note or DASH),
        ]
        for i in c.items
    ]
    terms = standard_terms("CO2", "EtCO2", "FiCO2", "SpO2", "RR")
    out.append(grid_table(rows, scaled([0.9, 1.4, 0.8, 2.3, 1.8], width_pt), terms=terms))
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
    for limit in q.limitations:
        out.append(Paragraph(para_text(f"\u2022 Not assessed: {limit}"), styles.BODY))
    out.append(Paragraph("Gaps, artefacts and warnings", styles.H2))
    out += findings_flowables(analysis, width_pt)
    out += co2_signal_flowables(analysis)
    out.append(
        Paragraph(
            para_text(
                f"Breaths not usable for trends: {_invalid_text(q.invalid_breaths, q.invalid_by_reason)}. "
                f"SpO2 samples marked as artefact: {q.spo2_artefact_samples}"
                f"{_by_rule_text(q.spo2_artefact_by_rule)}. "
                f"SpO2 samples without a reading (blank, 0 or impossible; kept as missing, "
                f"never a nadir): {q.spo2_no_reading_samples} of {q.spo2_samples}."
            ),
            styles.BODY,
        )
    )
    out.append(
        Paragraph(
            para_text(
                f"Criteria used: {analysis.criteria.name}; every threshold with its source is "
                "in the appendix at the end."
            ),
            styles.BODY,
        )
    )
    return out


def _by_rule_text(by_rule: dict[str, int]) -> str:
    """`` (spike 3, flat 0)`` for the non-zero rules; empty when none marked anything."""
    parts = [f"{rule} {n}" for rule, n in by_rule.items() if n]
    return f" ({', '.join(parts)})" if parts else ""
