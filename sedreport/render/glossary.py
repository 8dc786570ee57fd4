"""Abbreviations explained on the page where they appear.

Sections put an invisible :class:`TermMark` next to what they draw; when the page is drawn the
mark adds its terms to the canvas's set for that page, and the page footer
(:mod:`sedreport.render.pages`) prints the explanation of every term seen on that page. A page
copied on its own still explains itself.
"""

from __future__ import annotations

from collections.abc import Iterable

from reportlab.platypus import Flowable

from sedreport.episodes.model import LinkedDose
from sedreport.render import styles
from sedreport.session import Dose, Session

#: Terms and their plain explanation, in the order the footer lists them. Standard units (mg,
#: mmHg, s, min, h, L, Hz) are not listed.
GLOSSARY: dict[str, str] = {
    "CO2": "carbon dioxide",
    "EtCO2": "end-tidal CO2, the peak of each breath",
    "FiCO2": "inspired CO2, the baseline between breaths",
    "SpO2": "oxygen saturation by pulse oximetry",
    "RR": "respiratory rate, breaths per minute",
    "ASA": "American Society of Anesthesiologists physical status class",
    "UTC": "offset of the clock times from coordinated universal time",
    "mcg": "microgram",
    "E1, E2": "episode numbers as in the episode table",
    "SHA-256": "fingerprint of a file's exact content",
}

#: Drug routes as commonly written in dose logs (common practice), spelled out.
ROUTES: dict[str, str] = {
    "iv": "intravenous",
    "im": "intramuscular",
    "in": "intranasal",
    "sc": "subcutaneous",
    "po": "by mouth",
    "pr": "rectal",
    "sl": "sublingual",
    "io": "intraosseous",
}


def code_terms(events: Iterable[str]) -> dict[str, str]:
    """Intervention codes of the strips for these event names, with their meaning."""
    out = {}
    for event in events:
        code = styles.INTERVENTION_CODES.get(event, event[:3].upper())
        out[code] = event.replace("_", " ")
    return out


def route_terms(routes: Iterable[str]) -> dict[str, str]:
    """The known route abbreviations among ``routes`` (as written), with their meaning."""
    return {r: ROUTES[r.lower()] for r in routes if r and r.lower() in ROUTES}


def unit_terms(units: Iterable[str]) -> dict[str, str]:
    """``mcg`` when any of ``units`` is written in micrograms."""
    return {"mcg": GLOSSARY["mcg"]} if any("mcg" in u.lower() for u in units) else {}


def standard_terms(*names: str) -> dict[str, str]:
    """Entries of :data:`GLOSSARY` by name."""
    return {n: GLOSSARY[n] for n in names}


class TermMark(Flowable):
    """A zero-size flowable that records, on the page it lands on, the terms it names."""

    def __init__(self, terms: dict[str, str]) -> None:
        super().__init__()
        self.terms = dict(terms)
        self.width = self.height = 0

    def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
        return 0, 0

    def draw(self) -> None:
        page_terms = getattr(self.canv, "page_terms", None)
        if page_terms is not None:
            page_terms.update(self.terms)


def glossary_line(terms: dict[str, str]) -> str:
    """``Abbreviations on this page: CO2 carbon dioxide; ...``, standard terms first."""
    order = list(GLOSSARY)
    ranked = sorted(terms, key=lambda t: (order.index(t) if t in order else len(order), t))
    return "Abbreviations on this page: " + "; ".join(f"{t} {terms[t]}" for t in ranked) + "."


def span_terms(session: Session, t0_s: float, t1_s: float) -> dict[str, str]:
    """Intervention codes and dose units of the marks drawn between two session times (s)."""
    events = [e.event for e in session.interventions if t0_s <= e.time_s <= t1_s]
    units = [d.unit for d in session.doses if t0_s <= d.time_s <= t1_s]
    return {**code_terms(events), **unit_terms(units)}


def dose_terms(doses: Iterable[Dose | LinkedDose]) -> dict[str, str]:
    """Routes and units of dose lines (or linked doses) as written."""
    doses = list(doses)
    return {**route_terms(d.route for d in doses), **unit_terms(d.unit for d in doses)}
