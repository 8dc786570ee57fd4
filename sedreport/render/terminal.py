"""Plain-text forms for the terminal: episode and breath tables, the check report, criteria.

Each ends with the one-line caution of ``templates/cautions.yaml``.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from sedreport.capnography.breaths import CONTRACT_COLUMNS, breaths_to_frame
from sedreport.capnography.model import BreathTable
from sedreport.criteria import Criteria
from sedreport.render.cautions import caution_line
from sedreport.render.csv_text import breath_cell

if TYPE_CHECKING:  # types only: the text outputs must not load the detectors
    from sedreport.analysis import Analysis


#: Gaps listed one by one in the check text (JSON lists all).
MAX_GAPS_SHOWN = 20


def _num(x: object, spec: str = ".1f") -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) else format(x, spec)


def episode_table(analysis: Analysis) -> str:
    """Plain-text table of the episodes with the criteria used and the caution."""
    c = analysis.criteria
    lines = [
        f"session {analysis.session.session_id}  started {analysis.session.started.isoformat()}",
        f"criteria {c.name} ({c.path}, sha256 {c.sha256[:12]})",
        f"{'id':<4} {'kind':<16} {'subtype':<12} {'start':<26} {'start_s':>9} {'dur_s':>7} "
        f"{'event':<5} {'severity':<9} {'EtCO2max':>8} {'SpO2min':>7} {'RRmin':>6}",
    ]
    for e in analysis.episodes:
        lines.append(
            f"{e.id:<4} {e.kind:<16} {e.subtype or '-':<12} {e.start_time:<26} "
            f"{e.start_s:>9.1f} {e.duration_s:>7.1f} {e.event or '-':<5} "
            f"{e.severity or 'finding':<9} "
            f"{_num(e.peak_etco2_mmHg):>8} {_num(e.min_spo2_pct):>7} {_num(e.min_rr_per_min):>6}"
        )
    if not analysis.episodes:
        lines.append("(no episode met the criteria)")
    for ev in analysis.events:
        lines.append(
            f"event {ev.id}: {ev.severity} (World SIVA, Mason 2012), episodes "
            f"{', '.join(ev.episodes) or 'none'}, start {ev.start_time}"
        )
    lines.extend(f"attention: {a}" for a in analysis.summary.attention)
    lines.append(f"note: {caution_line()}")
    return "\n".join(lines) + "\n"


def breaths_table(breaths: BreathTable, session_id: str) -> str:
    """A readable fixed-width table of the breaths with a summary line and the caution."""
    frame = breaths_to_frame(breaths)
    heads = ["#", "start s", "end s", "EtCO2", "FiCO2", "RR /min", "PIII mmHg/s", "up s", "valid"]
    cols = [*CONTRACT_COLUMNS[:-1], "upstroke_s"]  # the contract's numbers, then phase II
    rows = []
    for i, rec in enumerate(frame.to_dict("records"), start=1):
        cells = [str(i)] + [breath_cell(c, rec[c]) or "-" for c in cols]
        cells.append("yes" if rec["valid"] else f"no ({rec['reason']})")
        rows.append(cells)
    widths = [max([len(h)] + [len(r[k]) for r in rows]) for k, h in enumerate(heads)]
    lines = [
        f"session {session_id}: {len(breaths)} breaths, {int(breaths.valid.sum())} valid"
        " (CO2 in mmHg)"
    ]
    lines.append("  ".join(h.rjust(w) for h, w in zip(heads, widths, strict=True)))
    for r in rows:
        lines.append("  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)))
    lines.append(f"note: {caution_line()}")
    return "\n".join(lines) + "\n"


def _fmt_rate(rate: float | None) -> str:
    return "-" if rate is None else f"{rate:.4g} Hz"


def _fmt_span(span: list | None) -> str:
    return "-" if span is None else f"{span[0]:.2f} to {span[1]:.2f} s"


def check_text(desc: dict) -> str:
    """Plain-text block for one session description (:func:`~.json_text.describe_session`)."""
    lines = [
        f"session {desc['session_id']}  started {desc['started']}",
        f"  span {_fmt_span(desc['span_s'])} on the session clock "
        f"(duration {desc['duration_s']:.1f} s); {desc['doses']} doses, {desc['events']} events",
    ]
    for s in desc["streams"]:
        if s["role"] == "session":
            lines.append(f"  yaml    {s['file']} (sha256 {s['sha256'][:16]}...)")
            continue
        where = s["file"] + (f" [{s['channel']}]" if s["channel"] else "")
        lines.append(
            f"  {s['role']:<7} {where}: {s['reader']}, {s['rows']} rows, "
            f"rate {_fmt_rate(s['sample_rate_hz'])}, span {_fmt_span(s['span_s'])}, "
            f"clock offset {s['clock_offset_s']:g} s, conversion: {s['conversion']}, "
            f"sha256 {s['sha256'][:16]}..."
        )
    rule = desc["gap_rule"]
    gaps = [f for f in desc["findings"] if f["kind"] == "gap"]
    others = [
        f
        for f in desc["findings"]
        if f["kind"] != "gap" and not any(w.startswith(f["message"]) for w in desc["warnings"])
    ]
    lines.append(
        f"  gaps: {len(gaps)} (a CO2 step > {rule['co2_gap_s']:g} s, an SpO2 step > "
        f"{rule['spo2_gap_s']:g} s; criteria {rule['criteria']})"
    )
    lines.extend(f"    {f['message']}" for f in gaps[:MAX_GAPS_SHOWN])
    if len(gaps) > MAX_GAPS_SHOWN:
        lines.append(
            f"    ... and {len(gaps) - MAX_GAPS_SHOWN} more (all of them in --format json)"
        )
    lines.extend(f"  finding ({f['kind']}): {f['message']}" for f in others)
    lines.extend(f"  warning: {w}" for w in desc["warnings"])
    return "\n".join(lines)


def check_report_text(descriptions: list[dict]) -> str:
    """The ``sedreport check`` text: one block per loaded session, then the caution."""
    if not descriptions:
        return ""
    blocks = [check_text(d) for d in descriptions]
    return "\n".join(blocks) + f"\nnote: {caution_line()}\n"


def criteria_text(criteria: Criteria) -> str:
    """Plain-text listing of a criteria file: every threshold with unit, source and note."""
    lines = [
        f"criteria {criteria.name}: {criteria.path}",
        f"sha256 {criteria.sha256}",
    ]
    if criteria.description:
        lines.append(criteria.description)
    section = None
    for c in criteria.items:
        if c.section != section:
            section = c.section
            lines.append(f"\n[{section}]")
        value = "off" if math.isnan(c.value) else f"{c.value:g} {c.unit}"
        lines.append(f"  {c.name} = {value}")
        lines.append(f"      source: {c.source}")
        if c.note:
            lines.append(f"      note: {c.note}")
    lines.append(
        "\nThese criteria document and review recorded data; they are not alarm settings. "
        "Local sedation policy and licensed practice decide which criteria apply."
    )
    return "\n".join(lines) + "\n"
