"""``sedreport trend VISIT... -o FILE.pdf [--csv FILE]`` on the committed example visits:
date order, recovery of the planted truth, refusals with exit 2 and no file, reproducible
bytes, the PDF's sources and cautions, and a look at the pages as PNG."""

from __future__ import annotations

import io
import json
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from sedreport.cli import cli
from sedreport.render.trend_csv import CONTRACT_COLUMNS

EXAMPLES = Path(__file__).resolve().parents[1] / "example_visits"
VISITS = sorted(p for p in EXAMPLES.glob("DEMO-COPD-V*") if p.is_dir())


def _run(*args: str) -> str:
    result = CliRunner().invoke(cli, list(args))
    assert result.exit_code == 0, result.output
    return result.output


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    out = tmp_path_factory.mktemp("trend")
    shuffled = [VISITS[i] for i in (3, 0, 5, 1, 4, 2)]
    _run("trend", *map(str, shuffled), "-o", str(out / "t.pdf"), "--csv", str(out / "t.csv"))
    return out


def test_csv_contract_and_date_order(outputs):
    text = (outputs / "t.csv").read_text()
    assert text.splitlines()[0].startswith(",".join(CONTRACT_COLUMNS) + ",")
    frame = pd.read_csv(io.StringIO(text))
    assert list(frame["session_id"]) == [p.name for p in VISITS]
    assert list(frame["visit_date"]) == sorted(frame["visit_date"])


def test_csv_recovers_the_planted_visits(outputs):
    frame = pd.read_csv(outputs / "t.csv").set_index("session_id")
    for folder in VISITS:
        truth = json.loads((EXAMPLES / f"{folder.name}.truth.json").read_text())["visit"]
        row = frame.loc[folder.name]
        # EtCO2 within 1 mmHg of the planted port median; rate within 0.5 /min; phase III slope
        # within 8 % of the least-squares slope of the noise-free breaths (same window);
        # noise SD 0.4-0.7 mmHg at 25 Hz, ~170-200 breaths per visit.
        assert row["etco2_median_mmHg"] == pytest.approx(truth["etco2_port_median_mmHg"], abs=1.0)
        assert row["rr_median_per_min"] == pytest.approx(truth["rr_median_per_min"], abs=0.5)
        fitted = truth["phase3_slope_fitted_median_mmHg_s"]
        assert row["phase3_slope_mmHg_s"] == pytest.approx(fitted, rel=0.08)
        if truth["blood_gas"]:
            pco2 = truth["blood_gas"]["pco2_kPa"] * 7.50062
            assert row["pco2_minus_etco2_mmHg"] == pytest.approx(
                pco2 - row["etco2_median_mmHg"], abs=0.1
            )
    # the planted worsening shows: steeper plateau, wider angle, slower upstroke over the year
    first, last = frame.iloc[0], frame.iloc[-1]
    for col in ("phase3_slope_norm_per_s", "alpha_angle_deg", "upstroke_s", "etco2_median_mmHg"):
        assert last[col] > first[col], col


def _subprocess(*args: str, env: dict | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "sedreport.cli", *args],
        capture_output=True,
        text=True,
        timeout=300,
        env=env,
    )


def test_mixed_patients_exit_2_and_no_file(tmp_path):
    other = tmp_path / "OTHER"
    shutil.copytree(VISITS[1], other)
    yaml_path = other / "session.yaml"
    text = yaml_path.read_text().replace("ref: P-C301", "ref: P-C999")
    yaml_path.write_text(text.replace("session_id: DEMO-COPD-V2", "session_id: OTHER-V2"))
    pdf, csv = tmp_path / "t.pdf", tmp_path / "t.csv"
    res = _subprocess("trend", str(VISITS[0]), str(other), "-o", str(pdf), "--csv", str(csv))
    assert res.returncode == 2
    assert res.stderr.startswith("error: OTHER-V2/session.yaml:patient.ref: patient 'P-C999'")
    assert res.stderr.count("\n") == 1 and "Traceback" not in res.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["OTHER"]


def test_output_must_be_pdf_exit_2_no_file(tmp_path):
    res = _subprocess("trend", str(VISITS[0]), "-o", str(tmp_path / "t.png"))
    assert res.returncode == 2 and "does not end in .pdf; the trend is a PDF file" in res.stderr
    assert not any(tmp_path.iterdir())


def test_reproducible_bytes_with_source_date_epoch(tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    _run("trend", *map(str, VISITS[:3]), "-o", str(a))
    _run("trend", *map(str, reversed(VISITS[:3])), "-o", str(b))
    assert a.read_bytes() == b.read_bytes()


def test_pdf_names_sources_cautions_and_hashes(outputs):
    pdfplumber = pytest.importorskip("pdfplumber")
    with pdfplumber.open(outputs / "t.pdf") as pdf:
        text = "\n".join(page.extract_text() or "" for page in pdf.pages)
        footers = [p.extract_text().splitlines()[-1] for p in pdf.pages]
    flat = " ".join(text.split())
    for source in (
        "You et al., Eur Respir J 1994",
        "Hisamuddin et al., Int J Emerg Med 2009",
        "O'Driscoll et al., Thorax 2017",
        "Kunsch, Ann Stat 1989",
    ):
        assert source in flat, source
    assert "not a diagnosis" in flat
    assert "reads below arterial CO2" in flat
    assert "1 s as long as 10 mmHg" in flat
    for folder in VISITS:
        from sedreport.ingest import load_session

        for src in load_session(folder).sources:
            assert src.sha256 in flat.replace(" ", "")
    assert all(f.startswith("P-C301 trend") and "sedreport" in f for f in footers)


def test_pages_render_to_png(outputs, tmp_path):
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler-utils) is not installed")
    subprocess.run(
        ["pdftoppm", "-r", "40", "-png", str(outputs / "t.pdf"), str(tmp_path / "p")], check=True
    )
    pngs = sorted(tmp_path.glob("p-*.png"))
    assert len(pngs) >= 4 and all(p.stat().st_size > 5000 for p in pngs)
