"""Tiers of the World SIVA adverse sedation event tool (Mason et al., Br J Anaesth 2012).

We have no copy of the paper; its reporting form is reproduced in trial protocols (Trials 2022,
doi 10.1186/s13063-022-06935-0, Table 4; Trials 2023, doi 10.1186/s13063-023-07208-0,
Table 2). Every tier below names where it came from: "Mason 2012, as reproduced in Trials
2022 Table 4" (the table read column by column), "from memory", or "choice of this tool"
where the session's vocabulary has a word the table does not.

The tool rates descriptors (what happened), interventions (what was done) and outcomes; an
adverse event takes the highest of the three (:func:`sedreport.episodes.events.grade_event`).
Tiers: ``minimal``, ``minor``, ``moderate``, ``sentinel`` (the table's "minimal risk",
"minor risk", "moderate risk", "sentinel").
"""

from __future__ import annotations

from sedreport.criteria import Criteria
from sedreport.episodes.model import SEVERITY_TIERS

#: How the table is cited beside each value.
SOURCE = "Mason 2012, as reproduced in Trials 2022 Table 4"

#: Tier of each intervention of the ``events.csv`` vocabulary, with where it came from.
#: None = an action the tool does not grade (listed with the event, raises no tier).
INTERVENTION_TIERS: dict[str, tuple[str | None, str]] = {
    # Not in the table; placed beside "tactile stimulation" (minor): choice of this tool.
    "verbal_stimulus": ("minor", "choice of this tool (not in the table; as tactile stimulation)"),
    "physical_stimulus": ("minor", f"{SOURCE}: tactile stimulation"),
    "airway_repositioning": ("minor", f"{SOURCE}: airway repositioning"),
    "oxygen_increase": ("minor", f"{SOURCE}: supplemental oxygen, new or increased"),
    # Not in the table; beside the antisialogogue (minor) for secretions: choice of this tool.
    "suction": ("minor", "choice of this tool (not in the table; as the antisialogogue)"),
    "procedure_paused": (None, "choice of this tool (not in the table; not graded)"),
    "airway_adjunct": ("moderate", f"{SOURCE}: oral/nasal airway, laryngeal mask airway"),
    "bag_mask_ventilation": ("moderate", f"{SOURCE}: bag-valve-mask-assisted ventilation"),
    "reversal_agent": ("moderate", f"{SOURCE}: administration of reversal agents"),
    "intubation": ("sentinel", f"{SOURCE}: tracheal intubation"),
}

#: Tier of each outcome word of ``session.yaml`` (no adverse outcome = minimal).
OUTCOME_TIERS: dict[str, tuple[str, str]] = {
    "unplanned_admission": ("moderate", f"{SOURCE}: unplanned hospitalisation"),
    "escalation_of_care": ("moderate", f"{SOURCE}: escalation of care"),
    "aspiration": ("sentinel", f"{SOURCE}: pulmonary aspiration syndrome"),
    "permanent_neurological_deficit": ("sentinel", f"{SOURCE}: permanent neurological deficit"),
    "death": ("sentinel", f"{SOURCE}: death"),
}


#: Tier of the cardiovascular descriptors, with where it came from (the table's footnote on
#: them, "a change > 25 % from baseline", is from memory; its limits are in the criteria file).
CARDIOVASCULAR_DESCRIPTORS: dict[str, tuple[str, str]] = {
    "hypotension": ("minor", f"{SOURCE}: hypotension (minor risk descriptor)"),
    "bradycardia": ("minor", f"{SOURCE}: bradycardia (minor risk descriptor)"),
}


def _cardiovascular_text(kind: str, criteria: Criteria) -> str:
    c = criteria.cardiovascular
    if kind == "hypotension":
        return (
            f"hypotension: systolic < {c.systolic_below_mmHg:g} mmHg or "
            f"> {c.systolic_fall_pct:g} % below baseline"
        )
    return (
        f"bradycardia: pulse < {c.pulse_below_bpm:g}/min or > {c.pulse_fall_pct:g} % below "
        f"baseline for >= {c.bradycardia_min_duration_s:g} s"
    )


