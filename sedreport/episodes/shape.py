"""Averaged breaths: the mean CO2 waveform of the breaths in a time window, aligned at the
onset of each breath's expiratory upstroke (phase II).

Used to show the shape a sloped-plateau finding was judged on: the patient's averaged baseline
breath beside an averaged breath from the episode (the detector compares the phase III slope
and the upstroke of each breath with the patient's own baseline; You et al., Eur Respir J
1994). Display support only; nothing here detects or grades.
"""

from __future__ import annotations

import numpy as np

from sedreport.capnography.model import BreathTable
from sedreport.session import Capnogram

#: Points of the averaged curve.
GRID_POINTS = 120
#: At most this many breaths are averaged (the first ones in the window), for speed.
MAX_BREATHS = 200


def averaged_breath(
    co2: Capnogram, breaths: BreathTable, lo_s: float, hi_s: float, length_s: float
) -> tuple[np.ndarray, np.ndarray, int]:
    """Mean CO2 (mmHg) of the valid breaths starting in [lo_s, hi_s] against seconds from
    the breath's start, over ``length_s``; returns (seconds, mmHg, breaths averaged).

    Examples
    --------
    >>> import numpy as np
    >>> from sedreport.capnography.model import BreathTable
    >>> t = np.arange(0.0, 40.0, 0.01)
    >>> c = Capnogram(t, np.where((t % 4.0) < 2.0, 38.0, 0.0), 100.0)
    >>> s = np.arange(0.0, 36.0, 4.0)
    >>> n = s.size
    >>> b = BreathTable(s, s + 2.0, *(np.full(n, 1.0),) * 6, np.ones(n, bool), ("",) * n)
    >>> x, y, k = averaged_breath(c, b, 0.0, 40.0, 3.0)
    >>> k, float(y[10]), float(y[-1])
    (9, 38.0, 0.0)
    """
    sel = np.flatnonzero(
        np.asarray(breaths.valid, dtype=bool)
        & (breaths.start_s >= lo_s)
        & (breaths.start_s <= hi_s)
    )[:MAX_BREATHS]
    grid = np.linspace(0.0, length_s, GRID_POINTS)
    if sel.size == 0 or co2.time_s.size == 0:
        return grid, np.full(grid.size, np.nan), 0
    at = breaths.start_s[sel][:, None] + grid[None, :]
    curves = np.interp(at, co2.time_s, co2.co2_mmHg)
    return grid, curves.mean(axis=0), int(sel.size)


def typical_length_s(breaths: BreathTable, lo_s: float, hi_s: float) -> float:
    """Median expiration (start to end, seconds) of the valid breaths starting in the window,
    plus a fifth for the start of inspiration; 4 s when there is none."""
    ok = (
        np.asarray(breaths.valid, dtype=bool)
        & (breaths.start_s >= lo_s)
        & (breaths.start_s <= hi_s)
    )
    d = (breaths.end_s - breaths.start_s)[ok]
    return float(np.median(d) * 1.2) if d.size else 4.0
