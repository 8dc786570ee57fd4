"""Synthetic session records in the episodes-contract shape (with ``events``) for audit tests."""

from __future__ import annotations


def episode(eid: str, kind: str, start_s: float = 100.0, event: str | None = None, **extra):
    out = {
        "id": eid,
        "kind": kind,
        "subtype": None,
        "start_s": start_s,
        "end_s": start_s + 20.0,
        "duration_s": 20.0,
        "start_time": "2026-01-05T09:00:00+01:00",
        "severity": None,
        "event": event,
        "time_to_first_intervention_s": None,
        "capnographic_lead_s": None,
    }
    out.update(extra)
    return out


def event(aid: str, severity: str, episodes=("E1",), start_s: float = 100.0, text: str = ""):
    return {
        "id": aid,
        "episodes": list(episodes),
        "start_s": start_s,
        "end_s": start_s + 30.0,
        "start_time": "2026-01-05T09:00:00+01:00",
        "severity": severity,
        "descriptors": [{"text": text, "tier": severity}] if text else [],
        "interventions": [],
        "outcome": [],
    }


def record(
    sid: str,
    *,
    month: str = "2026-01",
    area: str = "endoscopy",
    provider: str = "RN-01",
    asa: int = 2,
    depth: str = "moderate",
    regimen: str = "propofol",
    episodes=(),
    events=(),
    coverage: float = 100.0,
):
    return {
        "session_id": sid,
        "started": f"{month}-05T09:00:00+01:00",
        "criteria": {"name": "default", "sha256": "0" * 64},
        "episodes": list(episodes),
        "events": list(events),
        "summary": {"co2_coverage_pct": coverage, "events_by_severity": {}},
        "meta": {
            "path": f"/archive/{sid}",
            "started": f"{month}-05T09:00:00+01:00",
            "month": month,
            "area": area,
            "procedure": "colonoscopy",
            "asa_class": asa,
            "target_depth": depth,
            "regimen": regimen,
            "provider": provider,
            "sedreport_version": "test",
        },
    }


def small_cohort():
    """Six sessions with known counts (see test_audit_rates)."""
    return [
        record(
            "S1",
            episodes=[
                episode("E1", "apnoea", event="A1"),
                episode("E2", "desaturation", event="A1"),
            ],
            events=[event("A1", "moderate", ("E1", "E2"), text="bag-mask ventilation")],
        ),
        record(
            "S2",
            episodes=[
                episode("E1", "apnoea", event="A1"),
                episode("E2", "apnoea", 400, event="A2"),
            ],
            events=[event("A1", "minor"), event("A2", "minor", ("E2",), 400)],
            provider="RN-02",
        ),
        record("S3", month="2026-02", provider="RN-02"),
        record(
            "S4",
            month="2026-02",
            area="bronchoscopy",
            provider="RN-21",
            episodes=[episode("E1", "hypoventilation", event="A1")],
            events=[event("A1", "sentinel", text="unplanned admission")],
            asa=3,
        ),
        record(
            "S5",
            month="2026-02",
            area="bronchoscopy",
            provider="RN-21",
            episodes=[episode("E1", "signal_loss")],
        ),
        record(
            "S6",
            month="2026-03",
            episodes=[episode("E1", "apnoea", event="A1")],
            events=[event("A1", "minimal")],
            coverage=0.0,
        ),
    ]
