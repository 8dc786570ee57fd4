"""Session records: the episodes contract of DESIGN.md as a plain dict, plus audit metadata.

A record is ``{"session_id", "started", "criteria", "episodes", "events", "summary", "meta"}``;
``episodes`` and ``events`` have the fields of the contract (``events`` is empty until adverse
events are graded), ``meta`` the stratifying fields (area, procedure, ASA class, target depth,
drug regimen, provider, month) and the session's path. The record is built here from the
Analysis's dataclasses, so the audit does not depend on ``sedreport.render``.
"""

from __future__ import annotations

import math
from dataclasses import asdict, is_dataclass
from typing import TYPE_CHECKING

import numpy as np

from sedreport._version import __version__

if TYPE_CHECKING:
    from sedreport.analysis import Analysis
    from sedreport.session import Session


def plain(x: object) -> object:
    """JSON-ready copy: dataclasses and tuples to dicts/lists, NaN/inf to None.

    Examples
    --------
    >>> plain({"a": (1.0, float("nan"))})
    {'a': [1.0, None]}
    """
    if is_dataclass(x) and not isinstance(x, type):
        x = asdict(x)
    if isinstance(x, dict):
        return {str(k): plain(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [plain(v) for v in x]
    if isinstance(x, np.generic):
        x = x.item()
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def regimen_of(session: Session) -> str:
    """The drug regimen: the agents given, sorted and joined with ``+`` (``none`` if none).

    Examples
    --------
    >>> from datetime import datetime, timezone
    >>> from sedreport.session import Dose, Session
    >>> d = [Dose(0, "Propofol", 40, "mg", "iv", "bolus", 40, 0, 2),
    ...      Dose(60, "fentanyl", 50, "mcg", "iv", "bolus", 0.05, 0, 3)]
    >>> regimen_of(Session("S", datetime(2026, 1, 1, tzinfo=timezone.utc), doses=tuple(d)))
    'fentanyl+propofol'
    """
    agents = sorted({d.drug.strip().lower() for d in session.doses})
    return "+".join(agents) if agents else "none"


def session_meta(session: Session, path: str) -> dict:
    """The stratifying fields of a session (codes only; never the patient's reference)."""
    return {
        "path": path,
        "started": session.started.isoformat(),
        "month": session.started.strftime("%Y-%m"),
        "area": session.area or None,
        "procedure": session.procedure or None,
        "asa_class": session.patient.asa_class,
        "target_depth": session.target_depth,
        "regimen": regimen_of(session),
        "provider": session.team.sedation_provider,
        "sedreport_version": __version__,
    }


def record_of(analysis: Analysis, path: str) -> dict:
    """The record of one analysed session (see the module docstring).

    ``events`` are read with ``getattr(analysis, "events", ())`` so that graded adverse events
    are counted as soon as the Analysis carries them.
    """
    s = analysis.session
    crit = analysis.criteria
    return plain(
        {
            "session_id": s.session_id,
            "started": s.started.isoformat(),
            "criteria": {"name": crit.name, "sha256": crit.sha256},
            "episodes": list(analysis.episodes),
            "events": list(getattr(analysis, "events", ())),
            "summary": analysis.summary.to_dict(),
            "meta": session_meta(s, path),
        }
    )
