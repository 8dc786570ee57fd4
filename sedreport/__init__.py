"""sedreport: sedation records, committee audits and COPD trends from recorded monitoring data.

The tool documents and reviews recorded data. It is not an alarm, not a diagnosis and not a
substitute for watching the patient; local sedation policy and licensed practice decide.

Library API (each name is imported on first use, so the command line starts fast):

- :func:`load_session` — a session folder to a checked :class:`Session` on one clock;
- :func:`load_criteria` — a criteria file (every threshold with its source) to :class:`Criteria`;
- :func:`find_breaths` — a :class:`Capnogram` to a :class:`BreathTable`;
- :func:`compute_trends`, :func:`estimate_baseline` — rate/EtCO2/SpO2 trends, own baseline;
- :func:`detect_episodes` — every episode of a session, linked to doses and interventions;
- :func:`analyse_session` — all of the above as one :class:`Analysis`
  (with a typed :class:`Summary` and :class:`Quality`);
- :func:`render_record` — the PDF sedation record of an Analysis.

Examples
--------
>>> import tempfile
>>> import sedreport
>>> from sedreport.demo import write_scenario
>>> folder = write_scenario(tempfile.mkdtemp(), "upper_gi_apnoea", seed=0)  # invented case
>>> session = sedreport.load_session(folder)
>>> analysis = sedreport.analyse_session(session)
>>> analysis.summary.episodes_by_kind["apnoea"] >= 1
True
"""

from __future__ import annotations

import importlib

from sedreport._version import __version__

#: Public name -> module that defines it.
_API: dict[str, str] = {
    "load_session": "sedreport.ingest.load",
    "load_criteria": "sedreport.criteria",
    "find_breaths": "sedreport.capnography.breaths",
    "compute_trends": "sedreport.capnography.trends",
    "estimate_baseline": "sedreport.capnography.baseline",
    "detect_episodes": "sedreport.episodes.detect",
    "analyse_session": "sedreport.analysis",
    "render_record": "sedreport.render.record",
    "Session": "sedreport.session",
    "Capnogram": "sedreport.session",
    "OximetryTrend": "sedreport.session",
    "Dose": "sedreport.session",
    "Event": "sedreport.session",
    "Criteria": "sedreport.criteria",
    "BreathTable": "sedreport.capnography.model",
    "Trends": "sedreport.capnography.model",
    "Baseline": "sedreport.capnography.model",
    "Episode": "sedreport.episodes.model",
    "Summary": "sedreport.episodes.summary",
    "Quality": "sedreport.episodes.summary",
    "Analysis": "sedreport.analysis",
    "SedreportError": "sedreport.errors",
}

__all__ = ["__version__", *_API]


def __getattr__(name: str) -> object:
    """Import a public name on first use (PEP 562)."""
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'sedreport' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *_API})
