"""Invented demo sessions with known truth: synthetic capnography, oximetry, doses and events.

The data made here is invented for demonstration and testing. It describes no real patient and
must never be used to judge a real case.

Public API
----------
SCENARIOS : dict
    Scenario name -> :class:`~sedreport.demo.case.CaseSpec` recipe, in a fixed order.
write_scenario(outdir, name, seed=0) -> Path
    Write ``outdir/<session_id>/`` and ``outdir/<session_id>.truth.json``.
write_examples(outdir, seed=0) -> list of Path
    Every scenario plus a README (this is what ``example_sessions/`` holds).
write_cohort(outdir, n, seed=0, recipe=None) -> list of Path
    ``n`` varied sessions drawn from a YAML recipe.
write_visits(outdir, seed=0) -> list of Path
    Invented COPD clinic visits of one patient (what ``example_visits/`` holds).
load_truth(path) -> dict
"""

from __future__ import annotations

import zlib
from pathlib import Path

import numpy as np

from sedreport.demo.case import CaseSpec
from sedreport.demo.scenarios import SCENARIOS
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth
from sedreport.demo.writer import load_truth, write_case
from sedreport.errors import SedreportError

__all__ = [
    "SCENARIOS",
    "load_truth",
    "simulate_and_write",
    "write_cohort",
    "write_examples",
    "write_scenario",
    "write_visits",
]


def case_rng(seed: int, key: str) -> np.random.Generator:
    """Generator for one case: depends only on ``seed`` and the case's key (stable crc32)."""
    return np.random.default_rng(np.random.SeedSequence([int(seed), zlib.crc32(key.encode())]))


def simulate_and_write(
    outdir: str | Path, spec: CaseSpec, seed: int, compresslevel: int = 6
) -> Path:
    """Simulate one case and write its folder and truth; returns the session folder."""
    sig = simulate_case(spec, case_rng(seed, spec.session_id))
    truth = build_truth(spec, sig, seed)
    return write_case(Path(outdir), spec, sig, truth, compresslevel)


def write_scenario(outdir: str | Path, name: str, seed: int = 0) -> Path:
    """Write one named scenario.

    Parameters
    ----------
    outdir : str or Path
        Created if missing.
    name : str
        A key of :data:`SCENARIOS`.
    seed : int
        Same seed, same bytes.

    Returns
    -------
    Path
        The session folder ``outdir/<session_id>``.
    """
    if name not in SCENARIOS:
        known = ", ".join(SCENARIOS)
        raise SedreportError(f"demo: unknown scenario {name!r} (known: {known})")
    return simulate_and_write(outdir, SCENARIOS[name], seed)


def write_examples(outdir: str | Path, seed: int = 0) -> list[Path]:
    """Write every scenario and a README describing them; returns the session folders."""
    from sedreport.demo.readme import write_readme

    folders = [write_scenario(outdir, name, seed) for name in SCENARIOS]
    write_readme(Path(outdir), seed)
    return folders


def write_cohort(
    outdir: str | Path, n: int, seed: int = 0, recipe: str | Path | None = None, jobs: int = 1
) -> list[Path]:
    """Write ``n`` cohort sessions drawn from a YAML recipe (default: the bundled one)."""
    from sedreport.demo.cohort import write_cohort as _write_cohort

    return _write_cohort(outdir, n, seed=seed, recipe=recipe, jobs=jobs)


def write_visits(outdir: str | Path, seed: int = 0) -> list[Path]:
    """Write the invented COPD clinic visits and their README; returns the visit folders."""
    from sedreport.demo.visits import write_visits as _write_visits

    return _write_visits(outdir, seed=seed)
