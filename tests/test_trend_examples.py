"""The committed example_visits/ folder is exactly `sedreport demo example_visits --visits
--seed 0`, small, documented, and loads with ingest."""

from __future__ import annotations

from pathlib import Path

from sedreport.demo import write_visits
from sedreport.ingest import load_session

EXAMPLES = Path(__file__).resolve().parents[1] / "example_visits"


def _files(root: Path) -> dict[str, bytes]:
    return {
        str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()
    }


def test_example_visits_regenerate_byte_for_byte(tmp_path):
    # If the demo model changes on purpose: sedreport demo example_visits --visits --seed 0
    write_visits(tmp_path, seed=0)
    committed, fresh = _files(EXAMPLES), _files(tmp_path)
    assert sorted(committed) == sorted(fresh)
    assert [n for n in committed if committed[n] != fresh[n]] == []


def test_example_visits_small_documented_and_loadable():
    total = sum(p.stat().st_size for p in EXAMPLES.rglob("*") if p.is_file())
    assert total < 1_500_000
    readme = (EXAMPLES / "README.md").read_text()
    assert "invented" in readme and "sedreport demo example_visits --visits --seed 0" in readme
    assert "sedreport trend example_visits/DEMO-COPD-V*/ -o trend.pdf" in readme
    refs = set()
    for folder in sorted(p for p in EXAMPLES.iterdir() if p.is_dir()):
        s = load_session(folder)
        refs.add(s.patient.ref)
        assert s.doses == () and s.patient.spo2_target_pct == (88.0, 92.0)
        assert not [f for f in s.findings if f.kind == "gap"]
    assert refs == {"P-C301"}


def test_demo_visits_command(tmp_path):
    from click.testing import CliRunner

    from sedreport.cli import cli

    res = CliRunner().invoke(cli, ["demo", str(tmp_path / "v"), "--visits", "--seed", "2"])
    assert res.exit_code == 0, res.output
    assert "wrote 6 invented session(s)" in res.output
    assert len([p for p in (tmp_path / "v").iterdir() if p.is_dir()]) == 6
    res = CliRunner().invoke(cli, ["demo", str(tmp_path / "w"), "--visits", "--cohort", "2"])
    assert res.exit_code == 2 and "cannot be combined" in res.output
    assert not (tmp_path / "w").exists()
