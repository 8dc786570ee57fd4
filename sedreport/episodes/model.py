"""Plain data produced by the episode stage."""

from __future__ import annotations

from dataclasses import dataclass

#: Episode kinds of the output contract (DESIGN.md).
EPISODE_KINDS: tuple[str, ...] = (
    "apnoea",
    "hypoventilation",
    "desaturation",
    "rebreathing",
    "obstruction",
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
)

#: Findings about the recording or a CO2 trend rather than an adverse respiratory event: they
#: are never graded (severity ``none``) whatever intervention lies near them.
UNGRADED_KINDS: tuple[str, ...] = (
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
)

#: Severity tiers after the World SIVA adverse sedation event tool (Mason et al.,
#: Br J Anaesth 2012), lowest first. ``none`` = no intervention and no serious descriptor.
SEVERITY_TIERS: tuple[str, ...] = ("none", "minor", "moderate", "sentinel")


@dataclass(frozen=True)
class LinkedDose:
    """A dose given in the look-back window before an episode's onset."""

    drug: str
    dose: float
    unit: str
    route: str
    kind: str
    time_s: float
    seconds_before_onset: float
    dose_mg_per_kg: float | None
    cumulative_mg: float
    cumulative_mg_per_kg: float | None
    cumulative_mg_per_kg_lbw: float | None


@dataclass(frozen=True)
class LinkedIntervention:
    """An intervention during or just after an episode."""

    event: str
    time_s: float
    seconds_after_onset: float
    value: float | None
    note: str
    tier: str


@dataclass(frozen=True)
class Episode:
    """One respiratory episode, in the output contract of DESIGN.md.

    Attributes
    ----------
    id : str
        ``E1``, ``E2``... in order of onset.
    kind : str
        One of :data:`EPISODE_KINDS`.
    subtype : str or None
        Refinement, e.g. ``bradypnoeic`` / ``hypopnoeic`` for hypoventilation.
    start_s, end_s, duration_s : float
        Session-clock seconds (conventions of DESIGN.md per kind).
    start_time : str
        ISO 8601 wall-clock time of ``start_s`` with the session's offset.
    severity : str
        One of :data:`SEVERITY_TIERS`.
    peak_etco2_mmHg, min_spo2_pct, min_rr_per_min : float or None
        Worst values inside the episode (None when not measurable).
    preceding_doses, interventions : tuple
        Linked doses and interventions.
    notes : tuple of str
        Plain sentences (why the severity, what limited the measurement...).
    time_to_first_intervention_s, time_to_resolution_s : float or None
        From onset.
    capnographic_lead_s : float or None
        Seconds by which this apnoea/hypoventilation preceded the first SpO2 < 90 % it led to.
    """

    id: str
    kind: str
    subtype: str | None
    start_s: float
    end_s: float
    duration_s: float
    start_time: str
    severity: str
    peak_etco2_mmHg: float | None
    min_spo2_pct: float | None
    min_rr_per_min: float | None
    preceding_doses: tuple[LinkedDose, ...]
    interventions: tuple[LinkedIntervention, ...]
    notes: tuple[str, ...]
    time_to_first_intervention_s: float | None
    time_to_resolution_s: float | None
    capnographic_lead_s: float | None
