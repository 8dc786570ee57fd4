"""The committed example_sessions/ folder: reproducible bytes, determinism, clean loading, CLI."""

from __future__ import annotations

import gzip
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner, Result

from sedreport.cli import cli
from sedreport.criteria import default_criteria
from sedreport.demo import SCENARIOS, load_truth, write_examples, write_scenario
from sedreport.gaps import stream_gap_findings
from sedreport.ingest import load_session

EXAMPLES = Path(__file__).resolve().parents[1] / "example_sessions"


def _files(root: Path) -> dict[str, bytes]:
    return {
        str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()
    }


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    out = tmp_path_factory.mktemp("examples")
    write_examples(out, seed=0)
    return out


def test_example_sessions_regenerate_byte_for_byte(regenerated):
    # Change aversion: example_sessions/ must be exactly `sedreport demo example_sessions
    # --seed 0`. If the model changes on purpose, regenerate the folder with that command.
    committed, fresh = _files(EXAMPLES), _files(regenerated)
    assert sorted(committed) == sorted(fresh)
    differing = [name for name in committed if committed[name] != fresh[name]]
    assert differing == []


def test_example_folder_is_small_and_documented():
    total = sum(p.stat().st_size for p in EXAMPLES.rglob("*") if p.is_file())
    assert total < 4_000_000
    readme = (EXAMPLES / "README.md").read_text()
    assert "invented" in readme and "sedreport demo example_sessions --seed 0" in readme
    assert "not an alarm or a diagnosis" in readme
    for spec in SCENARIOS.values():
        assert f"| {spec.session_id} | {spec.scenario} |" in readme


def test_same_seed_same_bytes_other_seed_other_signal(tmp_path):
    a = write_scenario(tmp_path / "a", "upper_gi_apnoea", seed=5)
    b = write_scenario(tmp_path / "b", "upper_gi_apnoea", seed=5)
    c = write_scenario(tmp_path / "c", "upper_gi_apnoea", seed=6)
    assert _files(a) == _files(b)
    assert (a / "co2.csv.gz").read_bytes() != (c / "co2.csv.gz").read_bytes()
    ta = (tmp_path / "a" / "DEMO-UGI-02.truth.json").read_bytes()
    assert ta == (tmp_path / "b" / "DEMO-UGI-02.truth.json").read_bytes()
    assert load_truth(tmp_path / "c" / "DEMO-UGI-02.truth.json")["seed"] == 6


def test_gzip_header_is_reproducible(regenerated):
    raw = (regenerated / "DEMO-COLON-01" / "co2.csv.gz").read_bytes()
    assert raw[:2] == b"\x1f\x8b" and raw[4:8] == b"\x00\x00\x00\x00"  # mtime 0
    assert raw[3] & 0x08 == 0  # no stored file name
    text = gzip.decompress(raw).decode("ascii").splitlines()
    assert text[0] == "time,co2" and text[1].count(",") == 1


def test_rounding_of_exported_values(regenerated):
    # CO2 to 0.1 mmHg (0.01 kPa / %), SpO2 and pulse as integers (common practice exports).
    decimals = {"mmHg": 1, "kPa": 2, "percent": 2}
    for spec in SCENARIOS.values():
        folder = regenerated / spec.session_id
        lines = gzip.decompress((folder / "co2.csv.gz").read_bytes()).decode().splitlines()[1:50]
        for line in lines:
            value = line.split(",")[1]
            assert len(value.split(".")[1]) == decimals[spec.co2_units]
        for line in (folder / "spo2.csv").read_text().splitlines()[1:50]:
            _, spo2, pulse = line.split(",")
            assert spo2.isdigit() and pulse.isdigit()


def test_every_scenario_loads_with_ingest(regenerated):
    crit = default_criteria()
    for spec in SCENARIOS.values():
        session = load_session(regenerated / spec.session_id)
        truth = load_truth(regenerated / f"{spec.session_id}.truth.json")
        assert session.session_id == spec.session_id
        assert session.findings == ()  # ingest keeps raw steps; gaps are judged with criteria
        gaps = stream_gap_findings(session, crit)
        assert len(gaps) == len(truth["gaps"])
        # Units and clock offsets resolved: the CO2 at truth plateau ends matches the truth.
        st = np.array(truth["breaths"]["start_s"])
        en = np.array(truth["breaths"]["end_s"])
        et = np.array(truth["breaths"]["etco2_mmHg"])
        k = np.searchsorted(session.co2.time_s, st + 0.97 * (en - st) - 0.15)
        err = np.abs(session.co2.co2_mmHg[np.clip(k, 0, session.co2.time_s.size - 1)] - et)
        assert np.median(err) < 2.0, spec.session_id
        assert len(session.doses) == len(spec.doses)
        assert len(session.events) == len(spec.events)


def _cli(*args: str) -> Result:
    """``sedreport ARGS`` in-process (click's test runner; stderr kept apart)."""
    return CliRunner().invoke(cli, list(args))


def test_cli_writes_one_scenario(tmp_path):
    res = _cli("demo", str(tmp_path), "--scenario", "quiet_colonoscopy", "--seed", "3")
    assert res.exit_code == 0, res.stderr
    assert "wrote 1 invented session(s)" in res.stdout
    assert (tmp_path / "DEMO-COLON-01" / "session.yaml").is_file()
    assert load_truth(tmp_path / "DEMO-COLON-01.truth.json")["seed"] == 3


def test_cli_errors_are_one_line_exit_2(tmp_path):
    res = _cli("demo", str(tmp_path), "--scenario", "nope")
    assert res.exit_code == 2 and res.stdout == ""
    known = ", ".join(SCENARIOS)
    assert res.stderr == f"error: demo: unknown scenario 'nope' (known: {known})\n"
    assert not any(tmp_path.iterdir())
    res = _cli("demo", str(tmp_path), "--cohort", "2", "--scenario", "quiet_colonoscopy")
    assert res.exit_code == 2
    assert res.stderr == "error: --cohort and --scenario cannot be combined\n"


def test_sedreport_check_accepts_every_example():
    # Done-criterion of the demo issue: every scenario loads cleanly with `sedreport check`.
    folders = [str(EXAMPLES / spec.session_id) for spec in SCENARIOS.values()]
    res = _cli("check", *folders)
    assert res.exit_code == 0 and res.stderr == "", res.stderr
    for spec in SCENARIOS.values():
        assert f"session {spec.session_id}" in res.stdout
