"""COPD clinic trend: per-visit indices of resting capnography and oximetry, and their change
between visits of one patient (plain data; the PDF and CSV live in :mod:`sedreport.render`).

Public API: :func:`build_trend`, :func:`visit_indices`, :func:`load_trend_settings`,
:func:`alpha_angle_deg`. The trend documents recorded data over time; it is not an alarm
and not a diagnosis.
"""

from sedreport.trend.build import (
    COMPARED,
    OxygenMark,
    Trend,
    build_trend,
    oxygen_text,
    stat_of,
    usual_oxygen,
)
from sedreport.trend.settings import TrendSettings, load_trend_settings
from sedreport.trend.shape import AveragedBreath, alpha_angle_deg, averaged_breath
from sedreport.trend.stats import Change, IndexStat
from sedreport.trend.visit import BREATH_INDICES, SpO2Summary, VisitIndices, visit_indices

__all__ = [
    "BREATH_INDICES",
    "COMPARED",
    "AveragedBreath",
    "Change",
    "IndexStat",
    "OxygenMark",
    "SpO2Summary",
    "Trend",
    "TrendSettings",
    "VisitIndices",
    "alpha_angle_deg",
    "averaged_breath",
    "build_trend",
    "load_trend_settings",
    "oxygen_text",
    "stat_of",
    "usual_oxygen",
    "visit_indices",
]
