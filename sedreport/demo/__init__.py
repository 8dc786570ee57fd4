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

from sedreport.demo.cohort import write_cohort
from sedreport.demo.examples import case_rng, simulate_and_write, write_examples, write_scenario
from sedreport.demo.scenarios import SCENARIOS
from sedreport.demo.visits import write_visits
from sedreport.demo.writer import load_truth

__all__ = [
    "SCENARIOS",
    "case_rng",
    "load_truth",
    "simulate_and_write",
    "write_cohort",
    "write_examples",
    "write_scenario",
    "write_visits",
]
