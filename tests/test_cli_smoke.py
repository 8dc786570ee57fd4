"""One process run per command: the entry point maps bad input to exit 2, one line, no traceback.

Everything else about the command line runs in-process through click's test runner (faster);
these runs prove that the console entry point (``sedreport = sedreport.cli:main`` in
pyproject.toml, the same ``main`` that ``python -m sedreport.cli`` calls) gives what the
design promises (DESIGN.md "Exit codes") when it is a real process with real streams. The
runs start together, one process each, and are checked one test per command.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest
from test_ingest_support import make_session
from test_refusals import MIXED_EVENTS, TREND_1HZ, etco2_trend_csv

REPO = Path(__file__).resolve().parents[1]


def _env() -> dict[str, str]:
    """The test's environment with this checkout first on PYTHONPATH."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO), env.get("PYTHONPATH")]))
    return env


@pytest.fixture(scope="module")
def runs(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, tuple]]:
    """Start one ``python -m sedreport.cli`` process per command at once; collect them all.

    Returns the folder of the inputs and, per command, (exit code, stdout, stderr, what the
    process left in its working folder).
    """
    root = tmp_path_factory.mktemp("smoke")
    trend = make_session(root, files={"co2.csv": etco2_trend_csv(1.0)}, name="trend")
    mixed = make_session(root, files={"events.csv": MIXED_EVENTS}, name="mixed")
    good = make_session(root, name="good")
    bad_criteria = root / "bad.yaml"
    bad_criteria.write_text("format: sedreport-criteria/1\nname: x\napnoea: 3\n", encoding="utf-8")
    argvs = {
        "check": ["check", str(trend)],
        "breaths": ["breaths", str(mixed), "--format", "csv"],
        "episodes": ["episodes", str(good), "--criteria", str(bad_criteria)],
        "criteria": ["criteria", str(good / "session.yaml")],
        "record": ["record", str(good), "-o", "x.txt"],
        "demo": ["demo", "demo-out", "--scenario", "nope"],
        "audit": ["audit", str(root / "nowhere"), "--csv", "rates.csv"],
    }
    out = {}
    for command, argv in argvs.items():
        cwd = root / f"cwd-{command}"
        cwd.mkdir()
        proc = subprocess.Popen(
            [sys.executable, "-m", "sedreport.cli", *argv],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
            encoding="utf-8",
            env=_env(),
            cwd=cwd,
        )
        out[command] = (proc, cwd)
    done = {}
    for command, (proc, cwd) in out.items():
        stdout, stderr = proc.communicate(timeout=300)
        done[command] = (proc.returncode, stdout, stderr, sorted(p.name for p in cwd.iterdir()))
    return root, done


EXPECTED = {
    "check": f"error: T-0001/co2.csv: {TREND_1HZ}",
    "breaths": "error: T-0001/events.csv:4: mixed time styles: '2026-03-14T09:12:28' has no UTC "
    "offset but line 2 ('2026-03-14T09:12:02+01:00') has one; write every time of a file with an "
    "offset or every time without",
    "episodes": "error: {root}/bad.yaml: apnoea: missing section or not a mapping",
    "criteria": "error: {root}/good/session.yaml: this is a session file "
    "(format: sedreport-session/1), not a criteria file",
    "record": "error: Invalid value for '-o' / '--output': 'x.txt' does not end in .pdf; "
    "the record is a PDF file",
    "demo": "error: demo: unknown scenario 'nope' (known: ",
    "audit": "error: {root}/nowhere: not a session folder or a folder of sessions",
}


@pytest.mark.parametrize("command", list(EXPECTED))
def test_entry_point_bad_input_is_exit_2_one_line(runs, command):
    root, done = runs
    code, stdout, stderr, left = done[command]
    assert "Traceback" not in stdout + stderr, stderr
    assert code == 2, (code, stderr)
    lines = stderr.splitlines()
    assert len(lines) == 1, stderr
    want = EXPECTED[command].replace("{root}", str(root))
    if command == "demo":
        assert lines[0].startswith(want), lines[0]
    else:
        assert lines[0] == want
    assert stdout == ""
    assert left == [], f"{command} left {left} behind"


def test_console_script_is_main():
    """The installed ``sedreport`` command is the same ``main`` the smoke runs go through."""
    doc = tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))
    assert doc["project"]["scripts"] == {"sedreport": "sedreport.cli:main"}
