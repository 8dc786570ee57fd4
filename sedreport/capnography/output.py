"""Text, CSV and JSON forms of a breath table (for ``sedreport breaths``).

CSV: one row a breath, the DESIGN.md contract columns first (``start_s, end_s, etco2_mmHg,
fico2_mmHg, rr_per_min, phase3_slope_mmHg_s, valid``), then ``duration_s, upstroke_s,
phase3_slope_norm_per_s, reason``; ``valid`` is ``true``/``false``, a missing value is empty.
JSON: one object with the session id, the breaths as a list of records with the same fields,
counts of invalid breaths by reason and the caution text.
"""

from __future__ import annotations

import io
import json
import math
from collections import Counter

from sedreport.capnography.breaths import CONTRACT_COLUMNS, breaths_to_frame, find_breaths
from sedreport.capnography.model import BreathTable
from sedreport.errors import SessionError
from sedreport.session import Session

CAUTION = (
    "Breaths detected in recorded data, for documentation and review only: not an alarm and "
    "not a diagnosis. Clinical observation of the patient comes first; local sedation policy "
    "and licensed practice decide."
)

#: Decimal places per column in CSV / table output.
_DECIMALS = {
    "start_s": 3,
    "end_s": 3,
    "etco2_mmHg": 2,
    "fico2_mmHg": 2,
    "rr_per_min": 2,
    "phase3_slope_mmHg_s": 3,
    "duration_s": 3,
    "upstroke_s": 3,
    "phase3_slope_norm_per_s": 5,
}

FORMATS = ("table", "csv", "json")


def _cell(column: str, value) -> str:
    if column == "valid":
        return "true" if value else "false"
    if column == "reason":
        return str(value)
    v = float(value)
    if not math.isfinite(v):
        return ""
    return f"{v:.{_DECIMALS[column]}f}"


def _json_value(column: str, value):
    if column == "valid":
        return bool(value)
    if column == "reason":
        return str(value)
    v = float(value)
    return round(v, _DECIMALS[column] + 1) if math.isfinite(v) else None


def breaths_csv(breaths: BreathTable) -> str:
    """The breath table as CSV text (contract columns first)."""
    frame = breaths_to_frame(breaths)
    out = io.StringIO()
    out.write(",".join(frame.columns) + "\n")
    columns = list(frame.columns)
    for row in frame.itertuples(index=False):
        out.write(",".join(_cell(c, v) for c, v in zip(columns, row, strict=True)) + "\n")
    return out.getvalue()


def _reason_counts(breaths: BreathTable) -> dict[str, int]:
    counts: Counter[str] = Counter()
    for r in breaths.reason:
        for part in filter(None, r.split(";")):
            counts[part] += 1
    return dict(sorted(counts.items()))


def breaths_dict(breaths: BreathTable, session_id: str, criteria: dict | None = None) -> dict:
    """JSON-ready dict: ``session_id``, ``criteria``, ``n_breaths``, ``n_valid``,
    ``invalid_by_reason``, ``breaths`` (list of records) and ``caution``."""
    frame = breaths_to_frame(breaths)
    columns = list(frame.columns)
    records = [
        {c: _json_value(c, v) for c, v in zip(columns, row, strict=True)}
        for row in frame.itertuples(index=False)
    ]
    return {
        "session_id": session_id,
        "criteria": criteria,
        "n_breaths": len(breaths),
        "n_valid": int(breaths.valid.sum()),
        "invalid_by_reason": _reason_counts(breaths),
        "breaths": records,
        "caution": CAUTION,
    }


def breaths_table(breaths: BreathTable, session_id: str) -> str:
    """A readable fixed-width text table with a summary line and the caution."""
    frame = breaths_to_frame(breaths)
    heads = ["#", "start s", "end s", "EtCO2", "FiCO2", "RR /min", "PIII mmHg/s", "up s", "valid"]
    cols = [*CONTRACT_COLUMNS[:-1], "upstroke_s"]  # the contract's numbers, then phase II
    rows = []
    for i, rec in enumerate(frame.to_dict("records"), start=1):
        cells = [str(i)] + [_cell(c, rec[c]) or "-" for c in cols]
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
    lines.append(f"note: {CAUTION}")
    return "\n".join(lines) + "\n"


def _criteria_info(criteria_path: str | None) -> dict | None:
    if criteria_path is None:
        return None
    from sedreport.criteria import load_criteria

    crit = load_criteria(criteria_path)
    return {"name": crit.name, "path": crit.path, "sha256": crit.sha256}


def breaths_output(session: Session, fmt: str = "table", criteria_path: str | None = None) -> str:
    """Find a session's breaths and format them (``table``, ``csv``, ``json``).

    Breath detection itself uses no criteria; a ``criteria_path`` is loaded and checked (a
    malformed file is an error) and named in the JSON output, so that every command accepts
    the same option.

    Raises
    ------
    SessionError
        When the session has no CO2 stream.
    CriteriaError
        When the criteria file is malformed.
    """
    if fmt not in FORMATS:
        raise ValueError(f"unknown format {fmt!r}")
    criteria = _criteria_info(criteria_path)
    if session.co2 is None:
        raise SessionError(
            f"{session.session_id}/session.yaml:sources.co2",
            "no CO2 stream given, so there are no breaths to find",
        )
    breaths = find_breaths(session.co2)
    if fmt == "csv":
        return breaths_csv(breaths)
    if fmt == "json":
        return json.dumps(breaths_dict(breaths, session.session_id, criteria), indent=2) + "\n"
    return breaths_table(breaths, session.session_id)
