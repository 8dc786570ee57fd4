"""What the oximeter exports: display updates held at 1 Hz, probe-off zeros, start-up readings,
a paced pulse (all invented, shaped like the real 1 Hz exports counted in
/work/shared/real-oximetry/README.md).

Applied after the physiology and the motion plant of :mod:`sedreport.demo.simulate`; each
phenomenon is off unless the :class:`~sedreport.demo.case.CaseSpec` asks for it, so cases that
do not use them keep their signals. No randomness is drawn here: everything comes from the spec.
"""

from __future__ import annotations

import numpy as np

from sedreport.demo import oximetry as ox
from sedreport.demo.case import CaseSpec, ProbeOff


def probe_windows(spec: CaseSpec, grid_s: np.ndarray, t0_s: float):
    """Boolean masks on the grid: probe-off seconds and start-up (acquiring) seconds."""
    off = np.zeros(grid_s.shape, dtype=bool)
    startup = np.zeros(grid_s.shape, dtype=bool)
    if spec.spo2_startup_s > 0:
        startup |= (grid_s >= t0_s) & (grid_s < t0_s + spec.spo2_startup_s)
    for p in spec.planted_of(ProbeOff):
        end = p.start_s + p.duration_s
        off |= (grid_s >= p.start_s) & (grid_s < end)
        startup |= (grid_s >= end) & (grid_s < end + p.startup_s)
    return off, startup


def export_like_monitor(
    spec: CaseSpec,
    grid_s: np.ndarray,
    t0_s: float,
    spo2_pct: np.ndarray,
    pulse_bpm: np.ndarray,
    artefact: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """SpO2 and pulse (whole numbers) as the monitor exports them, and the artefact mask
    (motion, probe-off and start-up seconds).

    Parameters
    ----------
    spec : CaseSpec
    grid_s : ndarray
        The 1 s grid of the session clock.
    t0_s : float
        First second of the SpO2 file.
    spo2_pct, pulse_bpm : ndarray
        Quantised readings with motion already planted.
    artefact : ndarray of bool
        Motion seconds.
    """
    off, startup = probe_windows(spec, grid_s, t0_s)
    spo2 = np.asarray(spo2_pct, dtype=float)
    pulse = np.asarray(pulse_bpm, dtype=float)
    if spec.paced_bpm is not None:
        pulse = np.where(artefact, pulse, float(spec.paced_bpm))
    if spec.spo2_startup_s > 0:
        first = startup & (grid_s < t0_s + spec.spo2_startup_s)
        spo2 = ox.startup_ramp(spo2, first, spec.spo2_startup_low_pct)
    for p in spec.planted_of(ProbeOff):
        end = p.start_s + p.duration_s
        after = (grid_s >= end) & (grid_s < end + p.startup_s)
        spo2 = ox.startup_ramp(spo2, after, p.startup_low_pct)
    u = int(spec.spo2_update_s)
    k0 = int(np.searchsorted(grid_s, t0_s))
    spo2 = ox.quantise(ox.hold_display(spo2, u, k0), 100.0)
    pulse = ox.hold_display(pulse, u, k0)
    marked = artefact | startup
    held_art = ox.hold_display(marked, u, k0) | marked
    spo2 = np.where(off, 0.0, spo2)
    pulse = np.where(off, 0.0, pulse)
    return spo2, pulse, held_art | off
