"""Severity tiers after the World SIVA adverse sedation event tool (Mason et al., Br J Anaesth 2012).

The tool grades an adverse event by the interventions it needed (from memory: minor risk =
airway repositioning, tactile stimulation, new or more supplemental oxygen; moderate risk =
bag-valve-mask ventilation, oral/nasal airway, reversal agents; sentinel = tracheal intubation,
chest compressions). It also lists risk descriptors: apnoea not prolonged and desaturation
75-90 % for < 60 s as minor, prolonged apnoea (> 60 s) and SpO2 < 75 % at any time or < 90 % for
> 60 s as sentinel (from memory). Here the tier is the higher of the intervention tier and the
descriptor tier; raising the tier by the descriptor is a choice of this tool, stated in notes.
"""

from __future__ import annotations

from sedreport.criteria import Criteria
from sedreport.episodes.model import SEVERITY_TIERS, UNGRADED_KINDS, LinkedIntervention

_SOURCE = "Mason et al., Br J Anaesth 2012"

#: Tier of each intervention of the events vocabulary. ``verbal_stimulus`` and ``suction`` are
#: placed with the minor-risk interventions (common practice; not named in the tool as
#: recalled); ``procedure_paused`` is not an airway intervention and carries no tier.
INTERVENTION_TIERS: dict[str, str] = {
    "verbal_stimulus": "minor",
    "physical_stimulus": "minor",
    "airway_repositioning": "minor",
    "oxygen_increase": "minor",
    "suction": "minor",
    "procedure_paused": "none",
    "airway_adjunct": "moderate",
    "bag_mask_ventilation": "moderate",
    "reversal_agent": "moderate",
    "intubation": "sentinel",
}


def tier_rank(tier: str) -> int:
    """Position of a tier in :data:`SEVERITY_TIERS` (``none`` = 0)."""
    return SEVERITY_TIERS.index(tier)


def intervention_tier(event: str) -> str:
    """Tier of one intervention event name (``none`` for events without one)."""
    return INTERVENTION_TIERS.get(event, "none")


def descriptor_tier(
    kind: str, duration_s: float, min_spo2_pct: float | None, criteria: Criteria
) -> tuple[str, str]:
    """Tier of the episode's own descriptor and a plain phrase saying why.

    Parameters
    ----------
    kind : str
        Episode kind.
    duration_s : float
        Episode duration, seconds.
    min_spo2_pct : float or None
        Lowest SpO2 inside a desaturation episode.
    criteria : Criteria
        Supplies the prolonged-apnoea and sentinel desaturation limits.
    """
    if kind == "apnoea":
        if duration_s > criteria.apnoea.prolonged_s:
            return "sentinel", f"prolonged apnoea > {criteria.apnoea.prolonged_s:g} s"
        return "minor", "apnoea, not prolonged"
    if kind == "desaturation":
        d = criteria.desaturation
        if min_spo2_pct is not None and min_spo2_pct < d.severe_below_pct:
            return "sentinel", f"SpO2 < {d.severe_below_pct:g} % at some time"
        if duration_s > d.prolonged_s:
            return "sentinel", f"SpO2 < {d.spo2_below_pct:g} % for > {d.prolonged_s:g} s"
        return "minor", (
            f"SpO2 {d.severe_below_pct:g}-{d.spo2_below_pct:g} % for <= {d.prolonged_s:g} s"
        )
    if kind == "obstruction":
        return "minor", "airway obstruction pattern"
    if kind == "signal_loss":
        return "none", "a data-quality episode, not a patient event"
    if kind in UNGRADED_KINDS:
        return "none", "a CO2 finding to check, not graded as an adverse event"
    return "none", f"{kind} without intervention is below the minor tier"


def grade_episode(
    kind: str,
    duration_s: float,
    min_spo2_pct: float | None,
    interventions: tuple[LinkedIntervention, ...],
    criteria: Criteria,
) -> tuple[str, str]:
    """Severity tier of an episode and the sentence explaining it.

    Signal-loss episodes and the other findings of :data:`UNGRADED_KINDS` (low-amplitude
    capnogram, EtCO2 fall, absent CO2 signal) are always ``none``: interventions near them are
    listed but do not grade them.
    """
    desc_tier, why = descriptor_tier(kind, duration_s, min_spo2_pct, criteria)
    if kind in UNGRADED_KINDS:
        return "none", f"Severity none: {why}."
    top = max(interventions, key=lambda i: tier_rank(i.tier), default=None)
    int_tier = top.tier if top is not None else "none"
    tier = max(desc_tier, int_tier, key=tier_rank)
    if top is None or int_tier == "none":
        act = "no graded intervention"
    else:
        what = top.event.replace("_", " ")
        act = f"highest intervention {what} ({int_tier}-risk intervention)"
    return tier, (
        f"Severity {tier} after {_SOURCE}: {act}; episode descriptor: {why} ({desc_tier})."
    )
