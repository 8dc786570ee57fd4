"""What ``sedreport check`` prints: a JSON-ready summary of each loaded session, or the error.

The summary describes the recorded data only; it makes no clinical judgement.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path

from sedreport.errors import SedreportError
from sedreport.ingest.load import load_session
from sedreport.session import Session

#: Gaps listed one by one in the text output (JSON lists all).
MAX_GAPS_SHOWN = 20

CAUTION = (
    "sedreport documents and reviews recorded data; it is not an alarm or a diagnosis. "
    "Clinical observation of the patient comes first; local sedation policy and licensed "
    "practice decide."
)


def describe_session(session: Session) -> dict:
    """JSON-ready description of a loaded session (ids, clock, streams, findings, warnings).

    Keys: ``session_id``, ``folder``, ``started``, ``span_s`` ([first, last] seconds on the
    session clock), ``duration_s``, ``streams`` (one dict per input file: ``role``, ``file``,
    ``reader``, ``rows``, ``sample_rate_hz``, ``span_s``, ``units_in``, ``conversion``,
    ``clock_offset_s``, ``time_style``, ``channel``, ``sha256``, ``other_files``), ``doses``,
    ``events`` (counts), ``findings`` (``kind``, ``source``, ``message``, ``start_s``,
    ``end_s``) and ``warnings``.
    """
    first, last = session.span_s()
    return {
        "session_id": session.session_id,
        "folder": str(session.folder),
        "started": session.started.isoformat(),
        "span_s": [first, last],
        "duration_s": last - first,
        "streams": [
            {
                "role": s.role,
                "file": s.file,
                "reader": s.reader,
                "rows": s.rows,
                "sample_rate_hz": s.sample_rate_hz,
                "span_s": list(s.span_s) if s.span_s is not None else None,
                "units_in": s.units_in,
                "conversion": s.conversion,
                "clock_offset_s": s.clock_offset_s,
                "time_style": s.time_style,
                "channel": s.channel,
                "sha256": s.sha256,
                "other_files": [{"file": f, "sha256": h} for f, h in s.other_files],
            }
            for s in session.sources
        ],
        "doses": len(session.doses),
        "events": len(session.events),
        "findings": [
            {
                "kind": f.kind,
                "source": f.source,
                "message": f.message,
                "start_s": f.start_s,
                "end_s": f.end_s,
            }
            for f in session.findings
        ],
        "warnings": list(session.warnings),
    }


def check_sessions(folders: Iterable[str | Path]) -> tuple[list[dict], list[str]]:
    """Load each folder; return the descriptions of those that load and the error lines.

    Returns
    -------
    (list of dict, list of str)
        :func:`describe_session` for every good session, and one ``<session>/<file>:<line>:
        <what>`` line per failing one (in the order given).
    """
    good, errors = [], []
    for folder in folders:
        try:
            good.append(describe_session(load_session(folder)))
        except SedreportError as exc:
            errors.append(" ".join(str(exc).split()))
    return good, errors


def _fmt_rate(rate: float | None) -> str:
    return "-" if rate is None else f"{rate:.4g} Hz"


def _fmt_span(span: list | None) -> str:
    return "-" if span is None else f"{span[0]:.2f} to {span[1]:.2f} s"


def format_text(desc: dict) -> str:
    """Plain-text block for one session description."""
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
    gaps = [f for f in desc["findings"] if f["kind"] == "gap"]
    others = [
        f
        for f in desc["findings"]
        if f["kind"] != "gap" and not any(w.startswith(f["message"]) for w in desc["warnings"])
    ]
    lines.append(f"  gaps: {len(gaps)}")
    lines.extend(f"    {f['message']}" for f in gaps[:MAX_GAPS_SHOWN])
    if len(gaps) > MAX_GAPS_SHOWN:
        lines.append(
            f"    ... and {len(gaps) - MAX_GAPS_SHOWN} more (all of them in --format json)"
        )
    lines.extend(f"  finding ({f['kind']}): {f['message']}" for f in others)
    lines.extend(f"  warning: {w}" for w in desc["warnings"])
    return "\n".join(lines)
