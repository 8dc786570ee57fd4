"""Pulse-oximeter trend cleaning: no-reading and artefact marking, never silent removal.

Real oximeters update the displayed SpO2 every few seconds (about 4 s) and export it held at
1 Hz, in whole percent, so a normal change arrives as a step; they export ``0`` when the probe
has no reading. Samples are classified, counted and set to NaN in the returned copies; the
input is never modified. Every value comes from the ``oximetry`` section of the criteria file
(``templates/criteria/*.yaml``), with its source there:

0. **No reading** (``min_reading_pct``): a blank cell, SpO2 below ``min_reading_pct`` (the
   monitor's ``0``) or above 100 %. Missing data, not an artefact: counted, never a nadir,
   never a recovery, and a desaturation is never bridged over it. Where "no reading" becomes
   missing is here, in cleaning (ingest keeps 0 as 0 and blank as NaN); Quality reports the
   count.
1. **Acquisition** (``acquisition_s``, ``startup_s``, ``startup_after_s``,
   ``acquisition_tolerance_pct``): in the first ``acquisition_s`` after the probe acquires
   again (the first reading after a stretch without a reading), or the first ``startup_s``
   after it is put on (the file's first reading, or the first after at least
   ``startup_after_s`` without one), readings that lie more than the tolerance below the
   median of the next window of the same length are suspect (when no reading follows: below
   the last reading before the loss; all of them when there is none). Real probes read low
   for one to three display updates after a dropout and for up to about a minute after they
   are put on.
2. **Drop** (``drop_min_pct``, ``drop_steady_s``, ``drop_max_s``): a fall of at least
   ``drop_min_pct`` between two consecutive display updates from a steady level (the readings
   of the ``drop_steady_s`` before it differ by less than ``spike_min_pct``) is not physiological (probe motion
   starts this way; a genuine desaturation speeds up into its steep part, and a rise of that
   size can be real, reoxygenation is fast). The readings from the fall until
   SpO2 is back within ``spike_return_pct`` below the level before it are marked, when it is
   back within ``drop_max_s``; a fall that does not come back is kept.
3. **Spike** (``spike_min_pct``, ``spike_return_pct``, ``spike_max_s``): judged on display
   updates, not raw samples. A step of at least ``spike_min_pct`` between two consecutive
   readings that comes back to within ``spike_return_pct`` of the reading before the step
   within ``spike_max_s`` marks the readings from the step to the return. A step that holds
   longer is a new level and is kept, so a fast genuine recovery is never removed.
4. **Flat line** (``flat_s``, ``flat_below_pct``): SpO2 identical for at least ``flat_s``
   while the pulse is identical too or absent, below ``flat_below_pct``. A paced pulse that
   sits on one value while SpO2 moves is not a flat line; a steady high reading on oxygen is
   expected.

Pulse values <= 0 or above ``pulse_max_bpm`` are no pulse reading (NaN in the pulse output;
SpO2 is kept). Pulse is also NaN wherever SpO2 has no usable reading.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.criteria import Criteria, OximetryCriteria, default_criteria
from sedreport.session import OximetryTrend

#: Artefact rule names, in the order they are applied (counts use these keys).
ARTEFACT_RULES = ("acquisition", "drop", "spike", "flat")


@dataclass(frozen=True)
class OximetryMarks:
    """Cleaned SpO2/pulse with what was marked and why.

    Attributes
    ----------
    time_s : ndarray
        Sample times on the session clock, seconds (a copy).
    spo2_pct : ndarray
        SpO2 with no-reading and artefact samples set to NaN, %.
    pulse_bpm : ndarray
        Pulse with impossible values and samples without a usable SpO2 set to NaN, bpm.
    no_reading : ndarray of bool
        Samples without a reading (blank, below ``min_reading_pct`` or above 100 %).
    artefact : ndarray of bool
        Readings marked by an artefact rule (never overlaps ``no_reading``).
    rule : ndarray of str
        Per sample: ``""``, ``"no_reading"`` or the artefact rule that marked it.
    """

    time_s: np.ndarray
    spo2_pct: np.ndarray
    pulse_bpm: np.ndarray
    no_reading: np.ndarray
    artefact: np.ndarray
    rule: np.ndarray

    @property
    def blank_samples(self) -> int:
        """Samples that were blank (NaN) in the input."""
        return int(np.count_nonzero(self.rule == "blank"))

    @property
    def no_reading_samples(self) -> int:
        """Samples without a reading (blank or impossible value)."""
        return int(np.count_nonzero(self.no_reading))

    @property
    def artefact_by_rule(self) -> dict[str, int]:
        """Readings marked by each artefact rule (every rule, zeros included)."""
        return {r: int(np.count_nonzero(self.rule == r)) for r in ARTEFACT_RULES}

    @property
    def reading_time_s(self) -> np.ndarray:
        """Times of the samples with a reading (artefacts included: a marked reading is
        still a sample for the gap rule), seconds."""
        return self.time_s[~self.no_reading]


def _no_reading(spo2: np.ndarray, c: OximetryCriteria) -> np.ndarray:
    """Rule 0: blank, below ``min_reading_pct`` or above 100 %."""
    return ~np.isfinite(spo2) | (spo2 < c.min_reading_pct) | (spo2 > 100.0)


def _acquisition(t: np.ndarray, spo2: np.ndarray, none: np.ndarray, c: OximetryCriteria):
    """Rule 1: low readings in the window after the probe acquires (module docstring)."""
    mask = np.zeros(spo2.size, dtype=bool)
    idx = np.flatnonzero(~none)
    if idx.size == 0:
        return mask
    tr, vr = t[idx], spo2[idx]
    # Seconds without a reading before each reading (inf before the first one).
    quiet = np.r_[np.inf, np.diff(tr)]
    lost = np.r_[True, none[:-1]][idx] | (quiet > max(c.acquisition_s, 1.0))
    for k in np.flatnonzero(lost):
        w = c.startup_s if quiet[k] >= c.startup_after_s else c.acquisition_s
        if w <= 0:
            continue
        a = tr[k]
        mid, hi = np.searchsorted(tr, [a + w, a + 2.0 * w])
        window = np.arange(k, mid)
        after = vr[mid:hi]
        if after.size == 0 and k == 0:
            continue  # a recording no longer than the window: nothing to judge it against
        ref = np.median(after) if after.size else vr[k - 1]
        mask[idx[window[vr[window] < ref - c.acquisition_tolerance_pct]]] = True
    return mask


def _excursions(
    t: np.ndarray,
    spo2: np.ndarray,
    usable: np.ndarray,
    min_step_pct: float,
    max_s: float,
    return_pct: float,
    falls_only: bool,
    steady_s: float = 0.0,
    steady_pct: float = 0.0,
) -> np.ndarray:
    """Steps between consecutive usable readings that come back within ``max_s``.

    A step of at least ``min_step_pct`` (only a fall when ``falls_only``) between two adjacent
    samples (a display update, never across samples without a reading) marks the readings
    from the step until a reading is back within ``return_pct`` of the reading before the step
    (for a fall: at or above it minus ``return_pct``), when that return comes within ``max_s``.
    With ``steady_s`` > 0 a step counts only from a steady level: the readings of the
    ``steady_s`` before it differ by less than ``steady_pct``.
    Returns a mask over all samples. The loop runs over candidate steps (rare), not samples.
    """
    mask = np.zeros(spo2.size, dtype=bool)
    idx = np.flatnonzero(usable)
    if idx.size < 3:
        return mask
    tv, sv = t[idx], spo2[idx]
    step = np.diff(sv)
    size = -step if falls_only else np.abs(step)
    # A step between adjacent samples only: never across a stretch without a reading.
    cand = np.flatnonzero((size >= min_step_pct) & (np.diff(idx) == 1)) + 1
    covered_until = -1
    for j in cand:
        if j < covered_until:
            continue
        if steady_s > 0:
            lo = np.searchsorted(tv, tv[j - 1] - steady_s)
            before = sv[lo:j]
            if before.max() - before.min() >= steady_pct:
                continue
        stop = np.searchsorted(tv, tv[j] + max_s, side="right")
        later = sv[j + 1 : stop] - sv[j - 1]
        back = later >= -return_pct if falls_only else np.abs(later) <= return_pct
        hit = np.flatnonzero(back)
        if hit.size:
            end = j + 1 + hit[0]
            mask[idx[j:end]] = True
            covered_until = end
    return mask


def _runs(values: np.ndarray) -> np.ndarray:
    """Run id of each sample: a new run starts where the value changes (NaN == NaN)."""
    same = (values[1:] == values[:-1]) | (np.isnan(values[1:]) & np.isnan(values[:-1]))
    return np.r_[0, np.cumsum(~same)]


def _flat(t: np.ndarray, spo2: np.ndarray, pulse: np.ndarray, c: OximetryCriteria):
    """Rule 3: identical SpO2 with an identical or absent pulse for ``flat_s``, below the
    ceiling ``flat_below_pct``."""
    n = spo2.size
    if n < 2:
        return np.zeros(n, dtype=bool)
    joint = _runs(spo2 + 1000.0 * np.nan_to_num(pulse, nan=-1.0))
    first = np.r_[0, np.flatnonzero(np.diff(joint)) + 1]
    last = np.r_[first[1:] - 1, n - 1]
    v = spo2[first]
    bad = (t[last] - t[first] >= c.flat_s) & np.isfinite(v) & (v < c.flat_below_pct)
    return bad[joint]


def mark_oximetry(trend: OximetryTrend, criteria: Criteria | None = None) -> OximetryMarks:
    """Classify every oximeter sample: usable reading, no reading, or artefact (and why).

    Parameters
    ----------
    trend : OximetryTrend
        SpO2 (%) and pulse (bpm) on the session clock, seconds. Not modified.
    criteria : Criteria, optional
        Its ``oximetry`` section gives every threshold; None uses the shipped default.

    Returns
    -------
    OximetryMarks

    Examples
    --------
    >>> import numpy as np
    >>> from sedreport.session import OximetryTrend
    >>> s = np.array([97.0] * 20 + [0.0] * 8 + [96.0] * 20)
    >>> m = mark_oximetry(OximetryTrend(np.arange(48.0), s, np.full(48, 70.0), 1.0))
    >>> m.no_reading_samples, m.artefact_by_rule["spike"], float(np.nanmin(m.spo2_pct))
    (8, 0, 96.0)
    """
    c = (criteria or default_criteria()).oximetry
    t = np.array(trend.time_s, dtype=float)
    spo2 = np.asarray(trend.spo2_pct, dtype=float)
    pulse = np.asarray(trend.pulse_bpm, dtype=float)
    if pulse.shape != spo2.shape:
        pulse = np.full(spo2.shape, np.nan)
    pulse = np.where((pulse > 0) & (pulse <= c.pulse_max_bpm), pulse, np.nan)
    none = _no_reading(spo2, c)
    rule = np.full(spo2.size, "", dtype=object)
    rule[none] = "no_reading"
    rule[~np.isfinite(spo2)] = "blank"
    acq = _acquisition(t, spo2, none, c)
    ok = ~none & ~acq
    drop = _excursions(
        t, spo2, ok, c.drop_min_pct, c.drop_max_s, c.spike_return_pct, True,
        c.drop_steady_s, c.spike_min_pct,
    )  # fmt: skip
    spike = _excursions(
        t, spo2, ok & ~drop, c.spike_min_pct, c.spike_max_s, c.spike_return_pct, False
    )
    flat = _flat(t, np.where(none, np.nan, spo2), pulse, c) & ok & ~drop & ~spike
    for name, m in (("acquisition", acq), ("drop", drop), ("spike", spike), ("flat", flat)):
        rule[m] = name
    artefact = acq | drop | spike | flat
    gone = none | artefact
    return OximetryMarks(
        time_s=t,
        spo2_pct=np.where(gone, np.nan, spo2),
        pulse_bpm=np.where(gone, np.nan, pulse),
        no_reading=none,
        artefact=artefact,
        rule=rule.astype(str),
    )


def clean_oximetry(
    trend: OximetryTrend, criteria: Criteria | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Cleaned copies of the trend: SpO2 (%), pulse (bpm) and the artefact mask.

    Parameters
    ----------
    trend : OximetryTrend
        Not modified.
    criteria : Criteria, optional
        None uses the shipped default criteria.

    Returns
    -------
    spo2_pct, pulse_bpm : ndarray
        NaN where there is no reading or an artefact rule marked the sample.
    artefact_mask : ndarray of bool
        True where an artefact rule (1-4 of the module docstring) marked a reading. Samples
        without a reading (blank, 0, impossible) are NaN but not marked: they are missing
        data, and a desaturation is never bridged over them.

    Examples
    --------
    >>> import numpy as np
    >>> from sedreport.session import OximetryTrend
    >>> s = np.array([97.0] * 10 + [0.0] * 4 + [97.0] * 10)
    >>> spo2, pulse, artefact = clean_oximetry(OximetryTrend(np.arange(24.0), s, s * 0 + 70, 1))
    >>> int(np.isnan(spo2).sum()), int(artefact.sum())
    (4, 0)
    """
    m = mark_oximetry(trend, criteria)
    return m.spo2_pct, m.pulse_bpm, m.artefact
