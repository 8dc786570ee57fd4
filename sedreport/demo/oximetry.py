"""SpO2 and pulse model of the demo physiology (1 Hz, integer output like real monitors).

Alveolar oxygen follows the alveolar gas equation while the patient breathes and falls
steadily during apnoea; arterial saturation follows from PaO2 by Severinghaus' equation; the
finger probe sees it after a circulation delay and the oximeter's averaging. With supplemental
oxygen the alveolar store starts higher, so the same apnoea desaturates later (the oxygen
reservoir effect).

Sources:

* Alveolar gas equation PAO2 = FiO2 (Pb - PH2O) - PaCO2 / R with PH2O = 47 mmHg and R = 0.8
  (common practice, any respiratory physiology handbook).
* SaO2 = 100 / (23400 / (PO2^3 + 150 PO2) + 1): Severinghaus JW, "Simple, accurate equations
  for human blood O2 dissociation computations", J Appl Physiol 1979.
* FiO2 by nasal cannula of about 0.21 + 0.04 per L/min (common practice rule of thumb).
* Lung-to-finger delay of the order of 20-30 s (from memory).
* What a real 1 Hz export looks like (values held for about 4 s between display updates, 0 for
  "no reading", low start-up readings after the probe acquires, a paced pulse on one value):
  counted in 128 recorded sedation cases, /work/shared/real-oximetry/README.md.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Water vapour pressure at 37 C, mmHg (common practice).
PH2O_MMHG = 47.0
#: Respiratory exchange ratio (common practice).
RESPIRATORY_QUOTIENT = 0.8


@dataclass(frozen=True)
class OxygenParams:
    """Per-patient oxygenation parameters.

    Attributes
    ----------
    aa_gradient_mmHg : float
        Alveolar-arterial O2 difference (about 5-15 in healthy adults, larger in lung disease;
        from memory).
    apnoea_drop_mmHg_s : float
        Fall of PAO2 during apnoea (faster with obesity, small FRC).
    wash_in_s : float
        Time constant with which PAO2 returns to its steady value while breathing.
    finger_delay_s : float
        Lung-to-finger circulation delay.
    dispersion_s : float
        Time constant of the smearing of the saturation front along the circulation.
    averaging_s : int
        Oximeter moving-average window.
    barometric_mmHg : float
    """

    aa_gradient_mmHg: float = 10.0
    apnoea_drop_mmHg_s: float = 1.0
    wash_in_s: float = 20.0
    finger_delay_s: float = 22.0
    dispersion_s: float = 10.0
    averaging_s: int = 8
    barometric_mmHg: float = 760.0


def fio2_nasal_cannula(flow_l_min: np.ndarray) -> np.ndarray:
    """Approximate FiO2 (fraction) for a nasal-cannula flow (common practice rule of thumb)."""
    return np.clip(0.21 + 0.04 * np.asarray(flow_l_min, dtype=float), 0.21, 0.45)


def alveolar_po2_mmHg(fio2: np.ndarray, paco2_mmHg: np.ndarray, barometric_mmHg: float):
    """Alveolar gas equation (common practice), mmHg."""
    return fio2 * (barometric_mmHg - PH2O_MMHG) - paco2_mmHg / RESPIRATORY_QUOTIENT


def severinghaus_sat_pct(po2_mmHg: np.ndarray) -> np.ndarray:
    """Haemoglobin O2 saturation, % (Severinghaus, J Appl Physiol 1979)."""
    p = np.clip(np.asarray(po2_mmHg, dtype=float), 0.1, None)
    return 100.0 / (23400.0 / (p**3 + 150.0 * p) + 1.0)


def simulate_pao2(
    grid_s: np.ndarray,
    apnoeic: np.ndarray,
    fio2: np.ndarray,
    paco2_mmHg: np.ndarray,
    fast_wash: np.ndarray,
    params: OxygenParams,
) -> np.ndarray:
    """Alveolar PO2 on a 1 s grid, mmHg.

    Parameters
    ----------
    grid_s : ndarray
        Regular 1 s grid.
    apnoeic : ndarray of bool
        Seconds without ventilation.
    fio2, paco2_mmHg : ndarray
        Inspired O2 fraction and arterial CO2 per second.
    fast_wash : ndarray of bool
        Seconds of bag-mask ventilation (wash-in twice as fast).
    params : OxygenParams
    """
    target = alveolar_po2_mmHg(fio2, paco2_mmHg, params.barometric_mmHg)
    p = np.empty_like(grid_s)
    current = float(target[0])
    floor_mmHg = 30.0
    for k in range(grid_s.size):
        if apnoeic[k]:
            # Slower fall as the store empties (blood stores buffer the low end).
            drop = params.apnoea_drop_mmHg_s * min(1.0, (current - floor_mmHg) / 40.0)
            current = max(floor_mmHg, current - drop)
        else:
            tau = params.wash_in_s / (2.0 if fast_wash[k] else 1.0)
            current += (target[k] - current) / tau
        p[k] = current
    return p


def _first_order_lag(x: np.ndarray, tau_s: float) -> np.ndarray:
    """First-order low-pass on a 1 s grid (y' = (x - y) / tau)."""
    y = np.empty_like(x)
    acc = float(x[0])
    a = 1.0 / max(tau_s, 1.0)
    for k in range(x.size):
        acc += (x[k] - acc) * a
        y[k] = acc
    return y


def finger_spo2_pct(
    pao2_mmHg: np.ndarray, params: OxygenParams, rng: np.random.Generator
) -> np.ndarray:
    """SpO2 at the finger on the same 1 s grid: delayed, averaged, noisy, not yet rounded."""
    sat = severinghaus_sat_pct(pao2_mmHg - params.aa_gradient_mmHg)
    delay = int(round(params.finger_delay_s))
    delayed = np.concatenate([np.full(delay, sat[0]), sat[: sat.size - delay]])
    # Dispersion along the circulation: first-order lag after the pure delay (invented tau).
    delayed = _first_order_lag(delayed, params.dispersion_s)
    kernel = np.ones(params.averaging_s) / params.averaging_s
    padded = np.concatenate([np.full(params.averaging_s - 1, delayed[0]), delayed])
    averaged = np.convolve(padded, kernel, mode="valid")
    return np.clip(averaged + 0.35 * rng.standard_normal(averaged.size), 0.0, 100.0)


def pulse_bpm(
    grid_s: np.ndarray,
    base_bpm: float,
    sat_pct: np.ndarray,
    rng: np.random.Generator,
) -> np.ndarray:
    """Pulse rate: slow random drift plus a rise when the saturation falls (not rounded)."""
    steps = rng.standard_normal(grid_s.size) * 0.15
    drift = np.cumsum(steps)
    drift -= np.convolve(drift, np.ones(120) / 120.0, mode="same") * 0.9
    hypoxic_rise = 0.6 * np.clip(94.0 - sat_pct, 0.0, None)
    return base_bpm + np.clip(drift, -8.0, 8.0) + hypoxic_rise


def quantise(values: np.ndarray, upper: float) -> np.ndarray:
    """Round to integers the way a monitor exports them, clipped to [0, upper]."""
    return np.clip(np.rint(values), 0.0, upper)


def plant_motion_artefact(
    spo2: np.ndarray,
    pulse: np.ndarray,
    mask: np.ndarray,
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray]:
    """Replace the masked seconds with erratic probe-motion readings.

    SpO2 jumps to implausible low values and wanders; the pulse reading becomes erratic.
    """
    n = int(mask.sum())
    spo2 = spo2.copy()
    pulse = pulse.copy()
    spo2[mask] = np.clip(72.0 + np.cumsum(rng.normal(0.0, 4.0, n)), 55.0, 88.0)
    pulse[mask] = np.clip(pulse[mask] + rng.normal(25.0, 20.0, n), 30.0, 190.0)
    return spo2, pulse


def hold_display(values: np.ndarray, update_s: int, first: int = 0) -> np.ndarray:
    """Sample and hold on the 1 s grid: each displayed value is held for ``update_s`` seconds
    (a monitor that updates its display every few seconds, exported at 1 Hz); updates fall on
    ``first`` (the index of the file's first second) and every ``update_s`` after it."""
    values = np.asarray(values)
    if update_s <= 1:
        return values.copy()
    k = np.arange(values.size)
    return values[np.where(k < first, k, first + ((k - first) // update_s) * update_s)]


def startup_ramp(spo2: np.ndarray, window: np.ndarray, low_pct: float) -> np.ndarray:
    """Readings of a probe acquiring: inside ``window`` (a boolean run), start ``low_pct``
    below the value reached at its end and climb linearly to it."""
    out = np.asarray(spo2, dtype=float).copy()
    idx = np.flatnonzero(window)
    if idx.size == 0 or low_pct <= 0:
        return out
    end = min(idx[-1] + 1, out.size - 1)
    frac = np.arange(idx.size) / idx.size
    out[idx] = out[end] - low_pct * (1.0 - frac)
    return out
