"""Dose/response layer of the demo physiology: how sedatives shape the invented breathing.

A deliberately simple, qualitative model, good enough for demo and test data and not for any
dosing decision. Each drug's respiratory-depressant effect after a bolus follows a Bateman
curve (first-order rise and fall) peaking at the drug's time to peak effect; infusions are the
same curve convolved with the rate. Amounts are scaled by a reference dose per kg and combined
with a saturating sum, so that combined opioid + hypnotic effects exceed either alone.

Times to peak effect (from memory): propofol about 1.5-2 min after a bolus (consistent with the
effect-site rate constant of Schnider et al., Anesthesiology 1998); fentanyl about 3.6 min
(Shafer and Varvel, Anesthesiology 1991); midazolam a few minutes (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class DrugProfile:
    """Respiratory-effect kinetics of one drug (all values from memory, see module doc).

    Attributes
    ----------
    peak_s : float
        Time from bolus to peak effect, s.
    offset_half_life_s : float
        Half-life of the decline of effect after the peak, s.
    reference_mg_per_kg : float
        Bolus giving a unit effect.
    rr_weight, co2_weight : float
        Relative effect on respiratory rate and on alveolar CO2 (opioids slow the rate;
        hypnotics mainly reduce tidal volume).
    """

    peak_s: float
    offset_half_life_s: float
    reference_mg_per_kg: float
    rr_weight: float
    co2_weight: float


PROFILES: dict[str, DrugProfile] = {
    "propofol": DrugProfile(100.0, 360.0, 0.5, 0.4, 1.0),
    "midazolam": DrugProfile(240.0, 1800.0, 0.03, 0.5, 0.8),
    "fentanyl": DrugProfile(216.0, 1500.0, 0.001, 1.0, 0.8),
    "remifentanil": DrugProfile(90.0, 240.0, 0.0005, 1.0, 0.8),
}

#: mg per unit of the dose units used by the demo.
_MG_PER_UNIT = {"mg": 1.0, "mcg": 1e-3, "g": 1e3}


def bateman_curve(t_s: np.ndarray, profile: DrugProfile) -> np.ndarray:
    """Unit-peak effect of a bolus given at t = 0 (zero for t < 0).

    Parameters
    ----------
    t_s : ndarray
        Seconds after the bolus.
    profile : DrugProfile
    """
    k_out = np.log(2.0) / profile.offset_half_life_s
    # Solve for the input rate constant that gives the required time to peak.
    k_in = _k_in_for_peak(profile.peak_s, k_out)
    t = np.clip(t_s, 0.0, None)
    curve = np.exp(-k_out * t) - np.exp(-k_in * t)
    t_peak = np.log(k_in / k_out) / (k_in - k_out)
    peak = np.exp(-k_out * t_peak) - np.exp(-k_in * t_peak)
    return np.where(t_s >= 0.0, curve / peak, 0.0)


def _k_in_for_peak(peak_s: float, k_out: float) -> float:
    """Input rate constant of a Bateman curve peaking at ``peak_s`` (bisection)."""
    lo, hi = k_out * 1.0001, 100.0
    for _ in range(80):
        mid = np.sqrt(lo * hi)
        t_peak = np.log(mid / k_out) / (mid - k_out)
        lo, hi = (mid, hi) if t_peak > peak_s else (lo, mid)
    return float(np.sqrt(lo * hi))


def dose_mg(dose: float, unit: str) -> float:
    """Bolus amount in mg for a mass unit."""
    return dose * _MG_PER_UNIT[unit]


def infusion_mg_per_s(dose: float, unit: str, weight_kg: float) -> float:
    """Infusion rate in mg/s for the rate units the demo writes."""
    rates = {
        "mg/h": dose / 3600.0,
        "mg/kg/h": dose * weight_kg / 3600.0,
        "mcg/kg/min": dose * weight_kg * 1e-3 / 60.0,
    }
    return rates[unit]


def respiratory_effect(
    doses: list[tuple[float, str, float, str]], grid_s: np.ndarray, weight_kg: float
) -> tuple[np.ndarray, np.ndarray]:
    """Combined effect of every dose on respiratory rate and CO2 on a 1 s grid.

    Parameters
    ----------
    doses : list of (time_s, drug, dose, unit)
        Boluses (mass units) and infusion rates (rate units; 0 stops the infusion).
    grid_s : ndarray
        Regular 1 s grid, session-clock seconds.
    weight_kg : float

    Returns
    -------
    rr_effect, co2_effect : ndarray
        Saturating combined effects in [0, 1): ``E / (1 + E)`` of the summed unit effects.
    """
    rr_sum = np.zeros_like(grid_s)
    co2_sum = np.zeros_like(grid_s)
    # Drugs without a profile (a reversal agent such as naloxone) have no sedative effect here.
    for drug in sorted({d[1] for d in doses} & set(PROFILES)):
        profile = PROFILES[drug]
        unit_effect = _drug_unit_effect(doses, drug, grid_s, weight_kg, profile)
        rr_sum += profile.rr_weight * unit_effect
        co2_sum += profile.co2_weight * unit_effect
    return rr_sum / (1.0 + rr_sum), co2_sum / (1.0 + co2_sum)


def _drug_unit_effect(
    doses: list[tuple[float, str, float, str]],
    drug: str,
    grid_s: np.ndarray,
    weight_kg: float,
    profile: DrugProfile,
) -> np.ndarray:
    """Summed effect of one drug's boluses and infusion, in reference-dose units."""
    ref_mg = profile.reference_mg_per_kg * weight_kg
    effect = np.zeros_like(grid_s)
    lines = sorted((d for d in doses if d[1] == drug), key=lambda d: d[0])
    rate_mg_s = np.zeros_like(grid_s)
    for t_s, _, dose, unit in lines:
        if unit in _MG_PER_UNIT:
            effect += dose_mg(dose, unit) / ref_mg * bateman_curve(grid_s - t_s, profile)
        else:
            rate_mg_s = np.where(grid_s >= t_s, infusion_mg_per_s(dose, unit, weight_kg), rate_mg_s)
    if np.any(rate_mg_s > 0):
        step_s = float(grid_s[1] - grid_s[0]) if grid_s.size > 1 else 1.0
        kernel = bateman_curve(np.arange(0.0, 6.0 * profile.offset_half_life_s, step_s), profile)
        # An infusion at steady state is weaker per mg than a bolus peak: scale so that a
        # reference dose per 10 min gives about one unit of effect (from memory, qualitative).
        conv = np.convolve(rate_mg_s * step_s, kernel)[: grid_s.size]
        effect += conv / ref_mg * (600.0 / (kernel.sum() * step_s))
    return effect


def peak_effect_s(drug: str) -> float:
    """Seconds from a bolus of ``drug`` to its peak respiratory effect."""
    return PROFILES[drug].peak_s
