"""Reference rates file: shipped values with citations, refusals naming the field."""

from __future__ import annotations

import pytest

from sedreport.audit.reference import load_reference_rates
from sedreport.audit.stats import proportion
from sedreport.errors import SedreportError


def test_shipped_reference_rates_carry_citations_and_estimate_type():
    rates = load_reference_rates()
    assert all(r.source and r.estimate and r.population for r in rates)
    assert {r.estimate.split()[0] for r in rates} <= {"crude", "pooled"}
    mallory = next(r for r in rates if r.source.startswith("Mallory"))
    # Mallory et al., Ann Emerg Med 2011: 581 of 25,433, 2.28 %, 95 % CI 2.1-2.5 %; the crude
    # k/n of the file agrees with its rate and interval.
    p = proportion(mallory.k, mallory.n)
    assert round(1000 * p.rate, 1) == mallory.per_1000
    assert (round(100 * p.wilson_low, 1), round(100 * p.wilson_high, 1)) == (2.1, 2.5)
    assert not mallory.from_memory
    assert any(r.from_memory for r in rates)


def test_bad_reference_file_names_the_field(tmp_path):
    bad = tmp_path / "ref.yaml"
    bad.write_text(
        "format: sedreport-reference-rates/1\nrates:\n  - {name: x, kind: apnoea, severity: any,"
        " per_1000: lots, estimate: crude k/n, population: p, source: s, from_memory: true}\n"
    )
    with pytest.raises(SedreportError, match=r"rates\[0\]\.per_1000: not a number"):
        load_reference_rates(bad)
    bad.write_text("format: other\n")
    with pytest.raises(SedreportError, match="format"):
        load_reference_rates(bad)
