"""Plain data produced by the episode stage."""

from __future__ import annotations

from dataclasses import dataclass

#: Episode kinds of the output contract (DESIGN.md).
EPISODE_KINDS: tuple[str, ...] = (
    "apnoea",
    "hypoventilation",
    "desaturation",
    "rebreathing",
    "sloped_plateau",
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
    "hypotension",
    "bradycardia",
)

#: Tiers of an adverse event after the World SIVA adverse sedation event tool (Mason et al.,
#: Br J Anaesth 2012, as reproduced in Trials 2022 Table 4), lowest first. An episode that is
#: not part of an adverse event (a finding) has no tier (None).
SEVERITY_TIERS: tuple[str, ...] = ("minimal", "minor", "moderate", "sentinel")


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
class RunningInfusion:
    """An infusion running at an episode's onset: the rate as written and in mg/h."""

    drug: str
    rate: float
    unit: str
    rate_mg_per_h: float
    since_s: float


@dataclass(frozen=True)
class DrugTotal:
    """A drug's cumulative amount at an episode's onset (boluses plus integrated infusions):
    mg, and mg/kg of total body weight (None when the weight is unknown)."""

    drug: str
    cumulative_mg: float
    cumulative_mg_per_kg: float | None


@dataclass(frozen=True)
class LinkedIntervention:
    """An intervention shortly before, during or just after an episode.

    ``seconds_after_onset`` is negative for one that started before the onset; ``tier`` is the
    World SIVA intervention tier, None for an action the tool does not grade.
    """

    event: str
    time_s: float
    seconds_after_onset: float
    value: float | None
    note: str
    tier: str | None


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
    severity : str or None
        The tier of the adverse event the episode belongs to (:data:`SEVERITY_TIERS`); None
        for a finding that is not part of an adverse event.
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
    event : str or None
        Id of the adverse event (``A1``...) the episode belongs to, None for a finding.
    infusions_at_onset : tuple of RunningInfusion
        Infusions running at onset.
    doses_during : tuple of LinkedDose
        Doses given after onset up to the episode's end (``seconds_before_onset`` negative).
    cumulative_at_onset : tuple of DrugTotal
        Every drug given before onset, with its cumulative mg and mg/kg at onset.
    """

    id: str
    kind: str
    subtype: str | None
    start_s: float
    end_s: float
    duration_s: float
    start_time: str
    severity: str | None
    peak_etco2_mmHg: float | None
    min_spo2_pct: float | None
    min_rr_per_min: float | None
    preceding_doses: tuple[LinkedDose, ...]
    interventions: tuple[LinkedIntervention, ...]
    notes: tuple[str, ...]
    time_to_first_intervention_s: float | None
    time_to_resolution_s: float | None
    capnographic_lead_s: float | None
    event: str | None = None
    infusions_at_onset: tuple[RunningInfusion, ...] = ()
    doses_during: tuple[LinkedDose, ...] = ()
    cumulative_at_onset: tuple[DrugTotal, ...] = ()


@dataclass(frozen=True)
class Descriptor:
    """One descriptor of an adverse event: plain text, its tier, the episode it came from."""

    text: str
    tier: str | None
    episode: str | None


@dataclass(frozen=True)
class Outcome:
    """One outcome word of the session (``session.yaml`` ``outcome:``) with its tier."""

    text: str
    tier: str


@dataclass(frozen=True)
class AdverseEvent:
    """Linked episodes graded once after the World SIVA tool (Mason et al., Br J Anaesth 2012).

    Attributes
    ----------
    id : str
        ``A1``, ``A2``... in order of onset.
    episodes : tuple of str
        Ids of the linked episodes (empty for an outcome with no episode).
    start_s, end_s : float
        First onset and last end of the linked episodes, session-clock seconds.
    start_time : str
        ISO 8601 wall-clock time of ``start_s``.
    severity : str
        Highest of the descriptor, intervention and outcome tiers (:data:`SEVERITY_TIERS`).
    descriptors : tuple of Descriptor
    interventions : tuple of LinkedIntervention
        Each intervention once (``seconds_after_onset`` from the event's onset).
    outcome : tuple of Outcome
    capnographic_lead_s : float or None
        Seconds from the event's first apnoea/hypoventilation onset to its first SpO2 below
        the desaturation threshold.
    notes : tuple of str
        Why the tier (plain sentences).
    """

    id: str
    episodes: tuple[str, ...]
    start_s: float
    end_s: float
    start_time: str
    severity: str
    descriptors: tuple[Descriptor, ...]
    interventions: tuple[LinkedIntervention, ...]
    outcome: tuple[Outcome, ...]
    capnographic_lead_s: float | None
    notes: tuple[str, ...]
