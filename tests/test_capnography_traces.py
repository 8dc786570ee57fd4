"""Synthetic capnograms with planted truth, used to score the breath detector.

The traces are invented test data (not physiology claims): each breath is a raised-cosine
upstroke (phase II), a linear alveolar plateau (phase III) and a raised-cosine downstroke,
on a flat inspired baseline. The truth follows DESIGN.md: a breath starts at the onset of the
upstroke and ends when the downstroke is back at the baseline; EtCO2 is the value at the end
of the plateau; FiCO2 the inspired baseline after the breath. The tests at the bottom check
the generator itself so that the scores built on it mean something.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from sedreport.session import Capnogram


@dataclass
class TraceSpec:
    """Recipe of one synthetic capnogram (all values in physical units)."""

    fs_hz: float = 100.0
    duration_s: float = 300.0
    rr_per_min: float = 12.0
    rr_jitter_frac: float = 0.05
    etco2_mmHg: float = 38.0
    etco2_sd_mmHg: float = 1.0
    fico2_mmHg: float = 0.0
    upstroke_s: float = 0.25
    exp_frac: float = 0.45
    down_s: float = 0.2
    slope_mmHg_s: float = 1.0
    noise_sd_mmHg: float = 0.0
    drift_mmHg: float = 0.0
    drift_period_s: float = 180.0
    cardiogenic_mmHg: float = 0.0
    heart_rate_hz: float = 1.2
    pauses: list[tuple[float, float]] = field(default_factory=list)
    gaps: list[tuple[float, float]] = field(default_factory=list)
    clip_mmHg: float | None = None
    seed: int = 0


def _breath_starts(spec: TraceSpec, rng: np.random.Generator) -> np.ndarray:
    period = 60.0 / spec.rr_per_min
    n_max = int(spec.duration_s / (period * 0.5)) + 2
    cycle = period * (1.0 + spec.rr_jitter_frac * rng.uniform(-1, 1, n_max))
    starts = 1.0 + np.r_[0.0, np.cumsum(cycle)[:-1]]
    for at_s, pause_s in spec.pauses:
        starts = np.where(starts > at_s, starts + pause_s, starts)
    return starts


def make_trace(spec: TraceSpec) -> tuple[Capnogram, dict]:
    """Build the capnogram and its truth dict (columnar, like the demo truth files)."""
    rng = np.random.default_rng(spec.seed)
    t = np.arange(0.0, spec.duration_s, 1.0 / spec.fs_hz)
    starts = _breath_starts(spec, rng)
    period = 60.0 / spec.rr_per_min
    n = starts.size
    exp_s = spec.exp_frac * period * np.ones(n)
    et = spec.etco2_mmHg + spec.etco2_sd_mmHg * rng.standard_normal(n)
    f = spec.fico2_mmHg
    u, d = spec.upstroke_s, spec.down_s
    p0 = et - spec.slope_mmHg_s * (exp_s - u)

    k = np.searchsorted(starts, t, side="right") - 1
    inside = k >= 0
    kk = np.maximum(k, 0)
    tau = t - starts[kk]
    e_k = exp_s[kk]
    rise = f + (p0[kk] - f) * (1 - np.cos(np.pi * np.clip(tau / u, 0, 1))) / 2
    plateau = p0[kk] + spec.slope_mmHg_s * (tau - u)
    down = f + (et[kk] - f) * (1 + np.cos(np.pi * np.clip((tau - e_k) / d, 0, 1))) / 2
    y = np.where(tau < u, rise, np.where(tau < e_k, plateau, np.where(tau < e_k + d, down, f)))
    y = np.where(inside, y, f)
    # cardiogenic oscillations: full-size ripples on the inspired baseline (pauses included),
    # zero-mean ripples of the same size on the plateau
    beat = np.sin(2 * np.pi * spec.heart_rate_hz * t)
    at_base = ~inside | (tau >= e_k + d)
    on_plateau = inside & (tau >= u) & (tau < e_k)
    y = y + spec.cardiogenic_mmHg * np.where(at_base, 0.5 * (1 + beat), 0.0)
    y = y + spec.cardiogenic_mmHg * np.where(on_plateau, 0.5 * beat, 0.0)
    drift = spec.drift_mmHg * np.sin(2 * np.pi * t / spec.drift_period_s)
    y = y + drift
    if spec.noise_sd_mmHg:
        y = y + spec.noise_sd_mmHg * rng.standard_normal(t.size)
    if spec.clip_mmHg is not None:
        y = np.minimum(y, spec.clip_mmHg)

    end = starts + exp_s + d
    keep = end < t[-1]
    for g0, g1 in spec.gaps:
        keep &= (end < g0) | (starts > g1)
    drop = np.zeros(t.size, dtype=bool)
    for g0, g1 in spec.gaps:
        drop |= (t > g0) & (t < g1)
    t_plateau_end = starts + exp_s
    truth = {
        "start_s": starts[keep],
        "end_s": end[keep],
        "etco2_mmHg": (
            et + spec.drift_mmHg * np.sin(2 * np.pi * t_plateau_end / spec.drift_period_s)
        )[keep],
        "fico2_mmHg": np.full(int(keep.sum()), f),
        "gaps": list(spec.gaps),
    }
    cap = Capnogram(time_s=t[~drop], co2_mmHg=y[~drop], sample_rate_hz=spec.fs_hz)
    return cap, truth


def match_breaths(det_start: np.ndarray, true_start: np.ndarray, tol_s: float = 0.5):
    """One-to-one nearest-start matching; returns (recall, precision, pairs)."""
    det_start = np.sort(det_start)
    if det_start.size == 0 or true_start.size == 0:
        return 0.0, 0.0, np.empty((0, 2), dtype=int)
    j = np.clip(np.searchsorted(det_start, true_start), 1, det_start.size - 1)
    left, right = det_start[j - 1], det_start[j]
    jj = np.where(np.abs(true_start - left) <= np.abs(true_start - right), j - 1, j)
    if det_start.size == 1:
        jj = np.zeros_like(jj)
    ok = np.abs(det_start[jj] - true_start) <= tol_s
    pairs = np.column_stack([np.flatnonzero(ok), jj[ok]])
    n_det_matched = np.unique(pairs[:, 1]).size
    return ok.sum() / true_start.size, n_det_matched / det_start.size, pairs


def score(breaths, truth: dict, tol_s: float = 0.5) -> dict:
    """Recall, precision, EtCO2 median absolute error and start error of a detection."""
    scored = np.array(["gap" not in r for r in breaths.reason], dtype=bool)
    det_start = breaths.start_s[scored]
    recall, precision, pairs = match_breaths(det_start, truth["start_s"], tol_s)
    order = np.argsort(det_start)
    det = pairs[:, 1]
    tru = pairs[:, 0]
    et_err = np.abs(breaths.etco2_mmHg[scored][order][det] - truth["etco2_mmHg"][tru])
    start_err = np.abs(det_start[order][det] - truth["start_s"][tru])
    end_err = np.abs(breaths.end_s[scored][order][det] - truth["end_s"][tru])
    return {
        "recall": float(recall),
        "precision": float(precision),
        "etco2_err_median_mmHg": float(np.median(et_err)) if et_err.size else np.nan,
        "start_err_median_s": float(np.median(start_err)) if start_err.size else np.nan,
        "end_err_median_s": float(np.median(end_err)) if end_err.size else np.nan,
    }


# ----- checks of the generator itself ------------------------------------------------------


def test_generator_rate_and_levels():
    """The planted rate and levels are what the recipe says (arithmetic of the recipe)."""
    cap, truth = make_trace(TraceSpec(duration_s=120.0, rr_jitter_frac=0.0, etco2_sd_mmHg=0.0))
    assert np.allclose(np.diff(truth["start_s"]), 5.0)
    assert np.allclose(truth["etco2_mmHg"], 38.0)
    assert cap.co2_mmHg.max() <= 38.0 + 1e-9
    assert cap.co2_mmHg.min() >= 0.0


def test_generator_pause_and_gap():
    spec = TraceSpec(duration_s=200.0, pauses=[(60.0, 30.0)], gaps=[(150.0, 160.0)])
    cap, truth = make_trace(spec)
    assert np.diff(truth["start_s"]).max() > 30.0
    assert np.diff(cap.time_s).max() > 9.0
    assert not np.any((truth["start_s"] > 150.0) & (truth["start_s"] < 160.0))
