"""Cohort draws for adverse-event grading: brief deep SpO2 dips and session outcomes.

Drawn from a generator of their own (seed, case number), so the rest of a cohort case is the
same as before these were added. Probabilities come from the recipe's optional keys
``brief_deep_dip`` (per case), ``outcome`` (word -> per-case probability) and
``hypoventilation_unattended`` (the stimuli that end a planted hypoventilation are left out, so
it stays a minimal adverse event: subclinical respiratory depression); invented values.
"""

from __future__ import annotations

import numpy as np

from sedreport.demo.case import Spo2Dip

#: Seconds kept clear around every other planted item (invented).
CLEAR_S = 150.0


def _span(p) -> tuple[float, float]:
    start = getattr(p, "start_s", getattr(p, "onset_s", 0.0))
    return start, start + getattr(p, "duration_s", getattr(p, "pause_s", 0.0))


def draw_event_extras(
    rng: np.random.Generator, recipe: dict, planted: list, lo_s: float, hi_s: float
) -> tuple[list, list, tuple[str, ...]]:
    """Brief deep dips (with the jaw thrust that ended them) and outcome words of one case.

    Returns
    -------
    planted, events : list
        Items and ``events.csv`` rows to add.
    outcome : tuple of str
    """
    add, events = [], []
    if rng.random() < float(recipe.get("brief_deep_dip", 0.0)):
        for _ in range(5):
            start = float(rng.uniform(lo_s, hi_s - 60.0))
            clear = all(
                start + 50.0 < a - CLEAR_S or start > b + CLEAR_S for a, b in map(_span, planted)
            )
            if clear:
                # a genuine fall takes several display updates (about 2 %/s here): a one-update
                # drop of 10 points or more from a steady level reads as probe motion (oximetry)
                add.append(Spo2Dip(start, rng.uniform(34.0, 40.0), rng.uniform(66.0, 73.0), 14.0))
                events.append((round(start + 6.0), "airway_repositioning", None, "jaw thrust"))
                break
    outcome = tuple(
        word for word, p in recipe.get("outcome", {}).items() if rng.random() < float(p)
    )
    return add, events, outcome


def unattended(rng: np.random.Generator, recipe: dict, events: list) -> list:
    """The case's ``events.csv`` rows without the stimuli of a hypoventilation, with the
    recipe's ``hypoventilation_unattended`` probability (cohort stimuli only end those)."""
    if rng.random() >= float(recipe.get("hypoventilation_unattended", 0.0)):
        return events
    return [e for e in events if e[1] not in ("verbal_stimulus", "physical_stimulus")]
