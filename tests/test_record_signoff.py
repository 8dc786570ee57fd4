"""Page 1 (team, outcome, oxygen, criteria file and hash), the criteria appendix at the end,
and table cells that wrap on words only. Read back with pdfplumber."""

from __future__ import annotations

import hashlib
from dataclasses import replace
from pathlib import Path

import pdfplumber
import pytest
import record_fixtures as rf
from record_pdf import norm, page_texts

from sedreport.criteria import DEFAULT_CRITERIA_FILE
from sedreport.render.record import render_record
from sedreport.session import Team

EXAMPLES = sorted(
    p for p in (Path(__file__).parent.parent / "example_sessions").iterdir() if p.is_dir()
)


@pytest.fixture(scope="module")
def texts(tmp_path_factory):
    a = rf.make_analysis()
    s = replace(
        a.session,
        team=Team(sedation_provider="RN-21", proceduralist="DR-04"),
        outcome=("unplanned_airway_intervention",),
    )
    path = tmp_path_factory.mktemp("page1") / "record.pdf"
    render_record(replace(a, session=s), path)
    return page_texts(path)


def test_page_one_names_team_outcome_oxygen_and_criteria(texts):
    """The criteria hash is recomputed from the file's bytes (FIPS 180-4 via hashlib)."""
    first = norm(texts[0])
    assert "Sedation provider RN-21" in first and "Proceduralist DR-04" in first
    assert "Reviewer signs at the end of the record" in first
    assert "Outcome unplanned airway intervention" in first
    assert "Oxygen at start" in first
    digest = hashlib.sha256(DEFAULT_CRITERIA_FILE.read_bytes()).hexdigest()
    assert f"SHA-256 {digest[:12]}..." in first
    assert "default" in first and "appendix at the end" in first
    assert "Section Threshold" not in first  # the criteria table itself is not on page 1


def test_criteria_appendix_at_the_end(texts):
    """The appendix follows the sign-off; only provenance (the hashes) comes after it."""
    signoff = next(i for i, t in enumerate(texts) if "Review and sign-off" in t)
    appendix = next(i for i, t in enumerate(texts) if "\nAppendix\n" in f"\n{t}\n")
    table = [i for i, t in enumerate(texts) if "Section Threshold" in t]
    assert signoff <= appendix == table[0] and table[-1] >= len(texts) - 2
    assert "Provenance" in texts[-1]
    quality = next(i for i, t in enumerate(texts) if "Data quality" in t)
    assert quality < signoff


#: Words of the record's tables that a too-narrow column would have broken (tiers, kinds).
LONG_WORDS = (
    "moderate",
    "sentinel",
    "desaturation",
    "hypoventilation",
    "repositioning",
    "ventilation",
    "intervention",
    "infusion",
)


@pytest.mark.slow
@pytest.mark.parametrize("folder", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_no_word_broken_mid_word(folder, tmp_path):
    """In every bundled (invented) example, no table word is cut into a prefix and a rest."""
    import sedreport

    analysis = sedreport.analyse_session(sedreport.load_session(folder))
    path = render_record(analysis, tmp_path / "r.pdf")
    with pdfplumber.open(path) as pdf:
        for page in pdf.pages:
            for w in page.extract_words():
                text = w["text"].strip(",.;:()")
                for long in LONG_WORDS:
                    assert not (len(text) >= 4 and long.startswith(text) and text != long), (
                        f"{folder.name} p{page.page_number}: '{w['text']}'"
                    )


def test_a_cell_too_narrow_for_a_word_keeps_the_word_whole():
    """reportlab splits a word longer than its column unless told not to; a record cell never
    does (the word is kept whole and the column must fit it)."""
    from reportlab.platypus import Paragraph

    from sedreport.render import styles
    from sedreport.render.tables import cell

    def lines(p: Paragraph) -> list[str]:
        p.wrap(20.0, 500.0)
        return [" ".join(words) for _, words in p.blPara.lines]

    assert lines(cell("moderate")) == ["moderate"]
    assert lines(Paragraph("moderate", styles.CELL)) != ["moderate"]  # reportlab's default
