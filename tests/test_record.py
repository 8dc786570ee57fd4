"""The PDF sedation record, read back with pdfplumber: header, episodes, doses, cautions, hashes.

Expected values come from the planted truth of tests/record_fixtures.py (invented data) and are
recomputed here by hand, not with the renderer's own formatting code.
"""

from __future__ import annotations

import hashlib
from datetime import timedelta

import pytest
import record_fixtures as rf
import yaml
from record_pdf import norm, page_texts, table_cells

from sedreport import __version__
from sedreport.criteria import DEFAULT_CRITERIA_FILE
from sedreport.render.cautions import CAUTIONS_FILE
from sedreport.render.record import render_record


@pytest.fixture(scope="module")
def analysis():
    return rf.make_analysis()


@pytest.fixture(scope="module")
def record(analysis, tmp_path_factory):
    path = tmp_path_factory.mktemp("rec") / "record.pdf"
    render_record(analysis, path)
    return path


@pytest.fixture(scope="module")
def texts(record):
    return page_texts(record)


def clock(t_s: float) -> str:
    return (rf.STARTED + timedelta(seconds=t_s)).strftime("%H:%M:%S")


def test_header_fields(texts):
    first = norm(texts[0])
    for expected in (
        "Sedation record - FIX-0007",
        "2026-03-14",
        "09:12:00 (UTC+0100)",
        "endoscopy",
        "colonoscopy",
        "moderate",
        "P-0042",
        "67 years",
        "female",
        "72.0 kg",
        "160 cm",
        "ASA 3",
        "copd",
        "RN-12",
        "DR-04",
        "nasal cannula, 2 L/min",
    ):
        assert expected in first, expected


def test_summary_and_attention(analysis, texts):
    first = norm(texts[0])
    # sedation 240 s to 2300 s = 2060 s = 34 min 20 s (arithmetic)
    assert "34 min 20 s (09:16 to 09:50)" in first
    assert "Lowest SpO2 86 %" in first
    assert "Highest EtCO2 55 mmHg" in first
    for sentence in analysis.summary.attention:
        assert norm(sentence) in first


def test_dose_rows_and_totals(texts):
    """Totals by hand (common practice: boluses summed, infusion = rate x time).

    propofol: 40 + 20 + 20 mg boluses + 4 mg/kg/h x 72 kg = 288 mg/h for 600 s = 48 mg,
    total 128 mg, 128 / 72 = 1.778 mg/kg; fentanyl 50 mcg, 50 / 72 = 0.694 mcg/kg. Per-kg
    figures to three significant figures (common practice for weight-based doses); a stopped
    infusion has no per-kg rate.
    """
    first = norm(texts[0])
    assert "D2 09:17:00 propofol 40 mg iv bolus 40 mg 0.556 mg/kg 40 mg" in first  # 40/72
    assert "D1 09:16:00 fentanyl 50 mcg iv bolus 50 mcg 0.694 mcg/kg 50 mcg" in first
    # 4 mg/kg/h x 72 kg = 288 mg/h; written rate kept beside it, per kg 4.00 (three figures)
    assert "D5 09:37:00 propofol 4 mg/kg/h iv infusion rate 288 mg/h 4.00 mg/kg/h 80 mg" in first
    assert "48 mg over 10 min 00 s" in first  # 288 mg/h x 600 s / 3600 s/h = 48 mg
    assert "D6 09:47:00 propofol 0 mg/kg/h iv infusion stop stopped - 128 mg" in first
    assert "propofol 3 80 mg 48 mg 128 mg 1.78 mg/kg" in first + norm(texts[1])
    assert "fentanyl 1 50 mcg 0 mcg 50 mcg 0.694 mcg/kg" in first + norm(texts[1])
    assert "up to 09:50:20 (end of sedration)".replace("sedration", "sedation") in first + norm(
        texts[1]
    )


def _episode_page(texts) -> int:
    return next(i for i, t in enumerate(texts) if "Respiratory episodes" in t)


