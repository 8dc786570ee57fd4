"""Capnography stage: breaths, per-breath metrics, trends and the patient's own baseline.

Public API: :func:`find_breaths`, :func:`breaths_to_frame`, :func:`compute_trends`,
:func:`estimate_baseline`, and the data classes of :mod:`sedreport.capnography.model`.
The stage documents and reviews recorded data; it is not an alarm.
"""

from sedreport.capnography.baseline import estimate_baseline
from sedreport.capnography.breaths import CONTRACT_COLUMNS, breaths_to_frame, find_breaths
from sedreport.capnography.cycles import DEFAULT_SETTINGS, DetectionSettings
from sedreport.capnography.model import Baseline, BreathTable, Trends
from sedreport.capnography.trends import compute_trends

__all__ = [
    "CONTRACT_COLUMNS",
    "DEFAULT_SETTINGS",
    "Baseline",
    "BreathTable",
    "DetectionSettings",
    "Trends",
    "breaths_to_frame",
    "compute_trends",
    "estimate_baseline",
    "find_breaths",
]
