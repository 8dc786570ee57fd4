"""Data-quality findings at ingest: streams that do not overlap, missing streams.

Nothing here changes the data. Ingest keeps the raw sample times; gaps are judged later, by
the one gap rule of :mod:`sedreport.gaps` with the active criteria's threshold.
"""

from __future__ import annotations

from sedreport.session import QualityFinding

#: Streams whose time span is compared with the others' (the sampled signals).
SIGNAL_ROLES = ("co2", "spo2")
#: Capnogram sample rates the format expects, Hz (DESIGN.md: uniformly sampled at 10-200 Hz).
CO2_RATE_HZ = (10.0, 200.0)


def rate_warnings(co2_rate_hz: float) -> list[str]:
    """A warning when the capnogram's median rate is outside :data:`CO2_RATE_HZ`.

    Not an error: the data are kept; breath timing below 10 Hz is coarse (0.1 s steps or worse).
    """
    lo, hi = CO2_RATE_HZ
    if lo <= co2_rate_hz <= hi:
        return []
    return [f"co2: sample rate {co2_rate_hz:.3g} Hz is outside the expected {lo:g}-{hi:g} Hz"]


def find_no_overlap(spans: dict[str, tuple[float, float]]) -> list[QualityFinding]:
    """``no_overlap`` for each stream whose span misses the span of all the other sources.

    Parameters
    ----------
    spans : dict
        Role -> (first, last) time on the session clock, seconds.
    """
    out = []
    for role, (a, b) in spans.items():
        others = [s for r, s in spans.items() if r != role]
        if not others or role not in SIGNAL_ROLES:
            continue
        lo = min(s[0] for s in others)
        hi = max(s[1] for s in others)
        if b < lo or a > hi:
            out.append(
                QualityFinding(
                    kind="no_overlap",
                    source=role,
                    message=(
                        f"{role}: spans {a:.1f}-{b:.1f} s, outside the other sources "
                        f"({lo:.1f}-{hi:.1f} s); check clock_offset_s and the file's clock"
                    ),
                    start_s=float(a),
                    end_s=float(b),
                )
            )
    return out


def missing_stream(role: str) -> QualityFinding:
    """Finding for a source that ``session.yaml`` does not give."""
    what = {
        "co2": "no CO2 waveform: breaths, apnoea and EtCO2 cannot be assessed",
        "spo2": "no SpO2 trend: desaturation cannot be assessed",
        "doses": "no dose log: episodes cannot be linked to drugs",
        "events": "no event log: interventions and procedure times are unknown",
    }[role]
    return QualityFinding(kind="missing_stream", source=role, message=f"{role}: {what}")
