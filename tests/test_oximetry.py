"""Oximeter artefact rules of sedreport.oximetry on invented trends with planted artefacts.

The rules are "common practice" values stated in the module docstring (no published source);
these tests check that each rule does what it states and leaves plausible physiology alone.
"""

from __future__ import annotations

import numpy as np

from sedreport.oximetry import clean_oximetry
from sedreport.session import OximetryTrend


def _trend(spo2, pulse=None, fs=1.0):
    spo2 = np.asarray(spo2, dtype=float)
    t = np.arange(spo2.size) / fs
    if pulse is None:
        rng = np.random.default_rng(0)
        pulse = np.round(75 + 3 * np.sin(t / 7.0) + rng.normal(0, 1, t.size))
    return OximetryTrend(
        time_s=t, spo2_pct=spo2, pulse_bpm=np.asarray(pulse, float), sample_rate_hz=fs
    )


def _wobble(n, level=97.0, seed=1):
    rng = np.random.default_rng(seed)
    return np.clip(np.round(level + rng.normal(0, 0.6, n)), 0, 100)


def test_clean_trend_untouched():
    tr = _trend(_wobble(600))
    spo2, pulse, bad = clean_oximetry(tr)
    assert not bad.any()
    assert np.array_equal(spo2, tr.spo2_pct)
    assert np.isfinite(pulse).all()


def test_real_desaturation_is_not_an_artefact():
    """A fall of 97 -> 80 % over 40 s (0.4 %/s) and recovery stay: physiology, not artefact."""
    s = _wobble(300)
    s[100:140] = np.round(np.linspace(97, 80, 40))
    s[140:200] = np.round(np.linspace(80, 97, 60))
    _, _, bad = clean_oximetry(_trend(s))
    assert not bad.any()


def test_zero_and_impossible_values_marked():
    s = _wobble(200)
    s[50:60] = 0.0
    s[80] = 104.0
    spo2, pulse, bad = clean_oximetry(_trend(s))
    assert bad[50:60].all() and bad[80]
    assert bad.sum() == 11
    assert np.isnan(spo2[50:60]).all() and np.isnan(pulse[50:60]).all()


def test_impossible_jump_marked_until_return():
    """97 -> 70 % in one second (27 %/s) and back 8 s later: the 8 samples are marked."""
    s = _wobble(200)
    s[100:108] = 70.0
    _, _, bad = clean_oximetry(_trend(s))
    assert np.flatnonzero(bad).tolist() == list(range(100, 108))


def test_jump_without_return_marks_only_the_step():
    s = _wobble(300)
    s[100:] = _wobble(200, level=85.0, seed=3)
    _, _, bad = clean_oximetry(_trend(s))
    assert bad[100] and bad.sum() == 1


def test_flat_line_with_frozen_pulse_marked():
    s = _wobble(400)
    p = np.round(75 + np.random.default_rng(2).normal(0, 1.5, 400))
    s[200:280] = 94.0
    p[200:280] = 71.0
    _, pulse, bad = clean_oximetry(_trend(s, p))
    assert bad[200:280].all()
    assert bad.sum() == 80
    assert np.isnan(pulse[200:280]).all()


def test_steady_100_on_oxygen_with_living_pulse_kept():
    s = np.full(600, 100.0)
    _, _, bad = clean_oximetry(_trend(s))
    assert not bad.any()


def test_no_pulse_column_rules():
    """Without pulse: identical SpO2 below 100 % for >= 120 s is marked; 100 % is not."""
    s = _wobble(500)
    s[100:250] = 95.0  # 150 s frozen
    s[300:480] = 100.0
    no_pulse = np.full(500, np.nan)
    _, pulse, bad = clean_oximetry(_trend(s, no_pulse))
    assert bad[100:250].all() and not bad[300:480].any()
    assert np.isnan(pulse).all()


def test_missing_samples_are_not_artefacts_and_input_untouched():
    s = _wobble(100)
    s[10] = np.nan
    tr = _trend(s)
    before = tr.spo2_pct.copy()
    spo2, _, bad = clean_oximetry(tr)
    assert not bad[10] and np.isnan(spo2[10])
    assert np.array_equal(tr.spo2_pct, before, equal_nan=True)


def test_impossible_pulse_values_blanked_without_spo2_artefact():
    s = _wobble(100)
    p = np.full(100, 80.0) + np.arange(100) % 3
    p[5] = 0.0
    p[6] = 400.0
    _, pulse, bad = clean_oximetry(_trend(s, p))
    assert np.isnan(pulse[5]) and np.isnan(pulse[6])
    assert not bad.any()