def test_every_episode_row_with_its_numbers(analysis, record, texts):
    e1, e2, e3 = analysis.episodes
    cells = table_cells(
        record,
        _episode_page(texts),
        [
            "ID",
            "Kind",
            "Start",
            "Duration",
            "Worst",
            "Drugs",
            "Interventions",
            "Resolved",
            "CO2",
            "Event",
        ],
        ["E1", "E2", "E3"],
        "'Event':",
    )
    onset1 = e1.start_s
    assert cells["E1"] == [
        "E1",
        "apnoea",
        clock(onset1),
        f"{round(e1.duration_s)} s",
        # an apnoea row says how long there was no breath, not a rate
        f"no breath for {round(e1.duration_s)} s SpO2 min 88 %",
        f"D4 propofol 20 mg, {(onset1 - 1150) / 60:.1f} min before",
        f"verbal stimulus at +{round(1215 - onset1)} s airway repositioning at "
        f"+{round(1222 - onset1)} s",
        f"{round(e1.duration_s)} s",
        f"{round(1253 - onset1)} s",
        "A1 minor",  # E1 and E2 are one adverse event, graded once
    ]
    # E2: the oxygen increase at 1240 s came 13 s before the desaturation onset at 1253 s
    assert cells["E2"] == [
        "E2",
        "desaturation",
        clock(1253),
        "41 s",
        "SpO2 min 86 %",
        "no bolus in look-back",
        "oxygen increase (4) 13 s before onset",
        "41 s",
        "-",
        "A1 minor",
    ]
    # E3: 300 s = 5 min 00 s; the 20 mg bolus at 1150 s was 650 s = 10.8 min before 1800 s (D4: the fourth dose line)
    assert cells["E3"] == [
        "E3",
        "hypoventilation (bradypnoeic)",
        clock(1800),
        "5 min 00 s",
        "EtCO2 max 55 mmHg RR min 6.0 /min",
        "D4 propofol 20 mg, 10.8 min before",
        "none",
        "5 min 00 s",
        "-",
        # subclinical respiratory depression: minimal (Mason 2012, as reproduced in Trials 2022
        # Table 4)
        "A2 minimal",
    ]


def test_episode_bands_and_closeups_are_labelled(texts):
    trends = norm(" ".join(t for t in texts if "Row " in t))
    assert "10 min per row, 4 row(s)" in trends
    for i, (a, b) in enumerate(
        [
            ("09:12:00", "09:22:00"),
            ("09:22:00", "09:32:00"),
            ("09:32:00", "09:42:00"),
            ("09:42:00", "09:52:00"),
        ]
    ):
        assert f"Row {i + 1} of 4: {a} to {b}" in trends
    assert "E1" in trends and "E2" in trends and "E3" in trends
    all_text = norm(" ".join(texts))
    assert "E1 · apnoea · onset" in all_text
    # E3 lasts 300 s > 240 s: two panels, the cut is stated
    assert "episode longer than 240 s" in all_text and "the middle 120 s" in all_text


def test_cautions_text(texts):
    all_text = norm(" ".join(texts))
    data = yaml.safe_load(CAUTIONS_FILE.read_text(encoding="utf-8"))
    for entry in data["cautions"]:
        assert f"{entry['title']}. {norm(entry['text'])}" in all_text
    assert "not an alarm" in all_text and "Local sedation policy and licensed practice" in all_text
    assert "Limits of this record." in all_text


def test_hashes_on_last_page(analysis, texts):
    last = norm(texts[-1])
    for src in analysis.session.sources:
        assert f"{src.role} {src.file} {src.sha256}" in last
    # SHA-256 of the criteria file recomputed from its bytes (FIPS 180-4 via hashlib)
    assert hashlib.sha256(DEFAULT_CRITERIA_FILE.read_bytes()).hexdigest() in last


def _signoff_page(texts) -> int:
    return next(i for i, t in enumerate(texts) if "Review and sign-off" in t)


def test_two_signature_blocks(texts):
    page = norm(texts[_signoff_page(texts)])
    assert "Sedation provider (name)" in page and "Reviewing clinician (name)" in page
    assert page.count("Signature") == 2 and page.count("Date and time") == 2


def test_signoff_is_not_prefilled(record, texts):
    import pdfplumber

    with pdfplumber.open(record) as pdf:
        page = pdf.pages[_signoff_page(texts)]
        words = page.extract_words()
        labels = [w for w in words if w["text"] in ("Role", "Signature", "time", "(name)")]
        assert len(labels) == 7  # two names, one role, two signatures, two dates
        for lab in labels:
            same_line = [
                w for w in words if abs(w["top"] - lab["top"]) < 3 and w["x0"] > lab["x1"] + 2
            ]
            assert same_line == []


def test_footer_on_every_page(texts):
    n = len(texts)
    for i, text in enumerate(texts, start=1):
        assert f"FIX-0007 · page {i} of {n} · sedreport {__version__}" in text


def test_data_quality_section(texts):
    all_text = norm(" ".join(texts))
    assert "CO2 step of 3.2 s (sample line 41200)" in all_text
    assert "Warning: spo2.csv: 2 rows with SpO2 above 100 were dropped" in all_text
    assert "-4.0 s" in all_text  # the SpO2 file's clock offset
    assert "All four streams (CO2, SpO2, doses, events) were given." in all_text
    assert "Criteria used" in all_text and "Deitch et al., Ann Emerg Med 2010" in all_text


def test_metadata_has_no_more_than_the_header(record):
    import pdfplumber

    with pdfplumber.open(record) as pdf:
        meta = pdf.metadata
    assert meta["Title"] == "Sedation record FIX-0007"
    for value in meta.values():
        assert "P-0042" not in str(value)


