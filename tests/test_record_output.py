"""Output behaviour of the record: reproducible bytes, atomic writes, PNG rendering, the CLI."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path

import pytest
import record_fixtures as rf
from click.testing import CliRunner, Result
from record_pdf import norm, page_texts

from sedreport.cli import cli
from sedreport.errors import SedreportError
from sedreport.render import record as record_module
from sedreport.render.record import render_record

REPO = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def analysis():
    return rf.make_analysis()


def test_byte_identical_under_source_date_epoch(analysis, tmp_path, monkeypatch):
    """SOURCE_DATE_EPOCH specification (reproducible-builds.org): same inputs, same bytes,
    dates taken from the variable. 1773475200 = 2026-03-14 08:00:00 UTC."""
    import pdfplumber

    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1773475200")
    a = render_record(analysis, tmp_path / "a.pdf").read_bytes()
    b = render_record(analysis, tmp_path / "b.pdf").read_bytes()
    assert a == b
    with pdfplumber.open(tmp_path / "a.pdf") as pdf:
        assert pdf.metadata["CreationDate"].startswith("D:20260314080000")
    assert "2026-03-14 08:00:00 UTC" in norm(page_texts(tmp_path / "a.pdf", slice(-1, None))[0])


def test_no_file_left_behind_when_rendering_fails(analysis, tmp_path, monkeypatch):
    """A failure in the middle of the build leaves no PDF and no temporary file, and an
    existing record at the target keeps its old bytes."""
    target = tmp_path / "rec.pdf"
    target.write_bytes(b"old record")

    def broken(*args, **kwargs):
        raise RuntimeError("planted failure mid-render")

    monkeypatch.setattr(record_module.closeups, "closeup", broken)
    with pytest.raises(RuntimeError, match="planted failure"):
        render_record(analysis, target)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rec.pdf"]
    assert target.read_bytes() == b"old record"


def test_failure_while_drawing_pages_leaves_nothing(analysis, tmp_path, monkeypatch):
    from sedreport.render import pages

    def broken_footer(session_id, page, pages_total, version):
        if page == 3:
            raise RuntimeError("planted footer failure")
        return f"{session_id} {page}"

    monkeypatch.setattr(pages, "footer_text", broken_footer)
    with pytest.raises(RuntimeError, match="planted footer failure"):
        render_record(analysis, tmp_path / "rec.pdf", json_path=tmp_path / "rec.json")
    assert list(tmp_path.iterdir()) == []


def test_missing_output_directory(analysis, tmp_path):
    with pytest.raises(SedreportError, match="output directory .* does not exist"):
        render_record(analysis, tmp_path / "nope" / "rec.pdf")


def test_output_path_is_a_directory(analysis, tmp_path):
    (tmp_path / "rec.pdf").mkdir()
    with pytest.raises(SedreportError, match="rec.pdf: is a directory"):
        render_record(analysis, tmp_path / "rec.pdf")
    assert [p.name for p in tmp_path.iterdir()] == ["rec.pdf"]


@pytest.mark.parametrize("value", ["yesterday", "99999999999999999999", "1.5"])
def test_source_date_epoch_must_be_whole_seconds(analysis, tmp_path, monkeypatch, value):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", value)
    with pytest.raises(SedreportError, match=r"^SOURCE_DATE_EPOCH: expected whole seconds"):
        render_record(analysis, tmp_path / "x.pdf")
    assert list(tmp_path.iterdir()) == []


def test_without_source_date_epoch_the_current_time_is_used(analysis, tmp_path, monkeypatch):
    from datetime import UTC, datetime

    import pdfplumber

    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    out = render_record(analysis, tmp_path / "now.pdf")
    with pdfplumber.open(out) as pdf:
        created = pdf.metadata["CreationDate"]
    assert created.startswith("D:" + datetime.now(tz=UTC).astimezone().strftime("%Y"))
    assert not created.startswith("D:2000")


def test_unknown_paper(analysis, tmp_path):
    with pytest.raises(SedreportError, match="unknown paper size 'a5'"):
        render_record(analysis, tmp_path / "rec.pdf", paper="a5")
    assert list(tmp_path.iterdir()) == []


@pytest.mark.skipif(
    shutil.which("pdftoppm") is None,
    reason="pdftoppm (poppler-utils) is an optional system tool and is not installed here",
)
def test_pages_render_to_png(analysis, tmp_path):
    """poppler's pdftoppm renders every page; each greyscale page has ink on it."""
    from PIL import Image

    pdf = render_record(analysis, tmp_path / "rec.pdf")
    n = len(page_texts(pdf))
    subprocess.run(
        ["pdftoppm", "-gray", "-png", "-r", "40", str(pdf), str(tmp_path / "p")],
        check=True,
        capture_output=True,
    )
    pngs = sorted(tmp_path.glob("p-*.png"))
    assert len(pngs) == n
    for png in pngs:
        with Image.open(png) as img:
            lo, hi = img.convert("L").getextrema()
        assert hi == 255 and lo < 100


def _run_cli(*args: str) -> Result:
    """``sedreport ARGS`` in-process (click's test runner; stderr kept apart)."""
    return CliRunner().invoke(cli, list(args))


