"""A small invented cohort for end-to-end audit tests (short sessions, many planted events)."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

import yaml

from sedreport.demo import write_cohort
from sedreport.demo.cohort import load_recipe


def short_recipe(folder: Path) -> Path:
    """The bundled recipe with 14-16 minute cases and frequent planted events."""
    recipe = load_recipe()
    recipe["duration_min"] = [14, 16]
    for kind, p in (("apnoea", 0.5), ("hypoventilation", 0.3), ("co2_gap", 0.2)):
        recipe["events"][kind] = {k: p for k in recipe["events"][kind]}
    path = folder / "recipe.yaml"
    path.write_text(yaml.safe_dump(recipe), encoding="utf-8")
    return path


def make_cohort(folder: Path, n: int, seed: int = 3) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    return write_cohort(folder / "cohort", n, seed=seed, recipe=short_recipe(folder), jobs=1)


def truth_counts(sessions: list[Path]) -> tuple[Counter, Counter]:
    """Planted episodes per kind: (sessions with >= 1, episodes) from the truth files."""
    with_kind, total = Counter(), Counter()
    for s in sessions:
        truth = json.loads(s.with_name(f"{s.name}.truth.json").read_text())
        kinds = [e["kind"] for e in truth["episodes"]]
        total.update(kinds)
        with_kind.update(set(kinds))
    return with_kind, total
