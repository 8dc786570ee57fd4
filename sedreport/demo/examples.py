"""Named demo scenarios and the bundled examples: simulate a case, write its folder and truth.

The data made here is invented for demonstration and testing; it describes no real patient.
"""

from __future__ import annotations

import zlib
from pathlib import Path

import numpy as np

from sedreport.demo.case import CaseSpec
from sedreport.demo.readme import write_readme
from sedreport.demo.scenarios import SCENARIOS
from sedreport.demo.simulate import simulate_case
from sedreport.demo.truth import build_truth
from sedreport.demo.writer import write_case
from sedreport.errors import SedreportError


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
    folders = [write_scenario(outdir, name, seed) for name in SCENARIOS]
    write_readme(Path(outdir), seed)
    return folders
