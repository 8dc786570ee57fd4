"""Invented cohorts: many varied sessions drawn from a YAML recipe, for audit demos and tests.

Each case is drawn from its own generator (seed and case number), so a cohort is the same
whatever the number of worker processes. Planted events are placed by the dose/response layer:
an apnoea within a minute or two of a propofol bolus, hypoventilation a few minutes after an
opioid or benzodiazepine dose, each ended by an intervention logged in ``events.csv``.
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from importlib import resources
from multiprocessing import get_context
from pathlib import Path

import numpy as np
import yaml

from sedreport.demo.case import (
    Apnoea,
    CaseSpec,
    Gap,
    Hypoventilation,
    Obstruction,
    Physiology,
    ProbeOff,
    Rebreathing,
    Spo2Artefact,
)
from sedreport.demo.charting import charted
from sedreport.demo.cohort_events import draw_event_extras, unattended
from sedreport.demo.examples import case_rng, simulate_and_write
from sedreport.demo.oximetry import OxygenParams
from sedreport.demo.pharmacology import peak_effect_s
from sedreport.errors import SedreportError

_REQUIRED = (
    "year",
    "duration_min",
    "co2_rate_hz",
    "baseline_s",
    "oxygen_flow_l_min",
    "asa_class",
    "conditions",
    "areas",
    "regimens",
    "events",
    "desaturation_given_apnoea",
    "sloped_plateau_given_copd",
    "asa_multiplier",
)
_REGIMENS = ("propofol", "propofol_fentanyl", "propofol_infusion", "midazolam_fentanyl")


def load_recipe(path: str | Path | None = None) -> dict:
    """Read and check a cohort recipe (default: ``templates/demo/cohort.yaml``)."""
    if path is None:
        text = resources.files("sedreport").joinpath("templates/demo/cohort.yaml").read_text()
        where = "templates/demo/cohort.yaml"
    else:
        where = str(path)
        try:
            text = Path(path).read_text(encoding="utf-8")
        except OSError as exc:
            raise SedreportError(f"{where}: cannot read cohort recipe ({exc.strerror})") from exc
    try:
        recipe = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        raise SedreportError(f"{where}: not valid YAML ({exc})") from exc
    if not isinstance(recipe, dict) or recipe.get("format") != "sedreport-demo-cohort/1":
        raise SedreportError(f"{where}:format: expected 'sedreport-demo-cohort/1'")
    for key in _REQUIRED:
        if key not in recipe:
            raise SedreportError(f"{where}:{key}: missing")
    for area, spec in recipe["areas"].items():
        for reg in spec.get("regimens", {}):
            if reg not in _REGIMENS:
                raise SedreportError(f"{where}:areas.{area}.regimens: unknown regimen {reg!r}")
    return recipe


def _pick(rng: np.random.Generator, weights: dict):
    keys = list(weights)
    p = np.array([float(weights[k]) for k in keys])
    return keys[int(rng.choice(len(keys), p=p / p.sum()))]


def _doses(rng, regimen: str, t0: float, end_s: float) -> list[tuple]:
    """Dose lines of a regimen, first at ``t0``; top-ups until ``end_s``."""
    out: list[tuple] = []
    if "fentanyl" in regimen:
        out.append((t0, "fentanyl", float(rng.choice([25.0, 50.0])), "mcg", "iv"))
    if regimen == "midazolam_fentanyl":
        out.append((t0 + 20.0, "midazolam", float(rng.choice([1.0, 1.5, 2.0])), "mg", "iv"))
        t = t0 + rng.uniform(420, 600)
        while t < end_s:
            if rng.random() < 0.5:
                out.append((round(t), "fentanyl", 25.0, "mcg", "iv"))
            else:
                out.append((round(t), "midazolam", 1.0, "mg", "iv"))
            t += rng.uniform(420, 720)
        return out
    t = t0 + 30.0
    out.append((t, "propofol", float(rng.choice([40.0, 50.0])), "mg", "iv"))
    if regimen == "propofol_infusion":
        out.append(
            (t + 10.0, "propofol", float(rng.choice([50.0, 75.0, 100.0])), "mcg/kg/min", "iv")
        )
        out.append((round(end_s), "propofol", 0.0, "mcg/kg/min", "iv"))
        return out
    t += rng.uniform(120, 240)
    while t < end_s:
        out.append((round(t), "propofol", float(rng.choice([20.0, 30.0])), "mg", "iv"))
        t += rng.uniform(120, 300)
    return out


def _free(windows: list[tuple[float, float]], a: float, b: float, margin: float = 120.0) -> bool:
    return all(b + margin < w0 or a - margin > w1 for w0, w1 in windows)


def _plant(
    rng,
    recipe: dict,
    regimen: str,
    asa: int,
    month: int,
    area: str,
    copd: bool,
    doses: list[tuple],
    limits: tuple[float, float],
) -> tuple[list, list, dict]:
    """Planted events, their intervention lines and oxygen overrides for one case."""
    lo, hi = limits
    ev = recipe["events"]
    mult = float(recipe["asa_multiplier"].get(asa, 1.0))
    drift = recipe.get("drift") or {}
    if drift.get("area") == area:
        mult *= 1.0 + float(drift.get("per_month", 0.0)) * (month - 1)
    planted, events, override = [], [], {}
    windows: list[tuple[float, float]] = []
    boluses = [d for d in doses if d[1] == "propofol" and d[3] == "mg" and lo < d[0] < hi - 300]
    if boluses and rng.random() < float(ev["apnoea"].get(regimen, 0.0)) * mult:
        bolus = boluses[int(rng.integers(len(boluses)))]
        onset = bolus[0] + peak_effect_s("propofol") * rng.uniform(0.5, 1.0)
        desat = rng.random() < float(recipe["desaturation_given_apnoea"])
        pause = rng.uniform(66.0, 76.0) if desat else rng.uniform(22.0, 45.0)
        planted.append(Apnoea(onset, pause, bag_mask=desat))
        windows.append((onset - 30.0, onset + pause + 120.0))
        events.append(
            (round(onset + min(15.0, pause / 2)), "airway_repositioning", None, "chin lift")
        )
        if desat:
            events.append((round(onset + pause - 12.0), "bag_mask_ventilation", None, ""))
            override = {"flow_l_min": 2.0, "apnoea_drop_mmHg_s": rng.uniform(1.55, 1.7)}
    # Opioids and benzodiazepines first; a hypnotic bolus otherwise (raised CO2 at a normal rate: the hypercapnic subtype).
    triggers = [d for d in doses if d[2] > 0 and d[0] < hi - 600.0]
    triggers.sort(key=lambda d: (d[1] not in ("fentanyl", "midazolam"), -d[0]))
    if triggers and rng.random() < float(ev["hypoventilation"].get(regimen, 0.0)) * mult:
        start = triggers[0][0] + rng.uniform(150.0, 240.0)
        dur = rng.uniform(200.0, 360.0)
        if _free(windows, start, start + dur) and start + dur < hi:
            brady = rng.random() < 0.6
            rr = rng.uniform(5.6, 6.8) if brady else rng.uniform(10.0, 12.0)
            planted.append(Hypoventilation(start, dur, rr, rng.uniform(16.0, 20.0), 120.0))
            windows.append((start, start + dur + 120.0))
            events.append((round(start + dur - 40.0), "verbal_stimulus", None, ""))
            events.append((round(start + dur - 15.0), "physical_stimulus", None, ""))
    for kind, prob in (
        ("rebreathing", ev["rebreathing"].get(regimen, 0.0)),
        ("sloped_plateau", recipe["sloped_plateau_given_copd"] if copd else 0.0),
        ("co2_gap", ev["co2_gap"].get(regimen, 0.0)),
        ("spo2_artefact", ev["spo2_artefact"].get(regimen, 0.0)),
    ):
        if rng.random() >= float(prob):
            continue
        dur = {
            "rebreathing": (120, 240),
            "sloped_plateau": (150, 300),
            "co2_gap": (20, 90),
            "spo2_artefact": (15, 40),
        }[kind]
        for _ in range(5):
            length = rng.uniform(*dur)
            start = rng.uniform(lo, hi - length - 60.0)
            if _free(windows, start, start + length):
                windows.append((start, start + length + 60.0))
                planted.append(_make(kind, start, length, rng))
                if kind == "rebreathing":
                    events.append((round(start + length - 10.0), "oxygen_increase", 5.0, ""))
                break
    return planted, events, override


def _make(kind: str, start: float, length: float, rng):
    if kind == "rebreathing":
        return Rebreathing(start, length, rng.uniform(7.5, 10.0), 15.0)
    if kind == "sloped_plateau":
        return Obstruction(start, length, rng.uniform(4.0, 5.0), 2.5)
    if kind == "co2_gap":
        return Gap("co2", start, length)
    return Spo2Artefact(start, length)


def _busy(planted: list) -> list[tuple[float, float]]:
    """Time windows of the planted items, with room for a desaturation after an apnoea."""
    out = []
    for p in planted:
        start = getattr(p, "start_s", getattr(p, "onset_s", 0.0))
        length = getattr(p, "duration_s", getattr(p, "pause_s", 0.0))
        out.append((start - 30.0, start + length + 180.0))
    return out


def _oximeter(recipe: dict, index: int, seed: int, planted: list, limits) -> tuple[dict, list]:
    """Monitor-export fields and probe-off plants of one case from the optional ``oximeter``
    recipe section, drawn from a generator of their own (the other draws do not move)."""
    spec = recipe.get("oximeter")
    if not spec:
        return {}, []
    rng = case_rng(seed, f"cohort-{index}-oximeter")
    u = int(spec.get("display_update_s", 1))
    fields: dict = {"spo2_update_s": u}
    if rng.random() < float(spec.get("paced", 0.0)):
        fields["paced_bpm"] = float(rng.choice([60.0, 70.0, 80.0]))
    if rng.random() < float(spec.get("startup", 0.0)):
        fields["spo2_startup_s"] = float(rng.uniform(*spec["startup_s"]))
        fields["spo2_startup_low_pct"] = float(rng.uniform(*spec["startup_low_pct"]))
    lo, hi = limits
    windows = _busy(planted)
    out = []
    for _ in range(int(rng.poisson(float(spec.get("probe_off_per_case", 0.0))))):
        length = u * int(rng.integers(1, int(spec["probe_off_s"][1] // u) + 1))
        length = max(length, float(spec["probe_off_s"][0]))
        start = u * round(rng.uniform(lo, hi - length - 60.0) / u)
        startup = u * int(rng.integers(0, 3))
        if _free(windows, start, start + length + startup, margin=60.0):
            windows.append((start, start + length + startup))
            out.append(ProbeOff(float(start), float(length), float(startup), rng.uniform(4, 10)))
    return fields, out


def draw_case(recipe: dict, index: int, seed: int) -> CaseSpec:
    """The ``index``-th case of a cohort (deterministic in ``seed`` and ``index``), charted
    like the scenarios (:func:`sedreport.demo.charting.charted`): a cuff pressure every 3-5
    min around a resting pressure drawn from its own generator (so the other draws keep
    their values), an assessment, depth and recovery scores, oxygen weaning, discharge."""
    spec = _draw_signals_case(recipe, index, seed)
    bp_rng = case_rng(seed, f"cohort-{index}-bp")
    systolic = float(round(bp_rng.uniform(115.0, 150.0)))
    diastolic = float(round(systolic * bp_rng.uniform(0.55, 0.65)))
    interval_s = float(bp_rng.choice([180.0, 240.0, 300.0]))
    return charted(replace(spec, bp_mmHg=(systolic, diastolic)), bp_interval_s=interval_s)


def _draw_signals_case(recipe: dict, index: int, seed: int) -> CaseSpec:
    rng = case_rng(seed, f"cohort-{index}")
    area = _pick(rng, {k: v["weight"] for k, v in recipe["areas"].items()})
    a = recipe["areas"][area]
    regimen = _pick(rng, a["regimens"])
    asa = int(_pick(rng, recipe["asa_class"]))
    conds = [c for c, p in recipe["conditions"].items() if rng.random() < float(p)]
    month = int(rng.integers(1, 13))
    duration = round(60.0 * rng.uniform(*recipe["duration_min"]))
    t0 = round(rng.uniform(*recipe["baseline_s"]))
    doses = _doses(rng, regimen, float(t0), duration - 240.0)
    planted, events, override = _plant(
        rng,
        recipe,
        regimen,
        asa,
        month,
        area,
        "copd" in conds,
        doses,
        (t0 + 60.0, duration - 120.0),
    )
    ox_fields, ox_plants = _oximeter(recipe, index, seed, planted, (t0 + 60.0, duration - 120.0))
    copd = "copd" in conds
    extra_rng = case_rng(seed, f"cohort-{index}-events")
    dips, dip_events, outcome = draw_event_extras(
        extra_rng, recipe, planted, t0 + 60.0, duration - 120.0
    )
    planted, events = [*planted, *dips], [*unattended(extra_rng, recipe, events), *dip_events]
    oxy = OxygenParams(
        aa_gradient_mmHg=rng.uniform(30, 40) if copd else rng.uniform(8, 15),
        apnoea_drop_mmHg_s=override.get("apnoea_drop_mmHg_s", rng.uniform(0.8, 1.1)),
        wash_in_s=60.0 if override else 25.0,
    )
    phys = Physiology(
        rr_per_min=rng.uniform(13.0, 17.0),
        etco2_alv_mmHg=rng.uniform(38.0, 42.0),
        slope_mmHg_s=rng.uniform(2.5, 4.0) if copd else rng.uniform(0.8, 1.5),
        upstroke_s=0.3 if copd else 0.22,
        curvature=1.5 if copd else 0.8,
        hr_bpm=rng.uniform(60.0, 90.0),
        oxygen=oxy,
    )
    events += [
        (t0 + 60.0, "procedure_start", None, ""),
        (duration - 90.0, "procedure_end", None, ""),
    ]
    tz = "+02:00" if 4 <= month <= 10 else "+01:00"
    day, hour, minute = int(rng.integers(1, 29)), int(rng.integers(8, 17)), int(rng.integers(0, 60))
    obese = "obesity" in conds
    return CaseSpec(
        session_id=f"COH-{index + 1:04d}",
        scenario="cohort",
        started=f"{recipe['year']}-{month:02d}-{day:02d}T{hour:02d}:{minute:02d}:00{tz}",
        duration_s=float(duration),
        area=area,
        procedure=str(rng.choice(a["procedures"])),
        target_depth=recipe["regimens"][regimen]["target_depth"],
        patient={
            "ref": f"P-C{index + 1:05d}",
            "age_years": int(rng.integers(25, 86)),
            "sex": str(rng.choice(["female", "male"])),
            "weight_kg": int(rng.uniform(95, 135) if obese else rng.uniform(50, 95)),
            "height_cm": int(rng.uniform(150, 192)),
            "asa_class": asa,
            "conditions": conds,
        },
        team={
            "sedation_provider": str(rng.choice(a["providers"])),
            "proceduralist": str(rng.choice(a["proceduralists"])),
        },
        physiology=phys,
        doses=tuple(doses),
        events=tuple(sorted(events, key=lambda e: e[0])),
        planted=tuple(planted + ox_plants),
        flow_l_min=float(override.get("flow_l_min", _pick(rng, recipe["oxygen_flow_l_min"]))),
        co2_rate_hz=float(rng.choice(recipe["co2_rate_hz"])),
        description=f"Invented cohort case, regimen {regimen}.",
        **ox_fields,
        outcome=outcome,
    )


def _write_one(args: tuple) -> str:
    outdir, recipe, index, seed = args
    return str(simulate_and_write(outdir, draw_case(recipe, index, seed), seed, compresslevel=1))


def write_cohort(
    outdir: str | Path, n: int, seed: int = 0, recipe: str | Path | None = None, jobs: int = 1
) -> list[Path]:
    """Write ``n`` cohort sessions ``COH-0001``... and their truth files.

    Parameters
    ----------
    outdir : str or Path
    n : int
        Number of sessions (>= 1).
    seed : int
    recipe : str or Path, optional
        YAML recipe; the bundled ``templates/demo/cohort.yaml`` when None.
    jobs : int
        Worker processes (0 = one per CPU). The output does not depend on it.
    """
    if n < 1:
        raise SedreportError(f"demo: --cohort must be at least 1, got {n}")
    rec = load_recipe(recipe)
    Path(outdir).mkdir(parents=True, exist_ok=True)
    tasks = [(str(outdir), rec, i, seed) for i in range(n)]
    jobs = (os.cpu_count() or 1) if jobs == 0 else jobs
    if jobs <= 1 or n < 8:
        return [Path(_write_one(t)) for t in tasks]
    with ProcessPoolExecutor(max_workers=jobs, mp_context=get_context("spawn")) as pool:
        return [Path(p) for p in pool.map(_write_one, tasks, chunksize=16)]
