"""The demo physiology against facts of the trade, handbook equations and a reference library.

Each check names its source or says "common practice" / "from memory". Waveform checks measure
the emitted samples (not the generator's own parameters) wherever that is possible.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest

from sedreport.demo import SCENARIOS, case_rng
from sedreport.demo.case import Apnoea, Physiology
from sedreport.demo.oximetry import (
    OxygenParams,
    alveolar_po2_mmHg,
    fio2_nasal_cannula,
    severinghaus_sat_pct,
)
from sedreport.demo.pharmacology import PROFILES, bateman_curve, respiratory_effect
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth


def _run(spec, seed=0):
    sig = simulate_case(spec, case_rng(seed, spec.session_id))
    return sig, build_truth(spec, sig, seed)


@pytest.fixture(scope="module")
def quiet():
    return _run(SCENARIOS["quiet_colonoscopy"])


def _plateau_fits(sig, truth, pick=None):
    """Least-squares slope (mmHg/s) of the emitted samples over the middle of each plateau.

    The plateau is taken as the stretch from 40 % to 95 % of the breath between the truth start
    and end (upstroke and downstroke excluded).
    """
    t, v = sig.co2_time_s, sig.co2_mmHg
    starts, ends = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    idx = range(starts.size) if pick is None else np.flatnonzero(pick(starts))
    slopes = []
    for i in idx:
        a = starts[i] + 0.4 * (ends[i] - starts[i])
        b = starts[i] + 0.85 * (ends[i] - starts[i])
        sel = (t >= a) & (t <= b)
        if sel.sum() >= 5:
            slopes.append(np.polyfit(t[sel], v[sel], 1)[0])
    return np.array(slopes)


# ----- quiet scenario: normal adult values -----------------------------------------------------


def test_quiet_etco2_in_normal_adult_range(quiet):
    # Normal adult EtCO2 35-45 mmHg: common practice.
    sig, truth = quiet
    et = np.array(truth["breaths"]["etco2_mmHg"])
    assert et.size > 300
    assert et.min() >= 35.0 and et.max() <= 45.0


def test_quiet_rate_in_resting_adult_range(quiet):
    # Resting adult respiratory rate 12-20/min: common practice.
    _, truth = quiet
    rr = 60.0 / np.diff(truth["breaths"]["start_s"])
    assert 12.0 <= np.median(rr) <= 20.0
    assert np.mean((rr >= 12.0) & (rr <= 20.0)) >= 0.95


def test_quiet_rate_agrees_with_neurokit2(quiet):
    # Reference library: NeuroKit2 (Makowski et al., Behav Res Methods 2021), respiration
    # cleaning and peak detection after Khodadad et al. (Physiol Meas 2018), run on the emitted
    # waveform; its breath count and median rate must match the truth.
    import neurokit2 as nk  # a [test] extra, installed by CI: a missing one fails here

    sig, truth = quiet
    fs = SCENARIOS["quiet_colonoscopy"].co2_rate_hz
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        clean = nk.rsp_clean(sig.co2_mmHg, sampling_rate=fs, method="khodadad2018")
        _, info = nk.rsp_peaks(clean, sampling_rate=fs, method="khodadad2018")
        rate = nk.rsp_rate(clean, troughs=info, sampling_rate=fs)
    n_truth = len(truth["breaths"]["start_s"])
    assert abs(len(info["RSP_Peaks"]) - n_truth) <= 0.02 * n_truth
    truth_rr = np.median(60.0 / np.diff(truth["breaths"]["start_s"]))
    assert abs(np.nanmedian(rate) - truth_rr) < 0.5


def test_quiet_inspired_co2_near_zero(quiet):
    # FiCO2 ~0 mmHg in normal breathing without rebreathing: common practice. Measured on the
    # emitted samples between breaths (1 s after a breath end until the next start).
    sig, truth = quiet
    t, v = sig.co2_time_s, sig.co2_mmHg
    starts, ends = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    k = np.searchsorted(starts, t, side="right") - 1
    inside = (k >= 0) & (k < starts.size - 1)
    kk = np.clip(k, 0, starts.size - 2)
    base = inside & (t > ends[kk] + 0.3) & (t < starts[kk + 1] - 0.05)
    assert base.sum() > 1000
    assert np.median(v[base]) < 0.5 and np.percentile(v[base], 99) < 1.5
    assert max(truth["breaths"]["fico2_mmHg"]) == 0.0


def test_quiet_phase3_slope_positive(quiet):
    # Phase III (alveolar plateau) slope is positive in the normal capnogram: common practice.
    sig, truth = quiet
    slopes = _plateau_fits(sig, truth)
    assert slopes.size > 300
    assert np.median(slopes) > 0.3
    assert np.mean(slopes > 0) > 0.9


def test_quiet_has_no_episode_and_stays_saturated(quiet):
    sig, truth = quiet
    assert truth["episodes"] == []
    assert sig.spo2_pct.min() >= 93
    starts, ends = np.array(truth["breaths"]["start_s"]), np.array(truth["breaths"]["end_s"])
    assert (starts[1:] - ends[:-1]).max() < 12.0


# ----- nasal cannula dilution --------------------------------------------------------------------


def test_cannula_oxygen_flow_dilutes_plateau():
    # Oxygen given through the sampling nasal cannula dilutes the sampled gas: lower and noisier
    # plateau at higher flow (common practice).
    base = SCENARIOS["quiet_colonoscopy"]
    low_sig, low = _run(dataclasses.replace(base, flow_l_min=0.0))
    high_sig, high = _run(dataclasses.replace(base, flow_l_min=5.0))
    assert np.median(high["breaths"]["etco2_mmHg"]) < np.median(low["breaths"]["etco2_mmHg"]) - 4.0

    def plateau_noise(sig, truth):
        t, v = sig.co2_time_s, sig.co2_mmHg
        res = []
        for a, b in zip(truth["breaths"]["start_s"], truth["breaths"]["end_s"], strict=True):
            sel = (t >= a + 0.4 * (b - a)) & (t <= a + 0.85 * (b - a))
            if sel.sum() >= 5:
                fit = np.polyval(np.polyfit(t[sel], v[sel], 1), t[sel])
                res.append(np.std(v[sel] - fit))
        return np.median(res)

    assert plateau_noise(high_sig, high) > 1.5 * plateau_noise(low_sig, low)


# ----- oxygenation: handbook equations and lag ----------------------------------------------------


@pytest.mark.parametrize(
    ("po2_mmHg", "sat_pct", "tol"),
    [
        (26.8, 50.0, 1.5),  # adult P50 about 26.8 mmHg: common practice (handbook value)
        (40.0, 75.0, 1.5),  # mixed-venous PO2 40 mmHg <-> SvO2 about 75 %: common practice
        (60.0, 90.0, 1.5),  # PaO2 60 mmHg <-> SaO2 about 90 %: common practice
        (100.0, 97.5, 1.0),  # normal arterial values: common practice
    ],
)
def test_severinghaus_matches_handbook_points(po2_mmHg, sat_pct, tol):
    # Severinghaus JW, J Appl Physiol 1979 (equation implemented in oximetry.py).
    assert severinghaus_sat_pct(po2_mmHg) == pytest.approx(sat_pct, abs=tol)


def test_alveolar_gas_equation_worked_example():
    # Room air at sea level, PaCO2 40 mmHg: PAO2 = 0.21 * (760 - 47) - 40 / 0.8 ~ 100 mmHg
    # (common practice textbook example).
    assert alveolar_po2_mmHg(0.21, 40.0, 760.0) == pytest.approx(99.7, abs=0.1)
    # Nasal cannula rule of thumb, about +4 % FiO2 per L/min (common practice).
    assert fio2_nasal_cannula(2.0) == pytest.approx(0.29)


def _apnoea_case(flow_l_min: float):
    base = SCENARIOS["quiet_colonoscopy"]
    return dataclasses.replace(
        base,
        flow_l_min=flow_l_min,
        planted=(Apnoea(onset_s=700.0, pause_s=70.0),),
        physiology=dataclasses.replace(
            base.physiology, oxygen=OxygenParams(apnoea_drop_mmHg_s=1.3)
        ),
    )


def test_spo2_falls_with_lag_after_apnoea_and_recovers():
    # SpO2 lags ventilation by tens of seconds (circulation and averaging; common practice).
    sig, truth = _run(_apnoea_case(0.0))
    apnoea = next(e for e in truth["episodes"] if e["kind"] == "apnoea")
    t, s = sig.spo2_time_s, sig.spo2_pct
    before = np.median(s[(t > apnoea["start_s"] - 120) & (t < apnoea["start_s"])])
    falling = t[(t > apnoea["start_s"]) & (s <= before - 3)]
    assert falling.size and falling[0] - apnoea["start_s"] >= 20.0
    nadir_t = t[(t > apnoea["start_s"]) & (t < apnoea["end_s"] + 120)][
        np.argmin(s[(t > apnoea["start_s"]) & (t < apnoea["end_s"] + 120)])
    ]
    assert nadir_t > apnoea["end_s"]  # the lowest reading comes after breathing resumed
    assert np.median(s[(t > apnoea["end_s"] + 150) & (t < apnoea["end_s"] + 250)]) >= before - 1


def test_supplemental_oxygen_delays_desaturation():
    # The O2 reservoir: with supplemental oxygen the same apnoea desaturates later and less
    # (common practice).
    room_sig, room = _run(_apnoea_case(0.0))
    oxy_sig, _ = _run(_apnoea_case(4.0))
    onset = next(e for e in room["episodes"] if e["kind"] == "apnoea")["start_s"]
    win = (room_sig.spo2_time_s > onset) & (room_sig.spo2_time_s < onset + 200)
    assert oxy_sig.spo2_pct[win].min() > room_sig.spo2_pct[win].min() + 3


def test_spo2_and_pulse_are_integers():
    # Real oximeters export integer SpO2 and pulse (common practice).
    for spec in SCENARIOS.values():
        sig, _ = _run(spec)
        assert np.all(sig.spo2_pct == np.rint(sig.spo2_pct))
        assert np.all(sig.pulse_bpm == np.rint(sig.pulse_bpm))
        assert sig.spo2_pct.max() <= 100


# ----- dose/response layer -------------------------------------------------------------------


@pytest.mark.parametrize("drug", sorted(PROFILES))
def test_bateman_curve_peaks_at_stated_time(drug):
    profile = PROFILES[drug]
    t = np.arange(0.0, 3600.0, 1.0)
    curve = bateman_curve(t, profile)
    assert t[np.argmax(curve)] == pytest.approx(profile.peak_s, abs=1.5)
    assert curve.max() == pytest.approx(1.0, abs=1e-3)
    assert bateman_curve(np.array([-5.0]), profile)[0] == 0.0


def test_fentanyl_peak_effect_time():
    # Fentanyl time to peak effect about 3.6 min (Shafer and Varvel, Anesthesiology 1991;
    # value from memory).
    assert PROFILES["fentanyl"].peak_s == pytest.approx(216.0, abs=30.0)


def test_opioid_plus_benzodiazepine_more_than_either():
    grid = np.arange(0.0, 1800.0, 1.0)
    mid = respiratory_effect([(100.0, "midazolam", 2.0, "mg")], grid, 70.0)[0]
    fen = respiratory_effect([(100.0, "fentanyl", 50.0, "mcg")], grid, 70.0)[0]
    both = respiratory_effect(
        [(100.0, "midazolam", 2.0, "mg"), (100.0, "fentanyl", 50.0, "mcg")], grid, 70.0
    )[0]
    assert both.max() > max(mid.max(), fen.max())
    assert np.all(both < 1.0) and np.all(both[grid < 100.0] == 0.0)


def test_infusion_effect_builds_up_and_stops():
    grid = np.arange(0.0, 3600.0, 1.0)
    doses = [(300.0, "propofol", 75.0, "mcg/kg/min"), (1500.0, "propofol", 0.0, "mcg/kg/min")]
    eff = respiratory_effect(doses, grid, 80.0)[0]
    assert eff[grid < 300].max() == 0.0
    assert eff[1400] > eff[600] > 0.0
    assert eff[3500] < 0.3 * eff[1500]


def test_physiology_defaults_are_normal():
    # Defaults sit in the normal adult ranges (common practice).
    phys = Physiology()
    assert 12.0 <= phys.rr_per_min <= 20.0 and 35.0 <= phys.etco2_alv_mmHg <= 45.0
    assert phys.slope_mmHg_s > 0