def test_cli_malformed_session_exit_2_no_pdf(tmp_path):
    folder = tmp_path / "BAD-1"
    folder.mkdir()
    (folder / "session.yaml").write_text("format: sedreport-session/1\nsession_id: [oops\n")
    proc = _run_cli("record", str(folder), "-o", str(tmp_path / "bad.pdf"))
    assert proc.exit_code == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert "Traceback" not in proc.stderr
    assert not (tmp_path / "bad.pdf").exists()
    assert [p.name for p in tmp_path.iterdir()] == ["BAD-1"]


def test_cli_bad_criteria_file_exit_2_no_pdf(tmp_path):
    folder = _demo_session(tmp_path, "upper_gi_apnoea")
    bad = tmp_path / "bad_criteria.yaml"
    bad.write_text("format: sedreport-criteria/1\napnoea: {min_duration_s: 3}\n")
    out = tmp_path / "rec.pdf"
    proc = _run_cli(
        "record", str(folder), "-o", str(out), "--criteria", str(bad), "--paper", "letter"
    )
    assert proc.exit_code == 2, proc.stderr
    assert proc.stderr.startswith("error: ") and len(proc.stderr.strip().splitlines()) == 1
    assert "bad_criteria.yaml" in proc.stderr
    assert not out.exists()


def test_cli_missing_session_exit_2(tmp_path):
    proc = _run_cli("record", str(tmp_path / "absent"), "-o", str(tmp_path / "x.pdf"))
    assert proc.exit_code == 2 and proc.stderr.startswith("error: ")
    assert not (tmp_path / "x.pdf").exists()


def _demo_session(tmp_path: Path, name: str) -> Path:
    from sedreport import demo

    return demo.write_scenario(tmp_path / "demo", name, 0)


def test_cli_record_on_demo_scenario_end_to_end(tmp_path):
    """The real pipeline (ingest, analysis, render) on an invented demo scenario: every
    episode of the JSON appears in the PDF's episode table with its start clock time."""
    folder = _demo_session(tmp_path, "upper_gi_apnoea")
    out, js = tmp_path / "rec.pdf", tmp_path / "rec.json"
    proc = _run_cli("record", str(folder), "-o", str(out), "--json", str(js))
    assert proc.exit_code == 0, proc.stderr
    data = json.loads(js.read_text())
    # the same text as `sedreport episodes --format json`
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session
    from sedreport.render.json_text import episodes_json

    assert js.read_text() == episodes_json(analyse_session(load_session(folder)))
    texts = page_texts(out)
    all_text = norm(" ".join(texts))
    assert data["episodes"], "the apnoea scenario should give at least one episode"
    for ep in data["episodes"]:
        clock = ep["start_time"][11:19]
        assert f"{ep['id']} {ep['kind'].replace('_', ' ')}" in all_text
        assert clock in all_text
    for src in data["quality"]["sources"]:
        assert src["sha256"] in norm(texts[-1])
    n = len(texts)
    assert all(f"page {i} of {n}" in t for i, t in enumerate(texts, start=1))


EXAMPLES = sorted(
    p for p in (REPO / "example_sessions").glob("*/") if (p / "session.yaml").exists()
)


@pytest.mark.slow
@pytest.mark.parametrize("folder", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_record_of_every_bundled_example(folder, tmp_path):
    """Every bundled (invented) example gives a complete record: footer on every page, each
    episode id in the text, the input hashes on the last page."""
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session

    analysis = analyse_session(load_session(folder))
    texts = page_texts(render_record(analysis, tmp_path / "rec.pdf"))
    n = len(texts)
    sid = analysis.session.session_id
    assert all(f"{sid} · page {i} of {n}" in t for i, t in enumerate(texts, start=1))
    all_text = norm(" ".join(texts))
    for ep in analysis.episodes:
        assert f"{ep.id} {ep.kind.replace('_', ' ')}" in all_text
    for src in analysis.session.sources:
        assert src.sha256 in norm(texts[-1])


@pytest.mark.slow
def test_long_dense_session_has_bounded_output(tmp_path):
    """4 h of CO2 at 100 Hz (1.44 million samples): 16 rows of 15 min, at most 19 pages (with
    the 49-row observations table, the BP/HR strip in every row, the events log, the recovery
    section and the criteria appendix) and a small file, so the waveform was reduced to
    envelopes (timing is in benchmarks/)."""
    long = rf.make_analysis(duration_s=4 * 3600.0, fs_hz=100.0, seed=1)
    import pdfplumber

    out = render_record(long, tmp_path / "long.pdf")
    with pdfplumber.open(out) as pdf:
        assert len(pdf.pages) <= 19
        assert "15 min per row, 16 row(s)" in norm(" ".join(p.extract_text() for p in pdf.pages))
    assert out.stat().st_size < 1_000_000


def test_output_gets_ordinary_file_permissions(analysis, tmp_path):
    """The temporary file of the atomic write is 0600; the finished record must not be
    (common practice: a new file takes 0666 less the umask)."""
    old = os.umask(0o022)
    try:
        out = render_record(analysis, tmp_path / "perm.pdf")
    finally:
        os.umask(old)
    assert out.stat().st_mode & 0o777 == 0o644
