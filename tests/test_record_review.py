"""Checks from a page-by-page review of the record: what a sedation nurse signs and a sedation
committee reads must be plain, consistent and self-explaining on every page.

Expected numbers are worked out by hand in the comments; layout facts are read back with
pdfplumber (a general-purpose PDF reader).
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

import pytest
import record_fixtures as rf
from record_pdf import norm, page_texts

from sedreport.criteria import load_criteria
from sedreport.render.fmt import amount_text, per_kg_text, severity_text, significant_text
from sedreport.render.glossary import GLOSSARY
from sedreport.render.quality import CRITERION_WORDS
from sedreport.render.record import render_record
from sedreport.render.styles import INTERVENTION_CODES

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted(
    p for p in (REPO / "example_sessions").glob("*/") if (p / "session.yaml").exists()
)
GLOSSARY_HEAD = "Abbreviations on this page:"


@pytest.fixture(scope="module")
def analysis():
    return rf.make_analysis()


@pytest.fixture(scope="module")
def texts(analysis, tmp_path_factory):
    return page_texts(render_record(analysis, tmp_path_factory.mktemp("rev") / "rec.pdf"))


# ----- numbers -------------------------------------------------------------------------------
def test_drug_amounts_share_one_precision():
    """Arithmetic: 127.85 rounds half up to 127.9, shown beside 107.2 and 40 with at most one
    decimal at that size; small amounts keep their figures (0.125 mg, 2.25 mg as written)."""
    assert amount_text(127.85, "mg") == "127.9 mg"
    assert amount_text(107.2, "mg") == "107.2 mg"
    assert amount_text(40.0, "mg") == "40 mg"
    assert amount_text(2.25, "mg") == "2.25 mg"
    assert amount_text(0.125, "mg") == "0.125 mg"
    assert amount_text(1500.0, "mcg") == "1500 mcg"


def test_weight_based_doses_to_three_significant_figures():
    """Arithmetic: 1 mg / 58 kg = 0.017241 -> 0.0172; 128 / 72 = 1.7778 -> 1.78;
    75 mcg/kg/min = 4.5 mg/kg/h shows 4.50 and 0.61 shows 0.610 (three figures, trailing zeros
    kept, so every per-kg figure has the same precision)."""
    assert per_kg_text(1 / 58, "mg/kg") == "0.0172 mg/kg"
    assert per_kg_text(128 / 72, "mg/kg") == "1.78 mg/kg"
    assert per_kg_text(75 * 60 / 1000, "mg/kg/h") == "4.50 mg/kg/h"
    assert per_kg_text(50 / 82, "mg/kg") == "0.610 mg/kg"  # 0.6098
    assert per_kg_text(30 / 82, "mg/kg") == "0.366 mg/kg"  # 0.3659
    assert significant_text(0.0) == "0"
    assert significant_text(1234.5) == "1235"  # whole-number digits are never cut


def test_dose_table_on_the_page(texts):
    """The fixture's figures (record_fixtures.doses, weight 72 kg): 40 / 72 = 0.5556 ->
    0.556 mg/kg; propofol total 128 mg / 72 kg = 1.78 mg/kg; a stopped infusion has no
    per-kg rate."""
    first = norm(texts[0])
    assert "09:17:00 propofol 40 mg iv bolus 40 mg 0.556 mg/kg 40 mg" in first
    assert "propofol 3 80 mg 48 mg 128 mg 1.78 mg/kg" in first + norm(texts[1])
    assert "infusion stop stopped - 128 mg" in first


# ----- plain wording -------------------------------------------------------------------------
def test_findings_and_events_read_in_words(texts):
    """An episode that is not part of an adverse event (World SIVA tool, Mason et al., Br J
    Anaesth 2012) reads "finding"; the first page lists every adverse event with its tier and
    the summary counts events, not episodes."""
    assert severity_text(None) == "finding"
    assert severity_text("sentinel") == "sentinel"
    first = norm(texts[0])
    assert "'finding' means" in first
    assert "Adverse events 2: minimal 1, minor 1" in first
    assert "A1" in first and "A2" in first


def test_summary_says_why_a_value_is_missing(tmp_path):
    """A CO2-only session: no apnoea is 'none detected' rather than '0 s', and SpO2 coverage
    names the missing file rather than '0 %'."""
    texts = page_texts(render_record(rf.make_co2_only(), tmp_path / "co2.pdf"))
    first = norm(texts[0])
    assert "Longest apnoea none detected" in first
    assert "SpO2 coverage no oximetry file" in first
    assert "Longest apnoea 0 s" not in first
    assert "Episodes none" in first  # not "0: none"


def test_baseline_window_in_clock_time(analysis, texts):
    """The baseline window is given as clock times the nurse can find on the chart."""
    a, b = analysis.baseline.window_s
    started = rf.STARTED
    from datetime import timedelta

    expected = [(started + timedelta(seconds=t)).strftime("%H:%M:%S") for t in (a, b)]
    assert f"reference values) from {expected[0]} to {expected[1]}" in norm(texts[0])


def test_dose_marks_carry_keys_not_home_made_abbreviations(texts):
    """Strip labels are the dose table's keys (D1...), never home-made abbreviations such as
    'Prop 20'; the drug and dose as written are in the table the key points to."""
    strips = norm(" ".join(t for t in texts if "Row " in t))
    assert "D1" in strips and "D2" in strips
    assert "Prop 20" not in strips and "Fent 50" not in strips


def test_no_raw_identifiers_before_the_data_quality_section(tmp_path):
    """Words a person reads (header, summary, episodes, doses, strips, close-ups) carry no
    snake_case identifiers such as interventional_radiology or bag_mask_ventilation."""
    a = rf.make_analysis()
    s = replace(a.session, area="interventional_radiology")
    texts = page_texts(render_record(replace(a, session=s), tmp_path / "ir.pdf"))
    reading = norm(" ".join(texts)).split("Data quality")[0]
    assert re.findall(r"\b[a-z0-9]+_[a-z0-9_]+\b", reading) == []
    assert "interventional radiology" in reading


def test_every_criteria_key_has_plain_wording(texts):
    """Each threshold of the default criteria file has readable text beside its key."""
    keys = {f"{i.section}.{i.name}" for i in load_criteria().items}
    assert keys <= set(CRITERION_WORDS)
    everything = norm(" ".join(texts))
    assert "shortest apnoea counted" in everything and "min_duration_s" in everything
    assert "8 /min" in everything  # bradypnoea threshold, unit "1/min" written as "/min"


# ----- page by page --------------------------------------------------------------------------
def _body_and_glossary(page_text: str) -> tuple[str, str]:
    """The page text without its glossary lines and footer, and the glossary text."""
    head, sep, tail = page_text.partition(GLOSSARY_HEAD)
    if not sep:
        return page_text, ""
    return head, tail


def _unexplained(page_text: str) -> list[str]:
    body, glossary = _body_and_glossary(page_text)
    body = body.split("\n", 1)[1] if "\n" in body else body  # running head names no term
    explained = norm(glossary)
    codes_listed = "Intervention codes:" in body
    missing = []
    terms = [t for t in GLOSSARY if t != "E1, E2"] + ["iv"]
    for term in terms:
        if re.search(rf"(?<![A-Za-z0-9]){re.escape(term)}(?![A-Za-z0-9])", body):
            if not re.search(rf"(?<![A-Za-z0-9]){re.escape(term)} ", explained):
                missing.append(term)
    for code in INTERVENTION_CODES.values():
        if re.search(rf"(?<![A-Za-z0-9+]){re.escape(code)}(?![A-Za-z0-9+])", body):
            if not codes_listed and f"{code} " not in explained:
                missing.append(code)
    return missing


def test_every_page_explains_its_abbreviations(texts):
    """Every abbreviation on a page is spelled out on that same page (footer glossary or the
    codes line of the strips), so a page copied on its own still explains itself."""
    for i, text in enumerate(texts, start=1):
        assert _unexplained(text) == [], f"page {i}"


def _heading_not_alone(texts: list[str], heading: str, follower: str) -> None:
    pages = [i for i, t in enumerate(texts) if re.search(rf"^{heading}$", t, re.M)]
    for i in pages:
        after = texts[i].split(heading, 1)[1]
        assert follower in after, f"'{heading}' stands without '{follower}' on page {i + 1}"


def test_headings_stay_with_what_they_head(texts):
    """No orphan headings: the close-up heading shares its page with the first close-up, the
    criteria heading with the table's first rows, the totals heading with its table."""
    _heading_not_alone(texts, "Episode close-ups", " · onset ")
    _heading_not_alone(texts, "Criteria used", "Section Threshold")
    _heading_not_alone(texts, "Totals per drug", "Drug Boluses")


