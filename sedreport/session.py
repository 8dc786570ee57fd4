"""The Session: every input stream of one sedation case on one clock, in one set of units.

All times are seconds on the session clock (zero at ``started``, after each source's
``clock_offset_s``); CO2 is in mmHg, SpO2 in percent, pulse in beats per minute, doses in mg
(boluses) or mg/h (infusion rates). Conversion happens once, at ingest.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np

#: Interventions of the ``events.csv`` vocabulary (DESIGN.md); other events are markers.
INTERVENTION_EVENTS: tuple[str, ...] = (
    "verbal_stimulus",
    "physical_stimulus",
    "airway_repositioning",
    "oxygen_increase",
    "airway_adjunct",
    "bag_mask_ventilation",
    "reversal_agent",
    "suction",
    "procedure_paused",
    "intubation",
)
#: Non-intervention events of the vocabulary.
#: ``oxygen_flow`` (value = L/min, note = device), ``recovery_score`` (value, note = scale),
#: ``discharge`` (note = destination) are markers too.
MARKER_EVENTS: tuple[str, ...] = (
    "procedure_start",
    "procedure_end",
    "depth_score",
    "oxygen_flow",
    "recovery_score",
    "discharge",
    "note",
)
KNOWN_EVENTS: tuple[str, ...] = MARKER_EVENTS + INTERVENTION_EVENTS
#: Words of the optional ``outcome:`` list of ``session.yaml`` (the outcomes of the World SIVA
#: adverse sedation event tool, Mason et al., Br J Anaesth 2012, as reproduced in Trials 2022
#: Table 4; ``aspiration`` stands for its pulmonary aspiration syndrome).
OUTCOMES: tuple[str, ...] = (
    "unplanned_admission",
    "escalation_of_care",
    "aspiration",
    "permanent_neurological_deficit",
    "death",
)


@dataclass(frozen=True)
class Patient:
    """Pseudonymous patient description from ``session.yaml`` (never a name)."""

    ref: str
    age_years: float | None = None
    sex: str = "unknown"
    weight_kg: float | None = None
    height_cm: float | None = None
    asa_class: int | None = None
    conditions: tuple[str, ...] = ()
    #: The patient's own SpO2 target range (low, high) in %, when ``session.yaml`` sets one.
    spo2_target_pct: tuple[float, float] | None = None


@dataclass(frozen=True)
class Team:
    """Team codes (not names)."""

    sedation_provider: str | None = None
    proceduralist: str | None = None


@dataclass(frozen=True)
class Oxygen:
    """Supplemental oxygen at the start of the case."""

    device: str | None = None
    flow_l_min: float | None = None


@dataclass(frozen=True)
class BloodGas:
    """A blood gas taken at the visit (``session.yaml`` ``blood_gas``).

    Attributes
    ----------
    pco2_mmHg : float
        Carbon dioxide partial pressure, mmHg (converted once from kPa when given in kPa).
    sample : str
        ``arterial`` or ``capillary`` (arterialised earlobe capillary sample).
    time_s : float | None
        When it was taken, seconds on the session clock (None when not recorded).
    """

    pco2_mmHg: float
    sample: str
    time_s: float | None = None


@dataclass(frozen=True)
class Capnogram:
    """The raw CO2 waveform on the session clock.

    Attributes
    ----------
    time_s : ndarray of float64
        Sample times, seconds on the session clock, strictly increasing.
    co2_mmHg : ndarray of float64
        CO2 partial pressure in mmHg (converted at ingest).
    sample_rate_hz : float
        Nominal sample rate (median of the sample steps).
    """

    time_s: np.ndarray
    co2_mmHg: np.ndarray
    sample_rate_hz: float


@dataclass(frozen=True)
class OximetryTrend:
    """The pulse-oximeter trend on the session clock.

    ``pulse_bpm`` is all-NaN when the file had no pulse column.
    """

    time_s: np.ndarray
    spo2_pct: np.ndarray
    pulse_bpm: np.ndarray
    sample_rate_hz: float


@dataclass(frozen=True)
class BloodPressure:
    """Non-invasive blood pressure readings (``bp.csv``), mmHg, on the session clock.

    ``mean_mmHg`` is as written, or diastolic + (systolic - diastolic) / 3 where the file gave
    none (the usual one-third pulse-pressure approximation, common practice).
    """

    time_s: np.ndarray
    systolic_mmHg: np.ndarray
    diastolic_mmHg: np.ndarray
    mean_mmHg: np.ndarray


@dataclass(frozen=True)
class Baseline:
    """Pre-sedation observations (``assessment.baseline``); each None when not given."""

    systolic_mmHg: float | None = None
    diastolic_mmHg: float | None = None
    heart_rate_bpm: float | None = None
    spo2_pct: float | None = None
    resp_rate_per_min: float | None = None


@dataclass(frozen=True)
class Assessment:
    """Pre-sedation assessment (``session.yaml`` ``assessment``); each None when not given.

    ``allergies`` is None when not recorded and ``()`` for "none known".
    """

    mallampati: int | None = None
    fasting_solids_h: float | None = None
    fasting_clear_h: float | None = None
    allergies: tuple[str, ...] | None = None
    consent: bool | None = None
    notes: str = ""
    baseline: Baseline | None = None


@dataclass(frozen=True)
class Dose:
    """One line of ``doses.csv``.

    Attributes
    ----------
    time_s : float
        Seconds on the session clock.
    drug : str
        Drug name, lower case, as written (``propofol``, ``fentanyl``...).
    dose : float
        The number as written in the file.
    unit : str
        The unit as written (``mg``, ``mcg``, ``g``, ``mg/h``, ``mcg/kg/min``...).
    route : str
        Route as written (``iv``...), lower case.
    kind : str
        ``"bolus"`` for a mass unit, ``"infusion"`` for a rate unit (the rate holds from
        ``time_s`` until the next infusion line of the same drug; 0 stops it).
    amount_mg : float
        Bolus amount in mg (0.0 for infusion lines).
    rate_mg_per_h : float
        Infusion rate in mg/h, weight-based rates resolved with ``weight_kg`` (0.0 for boluses).
    line : int
        1-based line number in the file (header is line 1).
    """

    time_s: float
    drug: str
    dose: float
    unit: str
    route: str
    kind: str
    amount_mg: float
    rate_mg_per_h: float
    line: int


@dataclass(frozen=True)
class Event:
    """One line of ``events.csv``: a marker or an intervention."""

    time_s: float
    event: str
    value: float | None = None
    note: str = ""
    line: int = 0

    @property
    def is_intervention(self) -> bool:
        return self.event in INTERVENTION_EVENTS


@dataclass(frozen=True)
class SourceInfo:
    """Provenance and shape of one input file.

    Attributes
    ----------
    role : str
        ``co2``, ``spo2``, ``doses``, ``events`` or ``bp``; ``session`` for ``session.yaml`` itself
        (listed first by :func:`sedreport.ingest.load_session`, rows = its lines).
    file : str
        Path relative to the session folder.
    sha256 : str
        Hex SHA-256 of the file's bytes as stored (compressed bytes for ``.gz``).
    reader : str
        ``csv``, ``csv.gz``, ``edf`` or ``wfdb``.
    rows : int
        Data rows (CSV) or samples (EDF/WFDB) read.
    clock_offset_s : float
        Offset added to the file's times.
    units_in : str
        Units as declared (``mmHg``, ``kPa``, ``percent``; ``%`` for SpO2).
    conversion : str
        Plain description of the unit conversion applied, ``"none"`` if none.
    time_style : str
        ``seconds`` or ``iso8601``.
    sample_rate_hz : float | None
        Median sample rate for waveform/trend streams.
    span_s : tuple[float, float] | None
        First and last time on the session clock.
    channel : str | None
        Channel label for EDF/WFDB.
    other_files : tuple of (str, str)
        Further files of the same source with their SHA-256 (the signal files of a WFDB
        record; ``file``/``sha256`` are then its header).
    """

    role: str
    file: str
    sha256: str
    reader: str
    rows: int
    clock_offset_s: float = 0.0
    units_in: str = ""
    conversion: str = "none"
    time_style: str = "seconds"
    sample_rate_hz: float | None = None
    span_s: tuple[float, float] | None = None
    channel: str | None = None
    other_files: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class QualityFinding:
    """A data-quality fact found at ingest (never silently fixed).

    ``kind`` is one of ``gap`` (CO2 step > 1 s, SpO2 step > 10 s), ``no_overlap`` (a stream that
    does not overlap the session's other streams), ``missing_stream`` (a source not given),
    ``naive_time`` (timestamps without offset took ``started``'s offset) or ``dropped`` (rows
    counted and excluded, with the reason).
    """

    kind: str
    source: str
    message: str
    start_s: float | None = None
    end_s: float | None = None


@dataclass(frozen=True)
class Session:
    """One sedation case, ready for analysis. Built by :func:`sedreport.ingest.load_session`.

    Only ``session_id`` and ``started`` are required, so a session can also be put together
    from arrays (``folder`` is None then; a relative ``criteria_file`` needs a folder).

    Examples
    --------
    >>> from datetime import datetime, timezone
    >>> import numpy as np
    >>> t = np.arange(0.0, 60.0, 0.04)
    >>> co2 = Capnogram(t, np.where((t % 4.0) < 2.0, 38.0, 0.5), 25.0)
    >>> s = Session("NB-1", datetime(2026, 3, 14, 9, 0, tzinfo=timezone.utc), co2=co2)
    >>> s.span_s()
    (0.0, 59.96)
    """

    session_id: str
    started: datetime
    folder: Path | None = None
    area: str = ""
    procedure: str = ""
    target_depth: str | None = None
    patient: Patient = field(default_factory=lambda: Patient(ref=""))
    team: Team = field(default_factory=Team)
    oxygen: Oxygen = field(default_factory=Oxygen)
    barometric_mmHg: float = 760.0
    criteria_file: str | None = None
    co2: Capnogram | None = None
    spo2: OximetryTrend | None = None
    doses: tuple[Dose, ...] = ()
    events: tuple[Event, ...] = ()
    sources: tuple[SourceInfo, ...] = ()
    findings: tuple[QualityFinding, ...] = ()
    warnings: tuple[str, ...] = ()
    #: Blood gas taken at the visit (``session.yaml`` ``blood_gas``), if any.
    blood_gas: BloodGas | None = None
    outcome: tuple[str, ...] = ()
    assessment: Assessment | None = None
    bp: BloodPressure | None = None

    # ----- derived views -------------------------------------------------------------------
    @property
    def interventions(self) -> tuple[Event, ...]:
        """Events that are interventions, in time order."""
        return tuple(e for e in self.events if e.is_intervention)

    @property
    def drugs(self) -> tuple[str, ...]:
        """Drug names in order of first use."""
        return tuple(dict.fromkeys(d.drug for d in self.doses))

    def clock_time(self, t_s: float) -> datetime:
        """Wall-clock time (with ``started``'s offset) of a session-clock time in seconds."""
        return self.started + timedelta(seconds=float(t_s))

    def span_s(self) -> tuple[float, float]:
        """Earliest and latest time of any stream, dose or event on the session clock, s."""
        starts, ends = [], []
        for src in self.sources:
            if src.span_s is not None:
                starts.append(src.span_s[0])
                ends.append(src.span_s[1])
        for stream in (self.co2, self.spo2, self.bp):
            if stream is not None and stream.time_s.size:
                starts.append(float(stream.time_s[0]))
                ends.append(float(stream.time_s[-1]))
        times = [d.time_s for d in self.doses] + [e.time_s for e in self.events]
        if times:
            starts.append(min(times))
            ends.append(max(times))
        if not starts:
            return (0.0, 0.0)
        return (min(starts), max(ends))

    def oxygen_course(self) -> tuple[tuple[float | None, float | None, str | None], ...]:
        """Oxygen flow over time: ``(time_s, flow_l_min, device)`` steps in time order.

        The first step is ``session.yaml``'s ``oxygen`` (time None = from the start); each
        ``oxygen_flow`` or ``oxygen_increase`` event starts a new step (its value the new flow,
        an ``oxygen_flow`` note the device; the device carries on when not named).

        Examples
        --------
        >>> from datetime import datetime, timezone
        >>> s = Session("NB-2", datetime(2026, 3, 14, tzinfo=timezone.utc),
        ...             oxygen=Oxygen("nasal_cannula", 2.0),
        ...             events=(Event(300.0, "oxygen_flow", 4.0, "face_mask"),))
        >>> s.oxygen_course()
        ((None, 2.0, 'nasal_cannula'), (300.0, 4.0, 'face_mask'))
        """
        device = self.oxygen.device
        steps: list[tuple[float | None, float | None, str | None]] = []
        if self.oxygen.device is not None or self.oxygen.flow_l_min is not None:
            steps.append((None, self.oxygen.flow_l_min, device))
        for e in self.events:
            if e.event in ("oxygen_flow", "oxygen_increase") and e.value is not None:
                if e.event == "oxygen_flow" and e.note:
                    device = e.note
                steps.append((e.time_s, e.value, device))
        return tuple(steps)

    def cumulative_mg(self, drug: str, t_s: float | np.ndarray) -> float | np.ndarray:
        """Total amount of ``drug`` given up to and including ``t_s``, in mg.

        Boluses count at their time; infusions are integrated (piecewise-constant rate, each
        rate holding until the next infusion line of the same drug).

        Parameters
        ----------
        drug : str
            Drug name as in :attr:`Dose.drug`.
        t_s : float or ndarray
            Session-clock time(s) in seconds.
        """
        t = np.asarray(t_s, dtype=float)
        total = np.zeros_like(t)
        lines = [d for d in self.doses if d.drug == drug]
        for d in lines:
            if d.kind == "bolus":
                total = total + np.where(t >= d.time_s, d.amount_mg, 0.0)
        infusions = [d for d in lines if d.kind == "infusion"]
        for i, d in enumerate(infusions):
            stop_s = infusions[i + 1].time_s if i + 1 < len(infusions) else np.inf
            run_h = np.clip(np.minimum(t, stop_s) - d.time_s, 0.0, None) / 3600.0
            total = total + d.rate_mg_per_h * run_h
        return float(total) if np.ndim(t_s) == 0 else total

    def source(self, role: str) -> SourceInfo | None:
        """The :class:`SourceInfo` of a role, or None when that stream was not given."""
        for src in self.sources:
            if src.role == role:
                return src
        return None
