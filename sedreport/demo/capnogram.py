"""Breath-by-breath time capnogram model for invented demo sessions.

Each breath is drawn from four phases on the session clock (seconds):

* inspiratory baseline at the inspired CO2 (FiCO2, ~0 mmHg in normal breathing),
* expiratory upstroke (phase II), a raised-cosine rise starting exactly at the breath start,
* alveolar plateau (phase III), gently rising with a positive slope up to the end-tidal value,
* inspiratory downstroke back to the inspired baseline of the following inspiration.

These are the phases of the time capnogram as taught in common practice (the phase names follow
the usual description of the normal capnogram; no product's model is copied). Values are mmHg
as seen at the sampling port, i.e. after nasal-cannula dilution; sensor noise is added last.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Phase II (upstroke) duration of a normal breath, s (from memory: a few tenths of a second).
UPSTROKE_S = 0.22
#: Inspiratory downstroke duration, s (from memory: steeper than the upstroke).
DOWNSTROKE_S = 0.15


@dataclass(frozen=True)
class BreathSchedule:
    """Every generated breath, one array element per breath (session-clock seconds, mmHg).

    Attributes
    ----------
    start_s : ndarray
        Onset of the expiratory upstroke.
    upstroke_s, plateau_s, downstroke_s : ndarray
        Phase durations, s.
    etco2_mmHg : ndarray
        Value at the end of the plateau at the sampling port (before noise).
    plateau_rise_mmHg : ndarray
        Rise across the plateau (phase III), mmHg; positive.
    curvature : ndarray
        Plateau curvature (0 = straight; larger = rounder, obstructive "shark fin").
    fico2_mmHg : ndarray
        Inspired baseline of the inspiration that follows the breath.
    obstructed : ndarray of bool
        Breath drawn with the planted obstructive shape.
    assisted : ndarray of bool
        Breath given by bag-mask ventilation.
    shelf_s, shelf_mmHg : ndarray
        Stepped expiration: a low shelf of this height and length before the main upstroke
        (0 = none); the shelf starts the breath and shortens its plateau.
    hump_dip : ndarray
        Two-hump expiration: fractional dip of the plateau at its middle (0 = none).
    """

    start_s: np.ndarray
    upstroke_s: np.ndarray
    plateau_s: np.ndarray
    downstroke_s: np.ndarray
    etco2_mmHg: np.ndarray
    plateau_rise_mmHg: np.ndarray
    curvature: np.ndarray
    fico2_mmHg: np.ndarray
    obstructed: np.ndarray
    assisted: np.ndarray
    shelf_s: np.ndarray
    shelf_mmHg: np.ndarray
    hump_dip: np.ndarray

    @property
    def end_s(self) -> np.ndarray:
        """Time the downstroke is back at the inspired baseline."""
        return self.plateau_end_s + self.downstroke_s

    @property
    def plateau_end_s(self) -> np.ndarray:
        """End of phase III (start of the downstroke)."""
        return self.start_s + self.shelf_s + self.upstroke_s + self.plateau_s

    @property
    def slope_mmHg_s(self) -> np.ndarray:
        """Mean phase III slope, mmHg/s."""
        return self.plateau_rise_mmHg / self.plateau_s

    def __len__(self) -> int:
        return int(self.start_s.size)

    def select(self, keep: np.ndarray) -> BreathSchedule:
        """A schedule with only the breaths where ``keep`` is True."""
        return BreathSchedule(**{k: getattr(self, k)[keep] for k in _FIELDS})


_FIELDS = (
    "start_s",
    "upstroke_s",
    "plateau_s",
    "downstroke_s",
    "etco2_mmHg",
    "plateau_rise_mmHg",
    "curvature",
    "fico2_mmHg",
    "obstructed",
    "assisted",
    "shelf_s",
    "shelf_mmHg",
    "hump_dip",
)
#: Rise time of a shelf, s (invented).
SHELF_RISE_S = 0.08
#: Width (SD, as a fraction of the plateau) of the mid-plateau dip of a two-hump breath.
HUMP_WIDTH = 0.12


def _raised_cosine(x: np.ndarray) -> np.ndarray:
    """Smooth 0 -> 1 rise on x in [0, 1]."""
    return 0.5 - 0.5 * np.cos(np.pi * np.clip(x, 0.0, 1.0))


def _plateau_shape(x: np.ndarray, curvature: np.ndarray) -> np.ndarray:
    """0 -> 1 over the plateau; concave (rounded) for curvature > 0, straight at 0."""
    a = np.maximum(curvature, 1e-6)
    return (1.0 - np.exp(-a * x)) / (1.0 - np.exp(-a))


def render_capnogram(schedule: BreathSchedule, time_s: np.ndarray) -> np.ndarray:
    """Noise-free CO2 at the sampling port at the given times.

    Parameters
    ----------
    schedule : BreathSchedule
        Breaths in time order; they must not overlap.
    time_s : ndarray
        Sample times, session-clock seconds, increasing.

    Returns
    -------
    ndarray
        CO2 in mmHg. Before the first breath the signal sits at the first breath's inspired
        baseline; between breaths at the preceding breath's ``fico2_mmHg``.
    """
    n = len(schedule)
    if n == 0:
        return np.zeros_like(time_s)
    idx = np.searchsorted(schedule.start_s, time_s, side="right") - 1
    before = idx < 0
    i = np.clip(idx, 0, n - 1)
    shelf_s, shelf = schedule.shelf_s[i], schedule.shelf_mmHg[i]
    u_all = time_s - schedule.start_s[i]
    u = u_all - shelf_s
    tu, tp, td = schedule.upstroke_s[i], schedule.plateau_s[i], schedule.downstroke_s[i]
    et = schedule.etco2_mmHg[i]
    p0 = et - schedule.plateau_rise_mmHg[i]
    fi_after = schedule.fico2_mmHg[i]
    fi_before = np.where(i > 0, schedule.fico2_mmHg[np.maximum(i - 1, 0)], fi_after)
    # Rounder (obstructive) breaths: part-linear upstroke, so that phase II runs into the steep
    # phase III without a kink.
    w = np.clip((schedule.curvature[i] - 1.0) / 4.0, 0.0, 0.5)
    x = np.clip(u / tu, 0.0, 1.0)
    foot = fi_before + shelf * _raised_cosine(u_all / SHELF_RISE_S)
    up = foot + (p0 - foot) * ((1.0 - w) * _raised_cosine(x) + w * x)
    xp = (u - tu) / tp
    plateau = p0 + (et - p0) * _plateau_shape(xp, schedule.curvature[i])
    plateau = plateau * (1.0 - schedule.hump_dip[i] * np.exp(-0.5 * ((xp - 0.5) / HUMP_WIDTH) ** 2))
    down = et + (fi_after - et) * _raised_cosine((u - tu - tp) / td)
    value = np.select(
        [u < 0.0, u < tu, u < tu + tp, u < tu + tp + td],
        [foot, up, plateau, down],
        default=fi_after,
    )
    return np.where(before, schedule.fico2_mmHg[0], value)


def plateau_mask(schedule: BreathSchedule, time_s: np.ndarray) -> np.ndarray:
    """True for samples inside an upstroke, plateau or downstroke (CO2 above baseline)."""
    if len(schedule) == 0:
        return np.zeros(time_s.shape, dtype=bool)
    idx = np.searchsorted(schedule.start_s, time_s, side="right") - 1
    i = np.clip(idx, 0, len(schedule) - 1)
    return (idx >= 0) & (time_s < schedule.end_s[i])


def add_sensor_noise(
    clean_mmHg: np.ndarray,
    in_breath: np.ndarray,
    baseline_sd_mmHg: float,
    plateau_sd_mmHg: np.ndarray | float,
    rng: np.random.Generator,
) -> np.ndarray:
    """Add Gaussian sensor noise and clip at 0 mmHg (a capnometer does not read negative CO2).

    Parameters
    ----------
    clean_mmHg : ndarray
        Noise-free signal.
    in_breath : ndarray of bool
        Samples inside a breath get ``plateau_sd_mmHg``; baseline samples ``baseline_sd_mmHg``.
    baseline_sd_mmHg : float
        Noise on the inspired baseline, mmHg.
    plateau_sd_mmHg : float or ndarray
        Noise on the expired part (larger with nasal-cannula dilution), mmHg.
    rng : numpy.random.Generator
    """
    sd = np.where(in_breath, plateau_sd_mmHg, baseline_sd_mmHg)
    return np.clip(clean_mmHg + rng.standard_normal(clean_mmHg.shape) * sd, 0.0, None)