def tier_rank(tier: str | None) -> int:
    """Position of a tier in :data:`SEVERITY_TIERS`; None (no tier) ranks below ``minimal``.

    Examples
    --------
    >>> tier_rank("minimal"), tier_rank("sentinel"), tier_rank(None)
    (0, 3, -1)
    """
    return -1 if tier is None else SEVERITY_TIERS.index(tier)


def highest_tier(tiers) -> str | None:
    """The highest of some tiers (None entries ignored; None when none is given)."""
    return max(tiers, key=tier_rank, default=None)


def intervention_tier(event: str) -> str | None:
    """World SIVA tier of one intervention event name (None: not graded by the tool).

    Examples
    --------
    >>> intervention_tier("bag_mask_ventilation"), intervention_tier("procedure_paused")
    ('moderate', None)
    """
    return INTERVENTION_TIERS.get(event, (None, ""))[0]


def outcome_tier(word: str) -> str:
    """World SIVA tier of an outcome word of ``session.yaml``."""
    return OUTCOME_TIERS[word][0]


def descriptor_tier(
    kind: str, duration_s: float, min_spo2_pct: float | None, criteria: Criteria
) -> tuple[str | None, str]:
    """Descriptor tier of one episode and its text; None for a finding with no descriptor.

    Parameters
    ----------
    kind : str
        Episode kind. Kinds this function does not know are findings (None).
    duration_s : float
        Episode duration, seconds. "> 60 s" is strictly greater, as published.
    min_spo2_pct : float or None
        Lowest artefact-cleaned SpO2 inside a desaturation episode.
    criteria : Criteria
        Supplies the prolonged-apnoea and the desaturation limits.

    Notes
    -----
    After Mason 2012, as reproduced in Trials 2022 Table 4: apnoea not prolonged = minor,
    prolonged (> 60 s) = sentinel; desaturation 75-90 % for < 60 s = minor (the table says
    minor, not minimal), < 75 % at any time or < 90 % for > 60 s = sentinel; subclinical
    respiratory depression = minimal (capnographic hypoventilation; the footnote
    "capnographic changes without clinical signs" is from memory); hypotension and
    bradycardia = minor (:data:`CARDIOVASCULAR_DESCRIPTORS`).

    Examples
    --------
    >>> from sedreport.criteria import load_criteria
    >>> descriptor_tier("desaturation", 18.0, 72.0, load_criteria())
    ('sentinel', 'oxygen desaturation, severe: SpO2 < 75 % at any time (lowest 72 %)')
    """
    if kind == "apnoea":
        lim = criteria.apnoea.prolonged_s
        if duration_s > lim:
            return "sentinel", f"apnoea, prolonged: no breath for > {lim:g} s"
        return "minor", "apnoea, not prolonged"
    if kind == "desaturation":
        d = criteria.desaturation
        if min_spo2_pct is not None and min_spo2_pct < d.severe_below_pct:
            return "sentinel", (
                f"oxygen desaturation, severe: SpO2 < {d.severe_below_pct:g} % at any time "
                f"(lowest {min_spo2_pct:g} %)"
            )
        if duration_s > d.prolonged_s:
            return "sentinel", (
                f"oxygen desaturation, prolonged: SpO2 < {d.spo2_below_pct:g} % for "
                f"> {d.prolonged_s:g} s"
            )
        return "minor", (
            f"oxygen desaturation {d.severe_below_pct:g}-{d.spo2_below_pct:g} % for "
            f"<= {d.prolonged_s:g} s"
        )
    if kind == "hypoventilation":
        return "minimal", "subclinical respiratory depression (capnographic hypoventilation)"
    if kind in CARDIOVASCULAR_DESCRIPTORS:
        return CARDIOVASCULAR_DESCRIPTORS[kind][0], _cardiovascular_text(kind, criteria)
    return None, f"{kind.replace('_', ' ')}: a finding, not a descriptor of the tool"
