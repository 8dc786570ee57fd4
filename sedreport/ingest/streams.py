"""Checks shared by every reader of the CO2 and SpO2 streams (CSV, EDF, WFDB).

Rules: times strictly increasing (a step back or a repeated time is an error naming the line or
sample), values inside physiologically possible limits (CO2 -5 to 150 mmHg after conversion,
SpO2 0-100 %, pulse 0-300 /min; plausibility limits, common practice), sample rate = 1 / median
step. Blank SpO2/pulse cells (no reading) stay NaN and are counted by the caller.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np

from sedreport.errors import SessionError
from sedreport.session import QualityFinding, SourceInfo

#: Possible-value limits, inclusive, in the stream's unit (common practice plausibility limits).
CO2_LIMITS_MMHG = (-5.0, 150.0)
SPO2_LIMITS_PCT = (0.0, 100.0)
PULSE_LIMITS_BPM = (0.0, 300.0)
#: Slowest CO2 sampling that is a waveform, Hz: DESIGN.md "The session folder" gives the
#: capnogram as uniformly sampled at 10-200 Hz; slower files (a median step longer than 0.1 s)
#: are end-tidal trends and are refused. Above 200 Hz is only a warning (see ``quality``).
MIN_CO2_RATE_HZ = 10.0
#: Relative slack on that limit, so 10 Hz written with rounded times (0.1, 0.2...) passes.
_RATE_SLACK = 1e-6


def check_increasing(time_s: np.ndarray, locate: Callable[[int], str]) -> None:
    """Raise on the first time that goes backwards or repeats the previous one.

    Parameters
    ----------
    time_s : ndarray
        Times in file order, seconds.
    locate : callable
        Maps a row index to ``<session>/<file>:<line>`` for the message.
    """
    step = np.diff(time_s)
    bad = step <= 0
    if bad.any():
        row = int(np.argmax(bad)) + 1
        if step[row - 1] == 0:
            what = f"duplicate time {time_s[row]:g} s (same as the previous row)"
        else:
            what = f"time goes backwards: {time_s[row]:g} s after {time_s[row - 1]:g} s"
        raise SessionError(locate(row), what)


def check_in_time_order(time_s: np.ndarray, locate: Callable[[int], str], what: str) -> None:
    """Raise on the first time that goes backwards; equal times are allowed (log files).

    Parameters
    ----------
    time_s : ndarray
        Times in file order, seconds.
    locate : callable
        Maps a row index to ``<session>/<file>:<line>`` for the message.
    what : str
        Plural noun for the message (``doses``, ``events``).
    """
    back = np.flatnonzero(np.diff(time_s) < 0)
    if back.size:
        row = int(back[0]) + 1
        raise SessionError(
            locate(row),
            f"time goes backwards ({time_s[row]:g} s after "
            f"{time_s[row - 1]:g} s); {what} must be in time order",
        )


def check_range(
    values: np.ndarray,
    limits: tuple[float, float],
    label: str,
    unit: str,
    locate: Callable[[int], str],
) -> None:
    """Raise on the first finite value outside ``limits`` (NaN = no reading, allowed)."""
    lo, hi = limits
    with np.errstate(invalid="ignore"):
        bad = (values < lo) | (values > hi)
    if bad.any():
        row = int(np.argmax(bad))
        raise SessionError(
            locate(row), f"{label} {values[row]:g} {unit} is impossible (allowed {lo:g} to {hi:g})"
        )


def median_rate_hz(time_s: np.ndarray, locate: Callable[[int], str]) -> float:
    """Sample rate as 1 / median step, Hz; at least two samples are needed."""
    if time_s.size < 2:
        raise SessionError(locate(0), f"only {time_s.size} sample; a stream needs at least 2")
    return float(1.0 / np.median(np.diff(time_s)))


def check_waveform_rate(rate_hz: float, where: str) -> None:
    """Refuse a capnogram sampled below :data:`MIN_CO2_RATE_HZ` (an EtCO2 trend, not a wave).

    Parameters
    ----------
    rate_hz : float
        Sample rate, Hz (1 / median step of a CSV; the header's rate of an EDF/WFDB channel).
    where : str
        ``<session>/<file>`` (and channel) for the message.

    Examples
    --------
    >>> check_waveform_rate(25.0, "ENDO-1/co2.csv")
    >>> try:
    ...     check_waveform_rate(1.0, "ENDO-1/co2.csv")
    ... except SessionError as exc:
    ...     print(exc)
    ENDO-1/co2.csv: 1.0 Hz — this looks like an EtCO2 trend, not a capnogram; a waveform needs >= 10 Hz
    """
    if rate_hz < MIN_CO2_RATE_HZ * (1.0 - _RATE_SLACK):
        shown = f"{rate_hz:.1f}" if rate_hz >= 0.1 else f"{rate_hz:.2g}"
        raise SessionError(
            where,
            f"{shown} Hz — this looks like an EtCO2 trend, not a capnogram; "
            f"a waveform needs >= {MIN_CO2_RATE_HZ:g} Hz",
        )


@dataclass(frozen=True)
class ReadContext:
    """What every reader needs to know about the session.

    Attributes
    ----------
    session : str
        Session id (or folder name) used in messages.
    folder : Path
        Session folder (resolved).
    started : datetime
        Aware zero of the session clock.
    barometric_mmHg : float
        Ambient pressure for percent CO2.
    weight_kg : float or None
        For weight-based infusion rates.
    """

    session: str
    folder: Path
    started: datetime
    barometric_mmHg: float = 760.0
    weight_kg: float | None = None


@dataclass(frozen=True)
class Loaded:
    """What one reader produced: the data, its provenance, findings and warnings."""

    data: Any
    info: SourceInfo
    findings: tuple[QualityFinding, ...] = ()
    warnings: tuple[str, ...] = ()
