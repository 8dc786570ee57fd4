"""Turn a :class:`~sedreport.demo.case.CaseSpec` into signals: breaths, CO2 samples, SpO2, pulse.

Slowly varying parameters (rate, alveolar CO2, dilution, inspired CO2, shape) live on a 1 s
grid built from the patient's physiology, the drug effects and the planted events; breaths are
then laid down one by one with breath-to-breath jitter, rendered, and noise added.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sedreport.demo import oximetry as ox
from sedreport.demo.capnogram import (
    DOWNSTROKE_S,
    BreathSchedule,
    add_sensor_noise,
    plateau_mask,
    render_capnogram,
)
from sedreport.demo.case import (
    Apnoea,
    CaseSpec,
    Disconnection,
    Etco2Fall,
    Gap,
    Hypoventilation,
    MouthBreathing,
    Obstruction,
    Rebreathing,
    Spo2Artefact,
    Spo2Dip,
)
from sedreport.demo.haemodynamics import blood_pressure, with_slow_pulse
from sedreport.demo.monitor import export_like_monitor
from sedreport.demo.pharmacology import respiratory_effect

#: Arterial minus end-tidal CO2 in healthy lungs, mmHg (from memory: a few mmHg).
PA_ET_GRADIENT_MMHG = 4.0
#: CO2 accumulated during an apnoea, shown by the first breaths after it. Deliberately
#: conservative invented values (6 mmHg over the first minute, then 3 mmHg/min): real rises can
#: be larger (the later ~3 mmHg/min rate is the one reported by Eger and Severinghaus,
#: Anesthesiology 1961, from memory); kept small so that post-apnoea breaths stay clearly under
#: the hypoventilation criterion and each planted episode has one clear kind.
APNOEA_CO2_FIRST_MIN_MMHG = 6.0
APNOEA_CO2_LATER_MMHG_MIN = 3.0
#: Time constant of the wash-out of that excess once breathing resumes, s (invented; halved
#: under bag-mask ventilation, which gives larger breaths).
CO2_WASHOUT_S = 30.0
#: A pause between breaths longer than this counts as apnoeic for oxygenation, s.
APNOEIC_PAUSE_S = 8.0


@dataclass(frozen=True)
class Tracks:
    """Slow parameters on the 1 s grid (index = whole seconds)."""

    grid_s: np.ndarray
    rr_per_min: np.ndarray
    etco2_alv_mmHg: np.ndarray
    dilution: np.ndarray
    fico2_mmHg: np.ndarray
    obstructed: np.ndarray
    flow_l_min: np.ndarray
    plateau_sd_mmHg: np.ndarray
    etco2_fall_mmHg: np.ndarray


@dataclass(frozen=True)
class Signals:
    """Simulated streams on the session clock (before unit conversion and rounding)."""

    schedule: BreathSchedule
    co2_time_s: np.ndarray
    co2_mmHg: np.ndarray
    spo2_time_s: np.ndarray
    spo2_pct: np.ndarray
    pulse_bpm: np.ndarray
    spo2_artefact: np.ndarray
    apnoea_resume_index: tuple[int, ...]
    #: Cuff readings: times (s), systolic and diastolic (mmHg); empty without a BP file.
    bp: tuple[np.ndarray, np.ndarray, np.ndarray] = (np.array([]),) * 3


def _trapezoid(grid_s: np.ndarray, start_s: float, end_s: float, ramp_s: float) -> np.ndarray:
    """0 -> 1 over ``ramp_s`` from ``start_s``, 1 until ``end_s``, -> 0 over ``ramp_s / 2``."""
    up = np.clip((grid_s - start_s) / max(ramp_s, 1e-9), 0.0, 1.0)
    down = np.clip(1.0 - (grid_s - end_s) / max(ramp_s / 2.0, 1e-9), 0.0, 1.0)
    return np.minimum(up, down)


def flow_track(spec: CaseSpec, grid_s: np.ndarray) -> np.ndarray:
    """Oxygen flow in L/min per second; ``oxygen_increase`` / ``oxygen_flow`` events set the
    new flow."""
    flow = np.full(grid_s.shape, float(spec.flow_l_min))
    for t_s, event, value, _ in sorted(spec.events, key=lambda e: e[0]):
        if event in ("oxygen_increase", "oxygen_flow") and value is not None:
            flow = np.where(grid_s >= t_s, float(value), flow)
    return flow


def build_tracks(spec: CaseSpec) -> Tracks:
    """Slow parameter tracks from physiology, drugs and plants."""
    phys = spec.physiology
    grid = np.arange(0.0, np.ceil(spec.duration_s) + 2.0, 1.0)
    doses = [(d[0], d[1], d[2], d[3]) for d in spec.doses]
    rr_eff, co2_eff = respiratory_effect(doses, grid, spec.weight_kg)
    # Background drug effect kept small: slower and shallower breathing, but inside the
    # normal ranges; planted episodes below carry the clinically relevant changes.
    rr = phys.rr_per_min * (1.0 - 0.15 * rr_eff)
    etco2 = phys.etco2_alv_mmHg + 3.0 * co2_eff
    for h in spec.planted_of(Hypoventilation):
        w = _trapezoid(grid, h.start_s, h.start_s + h.duration_s, h.ramp_s)
        w_rate = _trapezoid(grid, h.start_s, h.start_s + h.duration_s, h.ramp_s / 3.0)
        rr = rr * (1.0 - w_rate) + h.rr_per_min * w_rate
        etco2 = etco2 + h.etco2_rise_mmHg * w
    flow = flow_track(spec, grid)
    cannula = spec.oxygen_device == "nasal_cannula"
    # Nasal-cannula O2 dilutes the sampled gas: lower, noisier plateau (invented linear model).
    dilution = np.where(cannula, 1.0 - 0.035 * flow, 1.0)
    sd = 0.2 + (0.12 * flow if cannula else 0.0)
    fall = np.zeros_like(grid)
    for f in spec.planted_of(Etco2Fall):
        w = _trapezoid(grid, f.start_s, f.start_s + f.duration_s, f.ramp_s)
        fall = fall + f.fall_mmHg * w
        rr = rr + f.rr_rise_per_min * w
    etco2 = etco2 - fall
    for m in spec.planted_of(MouthBreathing):
        w = _trapezoid(grid, m.start_s, m.start_s + m.duration_s, m.ramp_s)
        dilution = dilution * (1.0 - w * (1.0 - m.dilution))
        sd = sd + 0.6 * w
    fico2 = np.zeros_like(grid)
    for r in spec.planted_of(Rebreathing):
        fico2 = fico2 + r.fico2_mmHg * _trapezoid(
            grid, r.start_s, r.start_s + r.duration_s, r.ramp_s
        )
    # Rebreathed CO2 also raises the alveolar value (part of the inspired CO2; invented factor).
    etco2 = etco2 + 0.4 * fico2
    obstructed = np.zeros(grid.shape, dtype=bool)
    for o in spec.planted_of(Obstruction):
        obstructed |= (grid >= o.start_s) & (grid < o.start_s + o.duration_s)
    return Tracks(
        grid, rr, etco2, dilution, fico2, obstructed, flow, np.broadcast_to(sd, grid.shape), fall
    )


def _apnoea_excess_mmHg(pause_s: float) -> float:
    """Alveolar CO2 accumulated over an apnoea of ``pause_s`` seconds, mmHg."""
    first = APNOEA_CO2_FIRST_MIN_MMHG * min(pause_s, 60.0) / 60.0
    return first + APNOEA_CO2_LATER_MMHG_MIN * max(pause_s - 60.0, 0.0) / 60.0


def schedule_breaths(
    spec: CaseSpec, tracks: Tracks, t_first_s: float, t_last_s: float, rng: np.random.Generator
) -> tuple[BreathSchedule, tuple[int, ...], np.ndarray]:
    """Lay down breaths one by one.

    Returns
    -------
    schedule : BreathSchedule
    resume_index : tuple of int
        Index of the first breath after each planted apnoea, in order of the apnoeas.
    etco2_alv_mmHg : ndarray
        Alveolar (undiluted) EtCO2 of each breath, for the oxygenation model.
    """
    phys = spec.physiology
    obstructions = spec.planted_of(Obstruction)
    apnoeas = list(spec.planted_of(Apnoea))
    keys = ("t", "tu", "tp", "td", "et", "rise", "cu", "ob", "as", "fi")
    cols: dict[str, list] = {k: [] for k in keys}
    alv: list[float] = []
    excess: list[tuple[float, float]] = []
    resume: list[int] = []
    # Python lists and pre-drawn normals: this loop runs once per breath.
    rr_t, et_t = tracks.rr_per_min.tolist(), tracks.etco2_alv_mmHg.tolist()
    dil_t, flow_t, fi_t = (
        tracks.dilution.tolist(),
        tracks.flow_l_min.tolist(),
        tracks.fico2_mmHg.tolist(),
    )
    fall_t = tracks.etco2_fall_mmHg.tolist()
    last_k = tracks.grid_s.size - 1
    z = rng.standard_normal((int(spec.duration_s / 1.5) + 16, 7)).tolist()
    assist_until = -1.0
    t = t_first_s
    for n in range(len(z)):
        if apnoeas and t >= apnoeas[0].onset_s:
            a = apnoeas.pop(0)
            t = a.onset_s + a.pause_s
            excess.append((t, _apnoea_excess_mmHg(t - _last_end(cols, a.onset_s))))
            resume.append(len(cols["t"]))
            assist_until = t + a.assist_s if a.bag_mask else assist_until
        k = min(int(t), last_k)
        zn = z[n]
        assisted = t < assist_until
        cycle = 60.0 / (12.0 if assisted else rr_t[k]) * float(np.exp(phys.rr_jitter * zn[0]))
        te = cycle * phys.expiratory_fraction * (1.0 + 0.03 * zn[1])
        o = next((x for x in obstructions if x.start_s <= t < x.start_s + x.duration_s), None)
        tu = phys.upstroke_s * (o.upstroke_factor if o else 1.0) * (1.0 + 0.08 * zn[2])
        td = DOWNSTROKE_S * (1.0 + 0.08 * zn[3])
        tp = max(te - tu, 0.6)
        if t + tu + tp + td > t_last_s:
            break
        washout_s = CO2_WASHOUT_S / (2.0 if assisted else 1.0)
        et_alv = et_t[k] + phys.etco2_jitter_mmHg * zn[4]
        et_alv += sum(x * np.exp(-(t - t0) / washout_s) for t0, x in excess if t >= t0)
        dil = dil_t[k] * (1.0 + 0.01 * flow_t[k] * zn[5])
        et = et_alv * min(dil, 1.0)
        slope = phys.slope_mmHg_s * (o.slope_factor if o else 1.0) * dil * np.exp(0.1 * zn[6])
        if fall_t[k] > 0:  # a lower alveolar CO2 gives a proportionally lower phase III slope
            slope *= et_t[k] / (et_t[k] + fall_t[k])
        # The plateau flattens after ~3 s of a long expiratory pause, and never starts below
        # 40 % (normal) / 35 % (obstructive) of EtCO2.
        rise = min(slope * (min(tp, 3.0) + 0.1 * max(tp - 3.0, 0.0)), (0.65 if o else 0.6) * et)
        values = (
            t,
            tu,
            tp,
            td,
            et,
            float(rise),
            phys.curvature * (1.6 if o else 1.0),
            o is not None,
            assisted,
            fi_t[min(int(t + tu + tp + td), last_k)],
        )
        for key, val in zip(keys, values, strict=True):
            cols[key].append(val)
        alv.append(et_alv)
        t += cycle
    arr = {k: np.asarray(v, dtype=float) for k, v in cols.items()}
    schedule = BreathSchedule(
        start_s=arr["t"],
        upstroke_s=arr["tu"],
        plateau_s=arr["tp"],
        downstroke_s=arr["td"],
        etco2_mmHg=arr["et"],
        plateau_rise_mmHg=arr["rise"],
        curvature=arr["cu"],
        fico2_mmHg=arr["fi"],
        obstructed=arr["ob"].astype(bool),
        assisted=arr["as"].astype(bool),
        shelf_s=np.zeros(arr["t"].size),
        shelf_mmHg=np.zeros(arr["t"].size),
        hump_dip=np.zeros(arr["t"].size),
    )
    return _shape_variety(schedule, phys, rng), tuple(resume), np.asarray(alv)


def _shape_variety(schedule: BreathSchedule, phys, rng: np.random.Generator) -> BreathSchedule:
    """Stepped (low shelf before the rise) and two-hump breaths, as on clinical nasal traces.

    Shelves of 4-8 mmHg for 0.3-0.8 s (taken from the plateau, so the breath keeps its
    length) and mid-plateau dips of 30-50 %: invented values in the range seen by eye on
    recorded nasal capnograms. Draws nothing when both fractions are 0.
    """
    n = len(schedule)
    if n == 0 or (phys.stepped_fraction <= 0 and phys.hump_fraction <= 0):
        return schedule
    u = rng.random((n, 4))
    stepped = (u[:, 0] < phys.stepped_fraction) & ~schedule.assisted
    shelf_s = np.where(stepped, np.minimum(0.3 + 0.5 * u[:, 1], schedule.plateau_s - 0.6), 0.0)
    shelf_s = np.clip(shelf_s, 0.0, None)
    shelf_mmHg = np.where(shelf_s > 0, 5.0 + 3.0 * u[:, 2], 0.0)
    hump = (u[:, 3] < phys.hump_fraction) & ~schedule.assisted
    hump_dip = np.where(hump, 0.3 + 0.2 * u[:, 2], 0.0)
    fields = {k: getattr(schedule, k) for k in BreathSchedule.__dataclass_fields__}
    fields.update(
        plateau_s=schedule.plateau_s - shelf_s,
        shelf_s=shelf_s,
        shelf_mmHg=np.minimum(shelf_mmHg, 0.5 * schedule.etco2_mmHg),
        hump_dip=hump_dip,
    )
    return BreathSchedule(**fields)


def _last_end(cols: dict[str, list], before_s: float) -> float:
    """End time of the last breath laid down (or ``before_s`` when there is none)."""
    if not cols["t"]:
        return before_s
    return cols["t"][-1] + cols["tu"][-1] + cols["tp"][-1] + cols["td"][-1]


def _co2_samples(spec: CaseSpec, schedule: BreathSchedule, tracks: Tracks, rng) -> tuple:
    """CO2 sample times and values (noise added, gaps removed)."""
    t0 = max(0.0, spec.co2_offset_s)
    n = int(np.floor((spec.duration_s - t0) * spec.co2_rate_hz)) + 1
    time_s = t0 + np.arange(n) / spec.co2_rate_hz
    clean = render_capnogram(schedule, time_s)
    in_breath = plateau_mask(schedule, time_s)
    sd = tracks.plateau_sd_mmHg[np.clip(time_s.astype(int), 0, tracks.grid_s.size - 1)]
    clean = clean + _cardiogenic_mmHg(spec, schedule, time_s, rng)
    co2 = add_sensor_noise(clean, in_breath, 0.12, sd, rng)
    for a, b in disconnected_spans(spec, schedule):
        co2 = np.where((time_s > a) & (time_s < b), 0.0, co2)
    keep = np.ones(n, dtype=bool)
    for g in spec.planted_of(Gap):
        if g.source == "co2":
            keep &= ~((time_s >= g.start_s) & (time_s < g.start_s + g.duration_s))
    return time_s[keep], co2[keep]


def _cardiogenic_mmHg(
    spec: CaseSpec, schedule: BreathSchedule, time_s: np.ndarray, rng: np.random.Generator
) -> np.ndarray:
    """Oscillations at the heart rate inside planted apnoeic pauses (0 elsewhere), mmHg.

    Positive bumps of the planted height, from 1 s after the last breath to 0.5 s before the
    next. Draws from ``rng`` only when a planted apnoea has them.
    """
    out = np.zeros(time_s.shape)
    apnoeas = [a for a in spec.planted_of(Apnoea) if a.cardiogenic_mmHg > 0]
    if not apnoeas:
        return out
    hz = spec.physiology.hr_bpm / 60.0
    for a in apnoeas:
        nxt = np.searchsorted(schedule.start_s, a.onset_s + a.pause_s - 1e-6)
        if not 0 < nxt < len(schedule):
            continue
        lo, hi = schedule.end_s[nxt - 1] + 1.0, schedule.start_s[nxt] - 0.5
        inside = (time_s > lo) & (time_s < hi)
        phase = float(rng.uniform(0.0, 2.0 * np.pi))
        bump = 0.5 * (1.0 - np.cos(2.0 * np.pi * hz * (time_s - lo) + phase))
        out = np.where(inside, a.cardiogenic_mmHg * bump, out)
    return out


def disconnected_spans(spec: CaseSpec, schedule: BreathSchedule) -> list[tuple[float, float]]:
    """Each planted disconnection from the end of the last breath before it to the start of
    the first breath after it, s."""
    out = []
    for d in spec.planted_of(Disconnection):
        before = schedule.end_s[schedule.end_s <= d.start_s]
        after = schedule.start_s[schedule.start_s >= d.start_s + d.duration_s]
        if before.size and after.size:
            out.append((float(before[-1]), float(after[0])))
    return out


def _apnoeic_seconds(schedule: BreathSchedule, grid_s: np.ndarray) -> np.ndarray:
    """True for grid seconds inside a pause between breaths longer than APNOEIC_PAUSE_S."""
    mask = np.zeros(grid_s.shape, dtype=bool)
    ends, starts = schedule.end_s[:-1], schedule.start_s[1:]
    for a, b in zip(
        ends[starts - ends > APNOEIC_PAUSE_S], starts[starts - ends > APNOEIC_PAUSE_S], strict=True
    ):
        mask |= (grid_s >= a + APNOEIC_PAUSE_S / 2.0) & (grid_s < b)
    return mask


def _with_dips(grid_s: np.ndarray, spo2: np.ndarray, dips: list) -> np.ndarray:
    """SpO2 held at or below each planted dip's profile (fall, hold at the nadir, rise)."""
    out = spo2
    for d in dips:
        into = np.minimum(grid_s - d.start_s, d.start_s + d.duration_s - grid_s)
        inside = into >= 0
        depth = np.clip(into / d.ramp_s, 0.0, 1.0)
        profile = np.where(inside, out - depth * (out - d.nadir_pct), out)
        out = np.minimum(out, profile)
    return out


