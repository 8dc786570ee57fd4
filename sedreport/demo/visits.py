"""Invented COPD clinic visits of one patient, for ``sedreport trend`` (``sedreport demo
--visits``): resting recordings over months with slowly worsening obstruction (steeper phase
III, slower upstroke), rising EtCO2 and rate, and one visit on more oxygen.

Each visit is a ``sedreport-session/1`` folder without doses, with the patient's SpO2 target
(88-92 %, O'Driscoll et al., Thorax 2017) and, at some visits, a capillary blood gas. Its
``<session_id>.truth.json`` adds a ``visit`` block with the planted parameters and the values
an ideal measurement would read on the noise-free waveform. Everything here is invented.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import yaml

from sedreport.demo.capnogram import render_capnogram
from sedreport.demo.case import CaseSpec, Physiology
from sedreport.demo.examples import case_rng
from sedreport.demo.oximetry import OxygenParams
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth
from sedreport.demo.writer import session_yaml, write_case

PATIENT_REF = "P-C301"
#: Visit dates with the local UTC offset (winter +00:00, summer +01:00), invented.
VISIT_STARTS: tuple[str, ...] = (
    "2026-01-13T10:05:00+00:00",
    "2026-03-10T10:20:00+00:00",
    "2026-05-12T09:50:00+01:00",
    "2026-07-07T10:10:00+01:00",
    "2026-09-08T10:00:00+01:00",
    "2026-11-10T10:15:00+00:00",
)
#: Visit index on 4 L/min instead of 2 L/min.
MORE_OXYGEN_VISIT = 3
#: Capillary PCO2 minus alveolar EtCO2 of this invented patient, mmHg (a wider gap than in
#: healthy lungs, as with dead space in COPD; from memory, invented value).
PA_ET_GAP_MMHG = 6.0
BLOOD_GAS_VISITS = (0, 3, 5)


def visit_spec(k: int, duration_s: float = 600.0, start: str | None = None) -> CaseSpec:
    """The ``k``-th invented visit (0 = first); later visits are more obstructed."""
    flow = 4.0 if k == MORE_OXYGEN_VISIT else 2.0
    phys = Physiology(
        rr_per_min=17.0 + 0.6 * k,
        etco2_alv_mmHg=44.0 + 1.6 * k,
        slope_mmHg_s=4.0 + 1.2 * k,
        upstroke_s=0.30 + 0.05 * k,
        curvature=0.5,
        expiratory_fraction=0.70,
        rr_jitter=0.06,
        etco2_jitter_mmHg=0.8,
        hr_bpm=82.0,
        oxygen=OxygenParams(aa_gradient_mmHg=85.0),
    )
    return CaseSpec(
        session_id=f"DEMO-COPD-V{k + 1}",
        scenario="copd_clinic_visit",
        description=f"COPD clinic visit {k + 1}: resting recording on {flow:g} L/min.",
        started=start or VISIT_STARTS[k % len(VISIT_STARTS)],
        duration_s=duration_s,
        area="respiratory_clinic",
        procedure="resting_capnography",
        target_depth="minimal",
        patient={
            "ref": PATIENT_REF,
            "age_years": 71,
            "sex": "male",
            "weight_kg": 64,
            "height_cm": 172,
            "conditions": ["copd"],
            "spo2_target_pct": [88, 92],
        },
        team={"sedation_provider": "RN-31"},
        physiology=phys,
        flow_l_min=flow,
        co2_rate_hz=25.0,
    )


def fitted_phase3_slopes(spec: CaseSpec, sig) -> np.ndarray:
    """Least-squares phase III slope of each noise-free breath over 50-90 % of the time from
    its start to the plateau end (the window of :mod:`sedreport.capnography.metrics`)."""
    s = sig.schedule
    frac = np.linspace(0.5, 0.9, 41)
    t = s.start_s[:, None] + frac[None, :] * (s.plateau_end_s - s.start_s)[:, None]
    y = render_capnogram(s, t.ravel()).reshape(t.shape)
    tc = t - t.mean(axis=1, keepdims=True)
    return (tc * (y - y.mean(axis=1, keepdims=True))).sum(axis=1) / (tc * tc).sum(axis=1)


def visit_truth(spec: CaseSpec, sig, k: int) -> dict:
    """The ``visit`` block of the truth: planted parameters and noise-free medians."""
    s = sig.schedule
    gas = _blood_gas(spec, k)
    return {
        "visit_number": k + 1,
        "flow_l_min": spec.flow_l_min,
        "etco2_alv_mmHg": spec.physiology.etco2_alv_mmHg,
        "rr_per_min": spec.physiology.rr_per_min,
        "upstroke_s": spec.physiology.upstroke_s,
        "slope_alv_mmHg_s": spec.physiology.slope_mmHg_s,
        "etco2_port_median_mmHg": round(float(np.median(s.etco2_mmHg)), 3),
        "phase3_slope_fitted_median_mmHg_s": round(
            float(np.median(fitted_phase3_slopes(spec, sig))), 4
        ),
        "rr_median_per_min": round(float(60.0 / np.median(np.diff(s.start_s))), 3),
        "blood_gas": gas,
    }


def _blood_gas(spec: CaseSpec, k: int) -> dict | None:
    if k not in BLOOD_GAS_VISITS:
        return None
    pco2 = spec.physiology.etco2_alv_mmHg + PA_ET_GAP_MMHG
    return {"sample": "capillary", "pco2_kPa": round(pco2 / 7.50062, 2), "time_s": 420}


def write_visit(outdir: str | Path, k: int, rng: np.random.Generator, seed: int, **kw) -> Path:
    """Simulate and write visit ``k``; ``kw`` goes to :func:`visit_spec`."""
    spec = visit_spec(k, **kw)
    sig = simulate_case(spec, rng)
    truth = build_truth(spec, sig, seed)
    truth["visit"] = visit_truth(spec, sig, k)
    folder = write_case(Path(outdir), spec, sig, truth)
    (folder / "session.yaml").write_text(_visit_yaml(spec, truth["visit"]["blood_gas"]))
    for name in ("doses.csv", "events.csv"):  # a resting visit has neither log
        (folder / name).unlink()
    return folder


def _visit_yaml(spec: CaseSpec, gas: dict | None) -> str:
    """``session.yaml`` of a visit: no dose or event log, the blood gas when taken."""
    head, _, body = session_yaml(spec).partition("\n")
    doc = yaml.safe_load(body)
    del doc["sources"]["doses"], doc["sources"]["events"]
    if gas is not None:
        doc["blood_gas"] = gas
    text = yaml.safe_dump(doc, sort_keys=False, default_flow_style=None, width=100)
    return (
        head.replace("Made by `sedreport demo`", "Made by `sedreport demo --visits`") + "\n" + text
    )


def write_visits(outdir: str | Path, seed: int = 0, n: int | None = None) -> list[Path]:
    """Write the invented COPD visits (all six by default) and a README; returns the folders."""

    count = len(VISIT_STARTS) if n is None else n
    out = Path(outdir)
    folders = [
        write_visit(out, k, case_rng(seed, f"DEMO-COPD-V{k + 1}"), seed) for k in range(count)
    ]
    (out / "README.md").write_text(readme_text(seed, count), encoding="utf-8")
    return folders


def readme_text(seed: int, n: int) -> str:
    """README of a folder of invented visits."""
    rows = []
    for k in range(n):
        spec = visit_spec(k)
        gas = " capillary blood gas;" if k in BLOOD_GAS_VISITS else ""
        rows.append(
            f"| {spec.session_id} | {spec.started[:10]} | {spec.flow_l_min:g} L/min |"
            f"{gas} phase III slope {spec.physiology.slope_mmHg_s:g} mmHg/s (alveolar) |"
        )
    return (
        "# Example COPD clinic visits (invented data)\n\n"
        f"Every file here is **invented**: one made-up patient ({PATIENT_REF}), {n} resting\n"
        "visits with slowly worsening obstruction and rising EtCO2, one visit on more oxygen.\n"
        "Made with\n\n"
        f"    sedreport demo example_visits --visits --seed {seed}\n\n"
        "and a test regenerates them and compares the bytes. Try\n\n"
        "    sedreport trend example_visits/DEMO-COPD-V*/ -o trend.pdf --csv trend.csv\n\n"
        "sedreport documents and reviews recorded data; it is not an alarm or a diagnosis.\n\n"
        "| session | date | oxygen | notes |\n|---|---|---|---|\n" + "\n".join(rows) + "\n"
    )


def with_start(spec: CaseSpec, started: str) -> CaseSpec:
    """The same visit on another date (benchmarks and tests)."""
    return replace(spec, started=started)
