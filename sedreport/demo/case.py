"""Plain descriptions of an invented case: the patient's physiology, drugs, events, plants.

A :class:`CaseSpec` says everything the simulator needs; scenarios and cohorts build them,
:func:`sedreport.demo.simulate.simulate_case` turns them into signals and truth.
All times are seconds on the session clock.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from sedreport.demo.oximetry import OxygenParams


@dataclass(frozen=True)
class Physiology:
    """Resting breathing of the invented patient before any drug.

    Attributes
    ----------
    rr_per_min : float
        Resting rate (12-20/min in a resting adult; common practice).
    etco2_alv_mmHg : float
        Alveolar end-tidal CO2 before cannula dilution (35-45 mmHg normal; common practice).
    slope_mmHg_s : float
        Phase III slope; positive, steeper in obstructive lung disease (common practice).
    upstroke_s : float
        Phase II duration.
    curvature : float
        Plateau rounding (0 straight).
    expiratory_fraction : float
        Share of the cycle from upstroke onset to downstroke (I:E about 1:2; common practice).
    rr_jitter : float
        Breath-to-breath relative SD of the cycle length.
    etco2_jitter_mmHg : float
        Breath-to-breath SD of EtCO2.
    hr_bpm : float
        Resting pulse.
    oxygen : OxygenParams
    stepped_fraction, hump_fraction : float
        Share of breaths drawn with a low shelf before the main rise (a stepped expiration)
        and with a dip in mid-plateau (a two-hump expiration), as in clinical nasal
        capnograms; each is still one breath.
    """

    rr_per_min: float = 15.0
    etco2_alv_mmHg: float = 40.0
    slope_mmHg_s: float = 1.2
    upstroke_s: float = 0.22
    curvature: float = 0.8
    expiratory_fraction: float = 0.62
    rr_jitter: float = 0.05
    etco2_jitter_mmHg: float = 0.5
    hr_bpm: float = 74.0
    oxygen: OxygenParams = field(default_factory=OxygenParams)
    stepped_fraction: float = 0.0
    hump_fraction: float = 0.0


@dataclass(frozen=True)
class Apnoea:
    """No breath starts from ``onset_s`` for ``pause_s``; breathing resumes at the end.

    ``bag_mask`` marks the breaths after the pause as bag-mask ventilation for ``assist_s``.
    ``cardiogenic_mmHg`` adds oscillations of that height at the heart rate during the pause
    (cardiogenic oscillations: gas moved by the heartbeat; not breaths).
    """

    onset_s: float
    pause_s: float
    bag_mask: bool = False
    assist_s: float = 60.0
    cardiogenic_mmHg: float = 0.0


@dataclass(frozen=True)
class Hypoventilation:
    """Slow breathing with rising CO2: rate falls to ``rr_per_min``, EtCO2 rises by
    ``etco2_rise_mmHg`` over ``ramp_s``, holds, and recovers over ``ramp_s / 2``."""

    start_s: float
    duration_s: float
    rr_per_min: float
    etco2_rise_mmHg: float
    ramp_s: float = 120.0


@dataclass(frozen=True)
class Rebreathing:
    """Raised inspired baseline of ``fico2_mmHg`` (e.g. rebreathing under drapes)."""

    start_s: float
    duration_s: float
    fico2_mmHg: float
    ramp_s: float = 10.0


@dataclass(frozen=True)
class Obstruction:
    """Obstructive ("shark fin") shape: phase III slope x ``slope_factor``, upstroke x
    ``upstroke_factor``, rounder plateau, for every breath starting inside the window."""

    start_s: float
    duration_s: float
    slope_factor: float = 4.5
    upstroke_factor: float = 2.5


@dataclass(frozen=True)
class MouthBreathing:
    """Mouth breathing past the nasal cannula: plateau diluted to ``dilution``, noisier.

    The plateau drops within ``ramp_s`` and comes back as fast, at an unchanged rate (a
    low-amplitude capnogram, not hypoventilation).
    """

    start_s: float
    duration_s: float
    dilution: float = 0.6
    ramp_s: float = 2.0


@dataclass(frozen=True)
class Disconnection:
    """The sampling line is disconnected: the CO2 channel reads exactly 0 (no noise).

    The zeros run from the end of the last breath before ``start_s`` to the start of the first
    breath after ``start_s + duration_s``; the patient keeps breathing.
    """

    start_s: float
    duration_s: float


@dataclass(frozen=True)
class Etco2Fall:
    """Alveolar CO2 falls by ``fall_mmHg`` (e.g. hyperventilation) over ``ramp_s``, holds,
    recovers over ``ramp_s / 2``; the rate rises by ``rr_rise_per_min``."""

    start_s: float
    duration_s: float
    fall_mmHg: float
    ramp_s: float = 30.0
    rr_rise_per_min: float = 4.0


@dataclass(frozen=True)
class Gap:
    """No samples of ``source`` (``co2`` or ``spo2``) in the window (line or probe off)."""

    source: str
    start_s: float
    duration_s: float


@dataclass(frozen=True)
class Spo2Artefact:
    """Erratic oximeter readings (probe motion) in the window."""

    start_s: float
    duration_s: float
    kind: str = "motion"


@dataclass(frozen=True)
class ProbeOff:
    """The oximeter shows no reading (exported as 0, pulse 0) in the window; the first
    ``startup_s`` of readings after it read up to ``startup_low_pct`` below the true value,
    climbing to it (a probe acquiring again)."""

    start_s: float
    duration_s: float
    startup_s: float = 8.0
    startup_low_pct: float = 8.0


@dataclass(frozen=True)
class Spo2Dip:
    """A true (not artefact) fall of SpO2 to ``nadir_pct``: a linear fall over ``ramp_s``, a
    hold, a linear rise over ``ramp_s``, ``duration_s`` in all (e.g. a brief deep dip from a
    short airway obstruction). The simulated trend is held at or below this profile."""

    start_s: float
    duration_s: float
    nadir_pct: float
    ramp_s: float = 8.0


@dataclass(frozen=True)
class LowBloodPressure:
    """Systolic and diastolic pressure fall a further ``fall_pct`` % (a trapezoid with
    ``ramp_s`` ramps) in the window: a hypotension beyond the drugs' background response."""

    start_s: float
    duration_s: float
    fall_pct: float
    ramp_s: float = 30.0


