"""Respiratory episodes by published criteria, linked to doses, interventions and severity.

Public API: :func:`detect_episodes` (all kinds, linked, numbered), the single detectors
(:func:`detect_apnoea`, :func:`detect_hypoventilation`, :func:`detect_desaturation`,
:func:`detect_rebreathing`, :func:`detect_sloped_plateau`, :func:`detect_signal_loss`), and the
linking pieces (:func:`link_doses`, :func:`link_interventions`, :func:`lean_body_weight_kg`,
:func:`grade_events`). The data model is in :mod:`sedreport.episodes.model`.
"""

from sedreport.episodes.apnoea import detect_apnoea
from sedreport.episodes.desaturation import detect_desaturation
from sedreport.episodes.detect import detect_episodes, detect_events, find_findings
from sedreport.episodes.drugs import lean_body_weight_kg, link_doses
from sedreport.episodes.events import grade_events
from sedreport.episodes.hypoventilation import detect_hypoventilation
from sedreport.episodes.linking import link_interventions
from sedreport.episodes.model import (
    EPISODE_KINDS,
    SEVERITY_TIERS,
    AdverseEvent,
    Episode,
    LinkedDose,
    LinkedIntervention,
)
from sedreport.episodes.signal_loss import detect_signal_loss
from sedreport.episodes.waveform import detect_rebreathing, detect_sloped_plateau

__all__ = [
    "EPISODE_KINDS",
    "SEVERITY_TIERS",
    "AdverseEvent",
    "Episode",
    "LinkedDose",
    "LinkedIntervention",
    "detect_apnoea",
    "detect_desaturation",
    "detect_episodes",
    "detect_events",
    "detect_hypoventilation",
    "detect_sloped_plateau",
    "detect_rebreathing",
    "detect_signal_loss",
    "find_findings",
    "grade_events",
    "lean_body_weight_kg",
    "link_doses",
    "link_interventions",
]
