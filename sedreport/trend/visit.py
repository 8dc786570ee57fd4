"""Per-visit indices of a COPD clinic visit: the whole resting recording is the reference.

A visit is a session folder recorded at rest; doses, if any, are counted and ignored. Per
visit: EtCO2, rate, inspired CO2 and the shape indices of every valid breath (medians,
quartiles, bootstrap intervals, see :mod:`sedreport.trend.stats`), breath-to-breath
variability, the breaths excluded and why, SpO2 against the patient's target range, oxygen,
and an optional blood-gas PCO2 with the arterial-to-end-tidal gradient.

Sources of the indices: phase III slope and its normalisation to EtCO2, upstroke (phase II)
time and the alpha angle are the time-capnogram shape indices of obstructive disease (You et
al., Eur Respir J 1994; Hisamuddin et al., Int J Emerg Med 2009; from memory); definitions in
:mod:`sedreport.capnography.metrics` and :mod:`sedreport.trend.shape`. SpO2 target ranges after
the British Thoracic Society guideline (O'Driscoll et al., Thorax 2017).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime

import numpy as np

from sedreport.capnography import find_breaths
from sedreport.criteria import resolve_criteria
from sedreport.errors import SessionError
from sedreport.gaps import gap_findings
from sedreport.oximetry import clean_oximetry
from sedreport.session import BloodGas, Session, SourceInfo
from sedreport.trend.settings import TrendSettings
from sedreport.trend.shape import (
    AveragedBreath,
    alpha_angle_deg,
    averaged_breath,
    inspired_before,
    phase2_slope_mmHg_s,
    phase2_time_s,
)
from sedreport.trend.stats import IndexStat, index_stat, robust_sd, seeded_rng

#: Conditions (``patient.conditions`` words) that put a patient at risk of hypercapnic
#: respiratory failure, for the default SpO2 target (O'Driscoll et al., Thorax 2017).
HYPERCAPNIC_RISK_CONDITIONS: tuple[str, ...] = (
    "copd",
    "bronchiectasis",
    "cystic_fibrosis",
    "obesity_hypoventilation",
    "neuromuscular_disease",
    "chest_wall_disease",
    "hypercapnic_respiratory_failure",
)
#: Breath indices in the order of the CSV contract (plus the phase II slope).
BREATH_INDICES: tuple[str, ...] = (
    "etco2_mmHg",
    "rr_per_min",
    "fico2_mmHg",
    "phase3_slope_mmHg_s",
    "phase3_slope_norm_per_s",
    "alpha_angle_deg",
    "upstroke_s",
    "phase2_slope_mmHg_s",
)
#: Seed of every bootstrap (outputs are reproducible).
BOOTSTRAP_SEED = 0


@dataclass(frozen=True)
class SpO2Summary:
    """SpO2 over the visit against a target range.

    Shares are of the valid (non-artefact, non-missing) samples, in %; ``target_from`` says
    whether the range is the patient's own (``session.yaml``) or the default and why.
    """

    stat: IndexStat
    target_pct: tuple[float, float]
    target_from: str
    in_target_pct: float
    below_pct: float
    above_pct: float
    samples: int
    artefact_samples: int
    missing_samples: int


@dataclass(frozen=True)
class VisitIndices:
    """Everything the trend shows of one visit (plain data; formatting lives in render)."""

    session_id: str
    started: datetime
    patient_ref: str
    oxygen_device: str | None
    flow_l_min: float | None
    flow_changes: tuple[tuple[float, float, str], ...]
    duration_s: float
    breaths_total: int
    breaths_used: int
    excluded: tuple[tuple[str, int], ...]
    doses_ignored: int
    co2_gaps: int
    co2_gap_total_s: float
    stats: dict[str, IndexStat]
    etco2_sd_mmHg: float  # robust SD (1.4826 x MAD) over valid breaths
    interval_cv_pct: float  # robust SD / median of the breath intervals, %
    spo2: SpO2Summary | None
    blood_gas: BloodGas | None
    gradient_mmHg: float | None
    averaged: AveragedBreath
    reliable: bool
    quality: tuple[str, ...]
    sources: tuple[SourceInfo, ...]
    warnings: tuple[str, ...]

    @property
    def visit_date(self) -> date:
        """Calendar date of the visit (in the session's own UTC offset)."""
        return self.started.date()

    @property
    def excluded_pct(self) -> float:
        """Share of detected breaths not used, %."""
        if self.breaths_total == 0:
            return float("nan")
        return 100.0 * (self.breaths_total - self.breaths_used) / self.breaths_total


def spo2_target(session: Session, settings: TrendSettings) -> tuple[tuple[float, float], str]:
    """The SpO2 target range of a visit and where it comes from."""
    if session.patient.spo2_target_pct is not None:
        return session.patient.spo2_target_pct, "patient's own (session.yaml)"
    risk = [c for c in session.patient.conditions if c in HYPERCAPNIC_RISK_CONDITIONS]
    key = "hypercapnic_risk" if risk else "other"
    low = settings.value(f"spo2_target.{key}_low_pct")
    high = settings.value(f"spo2_target.{key}_high_pct")
    why = f"default, at risk of hypercapnic failure ({', '.join(risk)})" if risk else "default"
    return (low, high), why + " (BTS, O'Driscoll 2017)"


def _spo2_summary(session: Session, settings: TrendSettings) -> SpO2Summary | None:
    if session.spo2 is None or session.spo2.time_s.size == 0:
        return None
    spo2, _, artefact = clean_oximetry(session.spo2)
    ok = np.isfinite(spo2)
    values = spo2[ok]
    target, why = spo2_target(session, settings)
    block = max(1, int(round(settings.value("noise.block_spo2_s") * session.spo2.sample_rate_hz)))
    stat = index_stat(
        values,
        block,
        int(settings.value("noise.bootstrap_resamples")),
        settings.value("noise.confidence_pct"),
        seeded_rng(BOOTSTRAP_SEED, session.session_id, "spo2_pct"),
    )
    n = values.size if values.size else np.nan  # no valid sample: shares are NaN, not 0 %
    return SpO2Summary(
        stat=stat,
        target_pct=target,
        target_from=why,
        in_target_pct=100.0 * float(((values >= target[0]) & (values <= target[1])).sum()) / n,
        below_pct=100.0 * float((values < target[0]).sum()) / n,
        above_pct=100.0 * float((values > target[1]).sum()) / n,
        samples=int(values.size),
        artefact_samples=int(artefact.sum()),
        missing_samples=int((~ok & ~artefact).sum()),
    )


def _excluded(reasons: tuple[str, ...], valid: np.ndarray) -> tuple[tuple[str, int], ...]:
    counts: dict[str, int] = {}
    for r, ok in zip(reasons, valid, strict=True):
        if not ok:
            for part in (r or "unspecified").split(";"):
                counts[part] = counts.get(part, 0) + 1
    return tuple(sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def _quality(session: Session, gaps: list) -> tuple[str, ...]:
    """Findings that matter for a resting visit (a visit needs no dose or event log), then the
    CO2 gaps by the criteria's gap rule."""
    skip = {("missing_stream", "doses"), ("missing_stream", "events")}
    kept = [f.message for f in session.findings if (f.kind, f.source) not in skip]
    return (*kept, *(f.message for f in gaps))


def _flow_changes(session: Session) -> tuple[tuple[float, float, str], ...]:
    """Oxygen flow set during the visit: ``(time_s, flow_l_min, note)`` from events.csv."""
    out = []
    for e in session.events:
        if e.event in ("oxygen_flow", "oxygen_increase") and e.value is not None:
            out.append((float(e.time_s), float(e.value), e.note))
    return tuple(out)


def _per_breath(session: Session, settings: TrendSettings, gap_s: float):
    cap = session.co2
    b = find_breaths(cap, gap_s=gap_s)
    s2 = phase2_slope_mmHg_s(
        cap, b, settings.value("shape.phase2_low_frac"), settings.value("shape.phase2_high_frac")
    )
    alpha = alpha_angle_deg(
        s2, b.phase3_slope_mmHg_s, settings.value("shape.alpha_scale_mmHg_per_s")
    )
    values = {
        "etco2_mmHg": b.etco2_mmHg,
        "rr_per_min": b.rr_per_min,
        "fico2_mmHg": b.fico2_mmHg,
        "phase3_slope_mmHg_s": b.phase3_slope_mmHg_s,
        "phase3_slope_norm_per_s": b.phase3_slope_norm_per_s,
        "alpha_angle_deg": alpha,
        "upstroke_s": phase2_time_s(b.etco2_mmHg, inspired_before(b), s2),
        "phase2_slope_mmHg_s": s2,
    }
    return b, {k: np.where(b.valid, v, np.nan) for k, v in values.items()}


def visit_indices(session: Session, settings: TrendSettings) -> VisitIndices:
    """All per-visit indices of one resting recording.

    Parameters
    ----------
    session : Session
        A loaded visit (``sedreport.ingest.load_session``); its doses are ignored.
    settings : TrendSettings
        From :func:`sedreport.trend.settings.load_trend_settings`.

    Raises
    ------
    SessionError
        When the visit has no capnogram or fewer than 3 valid breaths.
    """
    sid = session.session_id
    if session.co2 is None or session.co2.time_s.size < 2:
        raise SessionError(f"{sid}/session.yaml:sources.co2", "a trend visit needs a capnogram")
    gap_s = resolve_criteria(session, None).signal_loss.co2_gap_s  # the one gap rule
    b, values = _per_breath(session, settings, gap_s)
    used = int(b.valid.sum())
    if used < 3:
        raise SessionError(sid, f"only {used} valid breath(s) in the capnogram; cannot trend")
    block = int(settings.value("noise.block_breaths"))
    resamples = int(settings.value("noise.bootstrap_resamples"))
    conf = settings.value("noise.confidence_pct")
    stats = {
        k: index_stat(v, block, resamples, conf, seeded_rng(BOOTSTRAP_SEED, sid, k))
        for k, v in values.items()
    }
    et = values["etco2_mmHg"]
    rr = values["rr_per_min"]
    intervals = 60.0 / rr[np.isfinite(rr) & (rr > 0)]
    cv = (
        100.0 * robust_sd(intervals) / float(np.median(intervals)) if intervals.size > 2 else np.nan
    )
    gas = session.blood_gas
    grad = None if gas is None else gas.pco2_mmHg - stats["etco2_mmHg"].median
    t0, t1 = float(session.co2.time_s[0]), float(session.co2.time_s[-1])
    gaps = gap_findings(session.co2.time_s, "co2", gap_s)
    return VisitIndices(
        session_id=sid,
        started=session.started,
        patient_ref=session.patient.ref,
        oxygen_device=session.oxygen.device,
        flow_l_min=session.oxygen.flow_l_min,
        flow_changes=_flow_changes(session),
        duration_s=t1 - t0,
        breaths_total=len(b),
        breaths_used=used,
        excluded=_excluded(b.reason, b.valid),
        doses_ignored=len(session.doses),
        co2_gaps=len(gaps),
        co2_gap_total_s=float(sum((f.end_s or 0.0) - (f.start_s or 0.0) for f in gaps)),
        stats=stats,
        etco2_sd_mmHg=robust_sd(et[np.isfinite(et)]),
        interval_cv_pct=cv,
        spo2=_spo2_summary(session, settings),
        blood_gas=gas,
        gradient_mmHg=grad,
        averaged=averaged_breath(session.co2, b, b.valid, settings.value("shape.average_grid_s")),
        reliable=used >= settings.value("noise.min_breaths"),
        quality=_quality(session, gaps),
        sources=session.sources,
        warnings=session.warnings,
    )
