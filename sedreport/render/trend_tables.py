"""Tables and method paragraphs of the trend document (reportlab flowables)."""

from __future__ import annotations

import math

from reportlab.platypus import Paragraph, Table, TableStyle

from sedreport.render import styles
from sedreport.render.styles import para_text
from sedreport.render.trend_charts import INDEX_LABELS
from sedreport.trend import Trend, VisitIndices, oxygen_text, stat_of, usual_oxygen

DASH = "-"
#: mmHg per kPa (1 kPa = 7.50062 mmHg; common practice conversion).
MMHG_PER_KPA = 7.50062
#: Indices of the summary and change tables, in column order.
TABLE_INDICES: tuple[str, ...] = (
    "etco2_mmHg",
    "rr_per_min",
    "fico2_mmHg",
    "phase3_slope_mmHg_s",
    "phase3_slope_norm_per_s",
    "alpha_angle_deg",
    "upstroke_s",
    "spo2_pct",
)


def num(value: float | None, digits: int, signed: bool = False) -> str:
    """A number with fixed decimals, ``-`` for missing values."""
    if value is None or not math.isfinite(value):
        return DASH
    text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
    return text.replace("-", "\u2212") if signed else text


def cell(text: object, style=styles.CELL) -> Paragraph:
    """One table cell; a list becomes lines."""
    if isinstance(text, list | tuple):
        return Paragraph("<br/>".join(para_text(t) for t in text), style)
    return Paragraph(para_text(text), style)


def table(rows: list[list], widths: list[float], shade_rows: tuple[int, ...] = ()) -> Table:
    """A grid with a shaded heading row repeated on new pages."""
    t = Table(rows, colWidths=widths, repeatRows=1, hAlign="LEFT")
    cmds = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("BACKGROUND", (0, 0), (-1, 0), styles.HEAD_FILL),
        ("LINEBELOW", (0, 0), (-1, -1), 0.3, styles.GRID),
        ("LINEBELOW", (0, 0), (-1, 0), 0.6, styles.AXIS),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
        ("LEFTPADDING", (0, 0), (-1, -1), 2),
        ("RIGHTPADDING", (0, 0), (-1, -1), 2),
    ]
    cmds += [("BACKGROUND", (0, r), (-1, r), styles.ATTENTION_FILL) for r in shade_rows]
    t.setStyle(TableStyle(cmds))
    return t


def _head(index: str) -> list[str]:
    name, unit, _ = INDEX_LABELS[index]
    return [name, unit]


def visit_label(k: int, v: VisitIndices) -> list[str]:
    return [f"V{k + 1} {v.visit_date.strftime('%d %b %Y')}", v.session_id]


def oxygen_words(v: VisitIndices) -> str:
    """``nasal cannula 2 L/min`` (words, not keys)."""
    return oxygen_text(v).replace("_", " ")


def _target_cell(v: VisitIndices) -> str | list[str]:
    if v.spo2 is None:
        return "no SpO2"
    lo, hi = v.spo2.target_pct
    own = v.spo2.target_from.startswith("patient")
    return [f"{lo:g}-{hi:g} %", "patient's own" if own else "BTS default"]


def _gas_cell(v: VisitIndices) -> str | list[str]:
    if v.blood_gas is None:
        return DASH
    g = v.blood_gas
    return [
        f"{g.sample} {g.pco2_mmHg:.1f} mmHg ({g.pco2_mmHg / MMHG_PER_KPA:.2f} kPa)",
        f"PCO2 - EtCO2 {num(v.gradient_mmHg, 1)} mmHg",
    ]


def _excluded_cell(v: VisitIndices) -> str:
    parts = [", ".join(f"{r} {n}" for r, n in v.excluded) or "none"]
    if v.co2_gaps:
        parts.append(f"{v.co2_gaps} CO2 gap(s), {v.co2_gap_total_s:.0f} s")
    if v.doses_ignored:
        parts.append(f"{v.doses_ignored} dose line(s) ignored")
    if not v.reliable:
        parts.append("too few breaths: unreliable")
    return "; ".join(parts)


def visits_table(trend: Trend, width_pt: float) -> Table:
    """When, oxygen, breaths used and excluded (with reasons), SpO2 target, blood gas.
    Rows of a visit whose oxygen differs from the usual setting are shaded."""
    rows = [
        [
            cell("Visit", styles.CELL_BOLD),
            cell("Oxygen", styles.CELL_BOLD),
            cell(["Breaths used /", "detected (min)"], styles.CELL_BOLD),
            cell(["Excluded breaths by reason;", "gaps"], styles.CELL_BOLD),
            cell("SpO2 target", styles.CELL_BOLD),
            cell(["Blood gas, gradient to", "median EtCO2"], styles.CELL_BOLD),
        ]
    ]
    usual = usual_oxygen(trend.visits)
    shade = []
    for k, v in enumerate(trend.visits):
        ox = [oxygen_words(v)]
        if oxygen_text(v) != usual:
            ox.append("differs from usual")
            shade.append(k + 1)
        ox += [f"{f:g} L/min at {t / 60:.0f} min" for t, f, _ in v.flow_changes]
        rows.append(
            [
                cell(visit_label(k, v)),
                cell(ox),
                cell(f"{v.breaths_used} / {v.breaths_total} ({v.duration_s / 60:.0f} min)"),
                cell(_excluded_cell(v)),
                cell(_target_cell(v)),
                cell(_gas_cell(v)),
            ]
        )
    fr = [0.15, 0.16, 0.13, 0.2, 0.12, 0.24]
    return table(rows, [f * width_pt for f in fr], tuple(shade))


