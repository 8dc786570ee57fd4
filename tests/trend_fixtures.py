"""Visits with planted breath shapes for the trend tests (no files: Sessions built directly)."""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np

from sedreport.demo.capnogram import BreathSchedule, add_sensor_noise, render_capnogram
from sedreport.session import BloodGas, Capnogram, OximetryTrend, Patient, Session


def planted_schedule(
    n: int,
    rr_per_min: float,
    upstroke_s: float,
    slope_mmHg_s: float,
    etco2_mmHg: float,
    expiratory_fraction: float = 0.6,
    jitter: float = 0.0,
    seed: int = 0,
) -> BreathSchedule:
    """Regular breaths with a straight plateau (curvature ~0) of the given phase III slope."""
    rng = np.random.default_rng(seed)
    cycle = 60.0 / rr_per_min * np.exp(jitter * rng.standard_normal(n))
    start = 1.0 + np.r_[0.0, np.cumsum(cycle[:-1])]
    te = cycle * expiratory_fraction
    plateau = te - upstroke_s
    return BreathSchedule(
        start_s=start,
        upstroke_s=np.full(n, upstroke_s),
        plateau_s=plateau,
        downstroke_s=np.full(n, 0.15),
        etco2_mmHg=np.full(n, etco2_mmHg),
        plateau_rise_mmHg=slope_mmHg_s * plateau,
        curvature=np.full(n, 1e-6),
        fico2_mmHg=np.zeros(n),
        obstructed=np.zeros(n, dtype=bool),
        assisted=np.zeros(n, dtype=bool),
        shelf_s=np.zeros(n),
        shelf_mmHg=np.zeros(n),
        hump_dip=np.zeros(n),
    )


def capnogram_of(schedule: BreathSchedule, fs_hz: float, noise_sd: float, seed: int = 1):
    """Sampled capnogram of a schedule with Gaussian sensor noise."""
    end = float(schedule.end_s[-1]) + 1.5
    t = np.arange(0.0, end, 1.0 / fs_hz)
    clean = render_capnogram(schedule, t)
    rng = np.random.default_rng(seed)
    y = add_sensor_noise(clean, np.ones(t.size, dtype=bool), noise_sd, noise_sd, rng)
    return Capnogram(time_s=t, co2_mmHg=y, sample_rate_hz=fs_hz)


def make_session(
    cap: Capnogram,
    *,
    session_id: str = "V1",
    ref: str = "P-1",
    started: datetime | None = None,
    spo2: np.ndarray | None = None,
    conditions: tuple[str, ...] = ("copd",),
    target: tuple[float, float] | None = None,
    blood_gas: BloodGas | None = None,
    flow_l_min: float | None = 2.0,
) -> Session:
    """A Session made in memory (the trend stage takes a Session, not a folder)."""
    from sedreport.session import Oxygen

    started = started or datetime.fromisoformat("2026-01-05T10:00:00+00:00")
    ox = None
    if spo2 is not None:
        t = np.arange(spo2.size, dtype=float)
        ox = OximetryTrend(t, np.asarray(spo2, float), np.full(spo2.size, 80.0), 1.0)
    return Session(
        session_id=session_id,
        started=started,
        folder=__import__("pathlib").Path("."),
        patient=Patient(ref=ref, conditions=conditions, spo2_target_pct=target),
        oxygen=Oxygen("nasal_cannula", flow_l_min),
        co2=cap,
        spo2=ox,
        blood_gas=blood_gas,
    )


def day(n: int) -> datetime:
    """A visit start ``n`` days after 5 Jan 2026."""
    return datetime.fromisoformat("2026-01-05T10:00:00+00:00") + timedelta(days=n)