@dataclass(frozen=True)
class SlowPulse:
    """The pulse is drawn to ``pulse_bpm`` in the window (ramps of ``ramp_s``): a bradycardia."""

    start_s: float
    duration_s: float
    pulse_bpm: float
    ramp_s: float = 10.0


@dataclass(frozen=True)
class CaseSpec:
    """Everything needed to simulate and write one invented session.

    ``doses`` rows are ``(time_s, drug, dose, unit, route)``; ``events`` rows are
    ``(time_s, event, value_or_None, note)``. ``co2_offset_s`` / ``spo2_offset_s`` are the
    ``clock_offset_s`` written to ``session.yaml`` (file times = session times - offset).
    The oximeter: ``spo2_update_s`` holds each displayed value that long at 1 Hz (real monitors
    update every few seconds); ``paced_bpm`` makes the pulse sit on one value (a paced heart);
    ``spo2_startup_s`` / ``spo2_startup_low_pct`` make the first readings of the file read low
    and climb (a probe acquiring). The defaults leave all of that off.
    ``outcome`` holds the ``session.yaml`` outcome words (empty: no adverse outcome).
    ``bp_interval_s`` writes ``bp.csv`` with a cuff reading that often (None: no BP file),
    around the resting ``bp_mmHg`` (systolic, diastolic); ``assessment`` is the
    ``session.yaml`` assessment block (None: left out).
    """

    session_id: str
    scenario: str
    started: str
    duration_s: float
    area: str
    procedure: str
    target_depth: str
    patient: dict
    team: dict
    physiology: Physiology
    doses: tuple = ()
    events: tuple = ()
    planted: tuple = ()
    oxygen_device: str = "nasal_cannula"
    flow_l_min: float = 2.0
    co2_rate_hz: float = 25.0
    co2_units: str = "mmHg"
    co2_time_style: str = "seconds"
    spo2_time_style: str = "seconds"
    co2_offset_s: float = 0.0
    spo2_offset_s: float = 0.0
    barometric_mmHg: float = 760.0
    description: str = ""
    spo2_update_s: int = 1
    paced_bpm: float | None = None
    spo2_startup_s: float = 0.0
    spo2_startup_low_pct: float = 0.0
    outcome: tuple[str, ...] = ()
    bp_interval_s: float | None = None
    bp_mmHg: tuple[float, float] = (128.0, 78.0)
    assessment: dict | None = None

    def planted_of(self, kind: type) -> list:
        """Planted items of one class, in time order."""
        items = [p for p in self.planted if isinstance(p, kind)]
        return sorted(items, key=lambda p: getattr(p, "start_s", getattr(p, "onset_s", 0.0)))

    @property
    def weight_kg(self) -> float:
        return float(self.patient.get("weight_kg") or 70.0)

    @property
    def first_dose_s(self) -> float:
        return min((d[0] for d in self.doses), default=self.duration_s)
