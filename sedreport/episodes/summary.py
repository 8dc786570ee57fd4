"""Session summary and data-quality dictionaries of an Analysis (JSON-ready)."""

from __future__ import annotations

from collections import Counter
from dataclasses import asdict

import numpy as np

from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.criteria import Criteria
from sedreport.episodes.linking import usable_spo2
from sedreport.episodes.model import EPISODE_KINDS, SEVERITY_TIERS, Episode
from sedreport.episodes.severity import tier_rank
from sedreport.session import Session


def sedation_window_s(session: Session) -> tuple[float, float, str]:
    """Start and end of sedation (s) and a sentence saying how they were chosen.

    Start: the first dose (else the first data). End: the last ``procedure_end`` after the
    start (else the last data, dose or event).
    """
    first, last = session.span_s()
    doses = [d.time_s for d in session.doses]
    start = min(doses) if doses else first
    how = "from the first dose" if doses else "no doses recorded: from the first data"
    ends = [e.time_s for e in session.events if e.event == "procedure_end" and e.time_s > start]
    end = max(ends) if ends else last
    how += " to procedure_end" if ends else " to the last data"
    return float(start), float(max(end, start)), how


def covered_s(time_s: np.ndarray, max_step_s: float, lo: float, hi: float) -> float:
    """Seconds of [lo, hi] covered by sample steps no longer than ``max_step_s``."""
    t = np.asarray(time_s, dtype=float)
    if t.size < 2 or hi <= lo:
        return 0.0
    a = np.clip(t[:-1], lo, hi)
    b = np.clip(t[1:], lo, hi)
    ok = np.diff(t) <= max_step_s
    return float(np.sum((b - a)[ok]))


def time_below_s(t: np.ndarray, v: np.ndarray, threshold: float, max_step_s: float) -> float:
    """Seconds with SpO2 below ``threshold``, each sample held until the next (steps over
    ``max_step_s`` are gaps and not counted)."""
    if t.size < 2:
        return 0.0
    dt = np.diff(t)
    return float(np.sum(dt[(v[:-1] < threshold) & (dt <= max_step_s)]))


def _pct(part: float, whole: float) -> float | None:
    return 100.0 * part / whole if whole > 0 else None


def _finite_or_none(x: np.ndarray, fn) -> float | None:
    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    return float(fn(x)) if x.size else None


def summarise_session(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    episodes: tuple[Episode, ...],
    criteria: Criteria,
    quality: dict,
) -> dict:
    """The ``summary`` dictionary of an Analysis (keys in its docstring)."""
    lo, hi, how = sedation_window_s(session)
    span = hi - lo
    gap = criteria.signal_loss
    co2_cov = covered_s(session.co2.time_s, gap.co2_gap_s, lo, hi) if session.co2 else 0.0
    spo2_t, spo2_v = usable_spo2(trends)
    valid = np.asarray(breaths.valid, dtype=bool)
    apnoeas = [e.duration_s for e in episodes if e.kind == "apnoea"]
    return {
        "sedation_start_s": lo,
        "sedation_end_s": hi,
        "sedation_duration_s": span,
        "sedation_window": how,
        "co2_coverage_pct": _pct(co2_cov, span),
        "spo2_coverage_pct": _pct(covered_s(spo2_t, gap.spo2_gap_s, lo, hi), span),
        "episodes_by_kind": {k: sum(e.kind == k for e in episodes) for k in EPISODE_KINDS},
        "episodes_by_severity": {t: sum(e.severity == t for e in episodes) for t in SEVERITY_TIERS},
        "longest_apnoea_s": max(apnoeas) if apnoeas else (0.0 if len(breaths) else None),
        "min_spo2_pct": _finite_or_none(spo2_v, np.min),
        "time_below_90_s": time_below_s(
            spo2_t, spo2_v, criteria.desaturation.spo2_below_pct, gap.spo2_gap_s
        )
        if spo2_t.size
        else None,
        "max_etco2_mmHg": _finite_or_none(breaths.etco2_mmHg[valid], np.max),
        "median_rr_per_min": _finite_or_none(breaths.rr_per_min[valid], np.median),
        "n_breaths": len(breaths),
        "n_valid_breaths": int(valid.sum()),
        "attention": _attention(session, episodes, quality),
    }


def _attention(session: Session, episodes: tuple[Episode, ...], quality: dict) -> list[str]:
    out = []
    for e in episodes:
        if tier_rank(e.severity) >= tier_rank("moderate"):
            out.append(
                f"{e.id} {e.kind} at {session.clock_time(e.start_s):%H:%M:%S} "
                f"({_duration_text(e.duration_s)}) graded {e.severity}."
            )
    out.extend(quality["limitations"])
    if not session.doses:
        out.append("No doses recorded: the sedation window is the span of the data.")
    return out


def _duration_text(duration_s: float) -> str:
    """``71 s`` as ``1 min 11 s``; under a minute as ``42 s``."""
    minutes, seconds = divmod(round(duration_s), 60)
    return f"{minutes} min {seconds} s" if minutes else f"{seconds} s"


def _limitations(session: Session, breaths: BreathTable, baseline: Baseline) -> list[str]:
    out = []
    if session.co2 is None:
        out.append(
            "No CO2 stream: apnoea, hypoventilation, rebreathing and obstruction not assessed."
        )
    elif not np.any(breaths.valid):
        out.append("No valid breath found in the CO2 stream: CO2 episodes not assessed.")
    if session.spo2 is None:
        out.append("No SpO2 stream: desaturation not assessed.")
    if session.co2 is not None and not np.isfinite(baseline.etco2_mmHg):
        out.append(
            "No baseline EtCO2: only the absolute EtCO2 criterion applied; hypopnoeic "
            "hypoventilation and obstruction not assessed."
        )
    elif session.co2 is not None and not np.isfinite(baseline.phase3_slope_norm_per_s):
        out.append("No baseline phase III slope: obstruction judged on the upstroke only.")
    return out


def summarise_quality(
    session: Session,
    breaths: BreathTable,
    trends: Trends,
    baseline: Baseline,
    criteria: Criteria,
) -> dict:
    """The ``quality`` dictionary of an Analysis (keys in its docstring)."""
    valid = np.asarray(breaths.valid, dtype=bool)
    reasons = Counter(r for r, ok in zip(breaths.reason, valid, strict=True) if not ok)
    return {
        "sources": [asdict(s) for s in session.sources],
        "findings": [asdict(f) for f in session.findings],
        "warnings": list(session.warnings),
        "invalid_breaths": {"count": int((~valid).sum()), "by_reason": dict(reasons)},
        "spo2_artefact_samples": int(np.count_nonzero(trends.spo2_artefact)),
        "criteria": {
            "name": criteria.name,
            "path": criteria.path,
            "sha256": criteria.sha256,
        },
        "baseline": asdict(baseline),
        "limitations": _limitations(session, breaths, baseline),
    }
