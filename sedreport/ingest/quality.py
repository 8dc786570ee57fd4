"""Data-quality findings at ingest: streams that do not overlap, missing streams.

Nothing here changes the data. Ingest keeps the raw sample times; gaps are judged later, by
the one gap rule of :mod:`sedreport.gaps` with the active criteria's threshold.
"""

from __future__ import annotations

from collections.abc import Iterable

from sedreport.ingest.streams import MIN_CO2_RATE_HZ
from sedreport.session import QualityFinding

#: Streams whose time span is compared with a reference span (the sampled signals).
SIGNAL_ROLES = ("co2", "spo2")
#: Capnogram sample rates the format expects, Hz (DESIGN.md: uniformly sampled at 10-200 Hz).
CO2_RATE_HZ = (MIN_CO2_RATE_HZ, 200.0)


def rate_warnings(co2_rate_hz: float) -> list[str]:
    """A warning when the capnogram's median rate is outside :data:`CO2_RATE_HZ`.

    Not an error: the data are kept. Rates below the range never get here: the readers refuse
    them (:func:`sedreport.ingest.streams.check_waveform_rate`).
    """
    lo, hi = CO2_RATE_HZ
    if lo <= co2_rate_hz <= hi:
        return []
    return [f"co2: sample rate {co2_rate_hz:.3g} Hz is outside the expected {lo:g}-{hi:g} Hz"]


def find_no_overlap(spans: dict[str, tuple[float, float]]) -> list[QualityFinding]:
    """``no_overlap`` for each signal stream whose span misses its reference span.

    The SpO2 trend is read against the capnogram, so its reference is the CO2 span; the CO2's
    reference (and the SpO2's when there is no CO2) is the span of the dose and event logs.

    Parameters
    ----------
    spans : dict
        Role -> (first, last) time on the session clock, seconds.

    Examples
    --------
    >>> (finding,) = find_no_overlap({"co2": (0.0, 60.0), "spo2": (900.0, 960.0)})
    >>> print(finding.message)
    spo2: spans 900.0-960.0 s, outside the CO2 (0.0-60.0 s); check clock_offset_s and the file's clock
    """
    out = []
    for role, (a, b) in spans.items():
        if role not in SIGNAL_ROLES:
            continue
        if role != "co2" and "co2" in spans:
            others, what = [spans["co2"]], "the CO2"
        else:
            others = [s for r, s in spans.items() if r not in SIGNAL_ROLES]
            what = "the dose and event logs"
        if not others:
            continue
        lo = min(s[0] for s in others)
        hi = max(s[1] for s in others)
        if b < lo or a > hi:
            out.append(
                QualityFinding(
                    kind="no_overlap",
                    source=role,
                    message=(
                        f"{role}: spans {a:.1f}-{b:.1f} s, outside {what} "
                        f"({lo:.1f}-{hi:.1f} s); check clock_offset_s and the file's clock"
                    ),
                    start_s=float(a),
                    end_s=float(b),
                )
            )
    return out


#: Finding kinds every command that loads a session repeats as a ``warning:`` line on stderr:
#: a stream that misses the capnogram cannot be read against it (a clock error, most often).
STDERR_KINDS = frozenset({"no_overlap"})


def stderr_warnings(session_id: str, findings: Iterable[tuple[str, str]]) -> list[str]:
    """``<session>: <message>`` for each finding of a kind in :data:`STDERR_KINDS`.

    Parameters
    ----------
    session_id : str
    findings : iterable of (str, str)
        ``(kind, message)`` of each finding, as in ``Session.findings`` or ``check``'s JSON.
    """
    return [f"{session_id}: {msg}" for kind, msg in findings if kind in STDERR_KINDS]


def missing_stream(role: str) -> QualityFinding:
    """Finding for a source that ``session.yaml`` does not give."""
    what = {
        "co2": "no CO2 waveform: breaths, apnoea and EtCO2 cannot be assessed",
        "spo2": "no SpO2 trend: desaturation cannot be assessed",
        "doses": "no dose log: episodes cannot be linked to drugs",
        "events": "no event log: interventions and procedure times are unknown",
    }[role]
    return QualityFinding(kind="missing_stream", source=role, message=f"{role}: {what}")