def test_first_page_holds_the_essentials(texts):
    """Page 1 carries the header, summary, episode table and doses: what the nurse signs; the
    totals per drug follow the dose table by page 2 at the latest."""
    first = norm(texts[0])
    for part in ("Summary", "Respiratory episodes", "E1", "E2", "E3", "Doses", "D1 "):
        assert part in first, part
    assert "Totals per drug" in first + norm(texts[1])


@pytest.mark.slow
@pytest.mark.parametrize("folder", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_bundled_examples_page_by_page(folder, tmp_path):
    """Every bundled (invented) example: abbreviations explained on each page, no orphan
    heading, no snake_case identifier before the data-quality section."""
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session

    analysis = analyse_session(load_session(folder))
    texts = page_texts(render_record(analysis, tmp_path / "rec.pdf"))
    for i, text in enumerate(texts, start=1):
        assert _unexplained(text) == [], f"page {i}"
    _heading_not_alone(texts, "Episode close-ups", " · onset ")
    _heading_not_alone(texts, "Criteria used", "Section Threshold")
    reading = norm(" ".join(texts)).split("Data quality")[0]
    assert re.findall(r"\b[a-z0-9]+_[a-z0-9_]+\b", reading) == []


def test_trends_never_on_the_summary_page_and_no_near_empty_page(tmp_path):
    """Page 1 is the summary sheet (trends start later, after the doses, observations and the
    events log); no page is left nearly empty when a long episode table pushes sections on."""
    normal = page_texts(render_record(rf.make_analysis(), tmp_path / "a.pdf"))
    trends = [i for i, t in enumerate(normal) if re.search(r"^Trends$", t, re.M)]
    assert trends and trends[0] > 0 and "Row 1 of 4" in normal[trends[0]]
    many = rf.with_many_episodes(rf.make_analysis(fs_hz=10.0), 12, spacing_s=40.0)
    texts = page_texts(render_record(many, tmp_path / "many.pdf"))
    assert not re.search(r"^Trends$", texts[0], re.M)
    # every page but the last carries at least a third of a page of text lines (a page holds
    # about 80): no heading or short paragraph stranded alone
    lines = [len([x for x in t.splitlines() if x.strip()]) for t in texts[:-1]]
    assert min(lines) >= 25, lines