def indices_table(trend: Trend, width_pt: float) -> Table:
    """Median and IQR of every index per visit; SpO2 with its shares against the target."""
    head = [cell(["Visit", ""], styles.CELL_BOLD)]
    head += [cell(_head(i), styles.CELL_BOLD) for i in TABLE_INDICES]
    head.append(cell(["SpO2 below / in /", "above target, %"], styles.CELL_BOLD))
    rows = [head]
    for k, v in enumerate(trend.visits):
        row = [cell(visit_label(k, v))]
        for index in TABLE_INDICES:
            s = stat_of(v, index)
            digits = INDEX_LABELS[index][2]
            if s is None or not s.n:
                row.append(cell(DASH))
                continue
            row.append(
                cell([num(s.median, digits), f"IQR {num(s.q1, digits)}-{num(s.q3, digits)}"])
            )
        sp = v.spo2
        row.append(
            cell(
                DASH
                if sp is None
                else f"{num(sp.below_pct, 0)} / {num(sp.in_target_pct, 0)} / {num(sp.above_pct, 0)}"
            )
        )
        rows.append(row)
    widths = [0.13 * width_pt] + [0.0925 * width_pt] * len(TABLE_INDICES) + [0.13 * width_pt]
    return table(rows, widths)


def changes_table(trend: Trend, width_pt: float, which: str) -> Table:
    """Change of each index from the first (``which="first"``) or the previous visit; changes
    within the noise are marked ``(noise)`` and set in plain type, others in bold."""
    changes = trend.from_first if which == "first" else trend.from_previous
    head = [cell(["Visit", f"vs {'V1' if which == 'first' else 'previous'}"], styles.CELL_BOLD)]
    head += [cell(_head(i), styles.CELL_BOLD) for i in TABLE_INDICES]
    rows = [head]
    marked = {m.visit for m in trend.oxygen_marks}
    for k, v in enumerate(trend.visits[1:], start=1):
        lab = visit_label(k, v) + ([f"O2 now {oxygen_words(v)}"] if k in marked else [])
        row = [cell(lab)]
        for index in TABLE_INDICES:
            c = changes[k].get(index)
            digits = INDEX_LABELS[index][2]
            if c is None or not math.isfinite(c.delta):
                row.append(cell(DASH))
            elif c.within_noise:
                row.append(cell([num(c.delta, digits, True), "(noise)"]))
            else:
                row.append(cell([num(c.delta, digits, True), ""], styles.CELL_BOLD))
        rows.append(row)
    widths = [0.13 * width_pt] + [0.10875 * width_pt] * len(TABLE_INDICES)
    return table(rows, widths)


def variability_table(trend: Trend, width_pt: float) -> Table:
    """Breath-to-breath variability and the noise (bootstrap interval) of the key medians."""
    rows = [
        [
            cell("Visit", styles.CELL_BOLD),
            cell(["EtCO2 robust SD", "breath to breath, mmHg"], styles.CELL_BOLD),
            cell(["Breath interval", "robust CV, %"], styles.CELL_BOLD),
            cell(["EtCO2 median", "interval, mmHg"], styles.CELL_BOLD),
            cell(["Phase III / EtCO2", "median interval, 1/s"], styles.CELL_BOLD),
            cell(["Alpha angle median", "interval, deg"], styles.CELL_BOLD),
            cell(["SpO2 median", "interval, %"], styles.CELL_BOLD),
        ]
    ]
    for k, v in enumerate(trend.visits):

        def ci(index: str, digits: int, v: VisitIndices = v) -> str:
            s = stat_of(v, index)
            if s is None or not s.n:
                return DASH
            return f"{num(s.ci_low, digits)} to {num(s.ci_high, digits)}"

        rows.append(
            [
                cell(visit_label(k, v)),
                cell(num(v.etco2_sd_mmHg, 2)),
                cell(num(v.interval_cv_pct, 1)),
                cell(ci("etco2_mmHg", 1)),
                cell(ci("phase3_slope_norm_per_s", 3)),
                cell(ci("alpha_angle_deg", 1)),
                cell(ci("spo2_pct", 0)),
            ]
        )
    fr = [0.16, 0.14, 0.12, 0.15, 0.15, 0.14, 0.14]
    return table(rows, [f * width_pt for f in fr])


def settings_table(trend: Trend, width_pt: float) -> Table:
    """Every trend setting with its value, unit, source and note."""
    rows = [[cell(h, styles.CELL_BOLD) for h in ("Setting", "Value", "Source", "Note")]]
    for e in trend.settings.entries:
        rows.append(
            [cell(e.key), cell(f"{e.value:g} {e.unit}"), cell(e.source), cell(e.note or DASH)]
        )
    return table(rows, [f * width_pt for f in (0.22, 0.1, 0.3, 0.38)])


def provenance_table(trend: Trend, width_pt: float) -> Table:
    """SHA-256 of every input file of every visit, and of the settings file."""
    rows = [[cell(h, styles.CELL_BOLD) for h in ("Visit", "File", "SHA-256")]]
    mono = styles.MONO
    for k, v in enumerate(trend.visits):
        for src in v.sources:
            rows.append([cell(f"V{k + 1} {v.session_id}"), cell(src.file), cell(src.sha256, mono)])
            for name, sha in src.other_files:
                rows.append([cell(f"V{k + 1} {v.session_id}"), cell(name), cell(sha, mono)])
    s = trend.settings
    rows.append([cell("settings"), cell(s.path), cell(s.sha256, mono)])
    return table(rows, [f * width_pt for f in (0.16, 0.2, 0.64)])