def _oximetry(spec: CaseSpec, schedule: BreathSchedule, alv_mmHg, tracks: Tracks, rng) -> tuple:
    """SpO2 and pulse on the session clock at 1 Hz (float), plus the artefact mask."""
    grid = tracks.grid_s
    params = spec.physiology.oxygen
    apnoeic = _apnoeic_seconds(schedule, grid)
    assisted_t = schedule.start_s[schedule.assisted]
    fast = np.zeros(grid.shape, dtype=bool)
    if assisted_t.size:
        fast = (grid >= assisted_t.min()) & (grid <= assisted_t.max())
    paco2 = np.interp(grid, schedule.start_s, alv_mmHg) + PA_ET_GRADIENT_MMHG
    fio2 = ox.fio2_nasal_cannula(tracks.flow_l_min)
    pao2 = ox.simulate_pao2(grid, apnoeic, fio2, paco2, fast, params)
    spo2 = _with_dips(grid, ox.finger_spo2_pct(pao2, params, rng), spec.planted_of(Spo2Dip))
    pulse = with_slow_pulse(spec, grid, ox.pulse_bpm(grid, spec.physiology.hr_bpm, spo2, rng))
    t0 = np.ceil(max(0.0, spec.spo2_offset_s))
    keep = (grid >= t0) & (grid <= spec.duration_s)
    for g in spec.planted_of(Gap):
        if g.source == "spo2":
            keep &= ~((grid >= g.start_s) & (grid < g.start_s + g.duration_s))
    art = np.zeros(grid.shape, dtype=bool)
    for a in spec.planted_of(Spo2Artefact):
        art |= (grid >= a.start_s) & (grid < a.start_s + a.duration_s)
    spo2_q = ox.quantise(spo2, 100.0)
    pulse_q = ox.quantise(pulse, 250.0)
    spo2_q, pulse_q = ox.plant_motion_artefact(spo2_q, pulse_q, art, rng)
    spo2_q, pulse_q = ox.quantise(spo2_q, 100.0), ox.quantise(pulse_q, 250.0)
    spo2_q, pulse_q, art = export_like_monitor(spec, grid, t0, spo2_q, pulse_q, art)
    return grid[keep], spo2_q[keep], pulse_q[keep], art[keep]


def simulate_case(spec: CaseSpec, rng: np.random.Generator) -> Signals:
    """Simulate every stream of one case.

    Parameters
    ----------
    spec : CaseSpec
    rng : numpy.random.Generator
        The only source of randomness (same generator state -> same signals).
    """
    tracks = build_tracks(spec)
    t_first = max(0.0, spec.co2_offset_s) + 0.8 + float(rng.uniform(0.0, 1.5))
    schedule, resume, alv = schedule_breaths(spec, tracks, t_first, spec.duration_s - 0.2, rng)
    co2_t, co2 = _co2_samples(spec, schedule, tracks, rng)
    spo2_t, spo2, pulse, art = _oximetry(spec, schedule, alv, tracks, rng)
    bp = blood_pressure(spec, rng)  # drawn last: the other streams keep their random draws
    return Signals(schedule, co2_t, co2, spo2_t, spo2, pulse, art, resume, bp)
