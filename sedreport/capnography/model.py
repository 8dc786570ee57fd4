"""Plain data produced by the capnography stage: breaths, trends and the patient's baseline."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class BreathTable:
    """Every detected breath, one array element per breath, in time order.

    Time conventions (DESIGN.md): a breath starts at the onset of its expiratory upstroke
    (phase II) and ends when the inspiratory downstroke is back at the inspired baseline.

    Attributes
    ----------
    start_s, end_s : ndarray of float
        Session-clock seconds.
    etco2_mmHg : ndarray of float
        End-tidal CO2: the value at the end of the alveolar plateau (not a noise spike).
    fico2_mmHg : ndarray of float
        Inspired baseline of the inspiration that follows the breath.
    rr_per_min : ndarray of float
        60 / (this start - previous start); NaN for the first breath and after a gap.
    upstroke_s : ndarray of float
        Phase II duration (10 % to 90 % of the rise), seconds.
    phase3_slope_mmHg_s : ndarray of float
        Least-squares slope of the alveolar plateau, mmHg/s.
    phase3_slope_norm_per_s : ndarray of float
        Phase III slope divided by EtCO2, 1/s (shape index independent of dilution).
    valid : ndarray of bool
        False when the breath is unusable for trends (reason in ``reason``).
    reason : tuple of str
        Empty string for valid breaths, else a short reason (``"short"``, ``"low_plateau"``...).
    """

    start_s: np.ndarray
    end_s: np.ndarray
    etco2_mmHg: np.ndarray
    fico2_mmHg: np.ndarray
    rr_per_min: np.ndarray
    upstroke_s: np.ndarray
    phase3_slope_mmHg_s: np.ndarray
    phase3_slope_norm_per_s: np.ndarray
    valid: np.ndarray
    reason: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.start_s.size)


@dataclass(frozen=True)
class Trends:
    """Per-breath and oximetry values as time series on the session clock.

    Attributes
    ----------
    breath_time_s : ndarray
        Time stamp of each valid breath (its end), seconds.
    etco2_mmHg, fico2_mmHg : ndarray
        Values of each valid breath.
    rr_time_s, rr_per_min : ndarray
        Respiratory rate on a regular 1 s grid from the breaths in a trailing window
        (NaN where the CO2 signal is missing).
    spo2_time_s, spo2_pct, pulse_bpm : ndarray
        Cleaned oximeter trend; artefact samples set to NaN.
    spo2_artefact : ndarray of bool
        True for samples marked as artefact (impossible jump, flat-lined probe).
    rr_window_s : float
        Length of the trailing window used for the rate.
    """

    breath_time_s: np.ndarray
    etco2_mmHg: np.ndarray
    fico2_mmHg: np.ndarray
    rr_time_s: np.ndarray
    rr_per_min: np.ndarray
    spo2_time_s: np.ndarray
    spo2_pct: np.ndarray
    pulse_bpm: np.ndarray
    spo2_artefact: np.ndarray
    rr_window_s: float


@dataclass(frozen=True)
class Baseline:
    """The patient's own pre-sedation values.

    Attributes
    ----------
    etco2_mmHg, rr_per_min, phase3_slope_norm_per_s, upstroke_s : float
        Medians over the baseline window (NaN when no valid breath there).
    window_s : tuple of float
        Start and end of the window on the session clock.
    method : str
        Plain sentence: which window was used and why (e.g. the fallback when there is no
        pre-dose CO2 data).
    n_breaths : int
        Valid breaths in the window.
    """

    etco2_mmHg: float
    rr_per_min: float
    phase3_slope_norm_per_s: float
    upstroke_s: float
    window_s: tuple[float, float]
    method: str
    n_breaths: int
