"""Dose keys and dose amounts of the PDF record, read back with pdfplumber.

The fixture (tests/record_fixtures.py, invented data, weight 72 kg) gives six dose lines; the
expected keys and amounts are worked out here by hand.
"""

from __future__ import annotations

import re
from dataclasses import replace

import pdfplumber
import pytest
import record_fixtures as rf
from record_pdf import norm, page_texts

from sedreport.render.record import render_record
from sedreport.session import Dose


@pytest.fixture(scope="module")
def record(tmp_path_factory):
    path = tmp_path_factory.mktemp("keys") / "record.pdf"
    render_record(rf.make_analysis(), path)
    return path


def _strip_keys(path) -> set[str]:
    """Every D-key written on the strip and close-up pages (outside the dose table)."""
    keys: set[str] = set()
    with pdfplumber.open(path) as pdf:
        for page in pdf.pages:
            text = page.extract_text() or ""
            if "Row " not in text and "Episode close-ups" not in text and " · onset " not in text:
                continue
            for w in page.extract_words():
                keys |= set(re.findall(r"\bD\d+\b", w["text"]))
    return keys


def _table_rows(texts) -> dict[str, str]:
    """Dose-table rows by key: 'D2' -> '09:17:00 propofol 40 mg ...'."""
    rows = {}
    for line in "\n".join(texts[:2]).splitlines():
        m = re.match(r"^(D\d+) (\d\d:\d\d:\d\d) (.*)$", line)
        if m:
            rows[m.group(1)] = f"{m.group(2)} {m.group(3)}"
    return rows


def test_keys_in_time_order_match_the_table(record):
    """Six dose lines in time order are D1..D6 (fentanyl first at 240 s, the stop last)."""
    rows = _table_rows(page_texts(record))
    assert sorted(rows, key=lambda k: int(k[1:])) == [f"D{i}" for i in range(1, 7)]
    assert rows["D1"].startswith("09:16:00 fentanyl 50 mcg")
    assert rows["D5"].startswith("09:37:00 propofol 4 mg/kg/h")
    assert rows["D6"].startswith("09:47:00 propofol 0 mg/kg/h")


def test_every_key_on_the_strips_is_a_row_of_the_table(record):
    """The strips label the marks with the table's keys; every dose of the fixture lies inside
    the strips' span, so every key appears there, and no key the table lacks."""
    texts = page_texts(record)
    on_strips = _strip_keys(record)
    assert on_strips == set(_table_rows(texts))


def test_crowded_doses_share_one_label_of_keys(tmp_path):
    """Two boluses 2 s apart cannot carry two labels: the strip shows 'D2, D3' after both,
    so each key still belongs to its own mark."""
    a = rf.make_analysis()
    extra = Dose(302.0, "midazolam", 1, "mg", "iv", "bolus", 1.0, 0.0, 8)
    s = replace(a.session, doses=(*a.session.doses, extra))
    path = tmp_path / "crowded.pdf"
    render_record(replace(a, session=s), path)
    strips = norm(" ".join(t for t in page_texts(path) if "Row " in t))
    assert "D2, D3" in strips  # propofol 300 s, midazolam 302 s
    assert "D3 09:17:02 midazolam 1 mg iv bolus 1 mg" in norm(page_texts(path)[0])


def test_infusion_shows_mg_per_h_and_its_total(record):
    """4 mg/kg/h x 72 kg = 288 mg/h, run 600 s -> 48 mg; the drug's infusion total is 48 mg
    and its total 40 + 20 + 20 + 48 = 128 mg (arithmetic)."""
    text = norm(" ".join(page_texts(record)[:2]))
    assert "infusion rate 288 mg/h" in text
    assert "48 mg over 10 min 00 s" in text
    assert "propofol 3 80 mg 48 mg 128 mg 1.78 mg/kg" in text


def test_reversal_drug_is_a_dose_like_any_other(tmp_path):
    """Naloxone 0.4 mg at 1300 s is the fifth dose line in time order (after 240, 300, 900,
    1150 s): key D5, amount 0.4 mg, 0.4 / 72 = 0.005556 -> 0.00556 mg/kg (three figures)."""
    a = rf.make_analysis()
    reversal = Dose(1300.0, "naloxone", 0.4, "mg", "iv", "bolus", 0.4, 0.0, 9)
    s = replace(a.session, doses=(*a.session.doses, reversal))
    path = tmp_path / "reversal.pdf"
    render_record(replace(a, session=s), path)
    texts = page_texts(path)
    assert "naloxone 0.4 mg iv bolus 0.4 mg 0.00556 mg/kg 0.4 mg" in _table_rows(texts)["D5"]
    assert "D5" in _strip_keys(path)