def test_paper_sizes(analysis, tmp_path):
    """ISO 216 A4 is 210 x 297 mm = 595.28 x 841.89 pt; US Letter 8.5 x 11 in = 612 x 792 pt."""
    import pdfplumber

    for paper, size in (("a4", (595.28, 841.89)), ("letter", (612.0, 792.0))):
        out = render_record(analysis, tmp_path / f"{paper}.pdf", paper=paper)
        with pdfplumber.open(out) as pdf:
            for page in pdf.pages:
                assert page.width == pytest.approx(size[0], abs=0.01)
                assert page.height == pytest.approx(size[1], abs=0.01)


def test_co2_only_session_says_what_is_missing(tmp_path):
    out = render_record(rf.make_co2_only(), tmp_path / "co2only.pdf")
    texts = page_texts(out)
    all_text = norm(" ".join(texts))
    assert "spo2: no oximetry" in all_text
    assert "doses: no dose log" in all_text
    assert "events: no event log" in all_text
    assert "No dose log was given for this session" in all_text
    assert "no oximetry file in this session" in all_text
    assert "No episode met the criteria" in all_text
    assert f"page {len(texts)} of {len(texts)}" in texts[-1]
    assert rf.make_co2_only().session.sources[0].sha256 in norm(texts[-1])


def test_many_episodes_cap_closeups(tmp_path, monkeypatch):
    """Close-ups are capped (MAX_CLOSEUPS, lowered here to keep the test fast); the most
    severe and longest are kept and the others are named."""
    from sedreport.render import closeups

    monkeypatch.setattr(closeups, "MAX_CLOSEUPS", 4)
    many = rf.with_many_episodes(rf.make_analysis(fs_hz=10.0), 6)
    texts = page_texts(render_record(many, tmp_path / "many.pdf"))
    all_text = norm(" ".join(texts))
    # 9 episodes, at most 4 close-ups: E1, E2 (minor) and E3 (300 s) kept, then the earliest
    # of the equally short signal-loss episodes (E4); E5..E9 are named
    assert "5 of 9 episodes have no close-up (at most 4" in all_text
    assert "E5, E6, E7, E8, E9." in all_text
    assert all_text.count("· signal loss · onset") == 1


def test_display_unit_follows_the_written_boluses():
    """Common practice: opioids charted in mcg, hypnotics in mg; an infusion-only drug is
    shown in mg once its amount reaches 1 mg."""
    from sedreport.render.tables import display_unit
    from sedreport.session import Dose

    fent = [Dose(0, "fentanyl", 50, "mcg", "iv", "bolus", 0.05, 0, 2)]
    prop = [
        Dose(0, "propofol", 40, "mg", "iv", "bolus", 40, 0, 2),
        Dose(60, "propofol", 75, "mcg/kg/min", "iv", "infusion", 0, 324, 3),
    ]
    remi = [  # 0.1 mcg/kg/min x 70 kg = 0.42 mg/h for 30 min = 0.21 mg
        Dose(0, "remifentanil", 0.1, "mcg/kg/min", "iv", "infusion", 0, 0.42, 2),
        Dose(1800, "remifentanil", 0, "mcg/kg/min", "iv", "infusion", 0, 0, 3),
    ]
    assert display_unit(fent) == ("mcg", 1000.0)
    assert display_unit(prop) == ("mg", 1.0)
    assert display_unit(remi) == ("mcg", 1000.0)


def test_artefact_nans_render_without_warnings(tmp_path):
    """SpO2 artefact samples are NaN in the cleaned trend (Trends docstring): the strips and
    close-ups break the line there and no numpy warning escapes (filterwarnings = error)."""
    from dataclasses import replace

    import numpy as np

    a = rf.make_analysis(fs_hz=10.0)
    spo2 = a.trends.spo2_pct.copy()
    spo2[1150:1400] = np.nan  # covers the E1/E2 close-up windows entirely
    trends = replace(a.trends, spo2_pct=spo2, spo2_artefact=np.isnan(spo2))
    out = render_record(replace(a, trends=trends), tmp_path / "nan.pdf")
    all_text = norm(" ".join(page_texts(out)))
    assert "E2 · desaturation · onset" in all_text


def test_crowded_band_labels_are_named_not_dropped(tmp_path):
    """Six bands 3 s apart (about 2 pt at 10 min per row) cannot all carry a label: the
    unlabelled ones are named under the row, so no episode silently disappears."""
    crowded = rf.with_many_episodes(rf.make_analysis(fs_hz=10.0), 6, spacing_s=3.0)
    texts = page_texts(render_record(crowded, tmp_path / "crowded.pdf"), slice(1, 4))
    note = next(line for t in texts for line in t.splitlines() if "too crowded" in line)
    named = note.split(": ", 1)[1].rstrip(".").split(", ")
    # E4 takes the upper slot and E5 the lower one; E6..E9 have none
    assert named == ["E6", "E7", "E8", "E9"]
