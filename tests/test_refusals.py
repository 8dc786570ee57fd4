"""Refusals of issue 8: input that looks usable but is not, and command-line slips.

Each refusal is checked with its full message: bad input gives exit 2, exactly one ``error:``
line on stderr and no output file (DESIGN.md "Exit codes"). The commands run in-process through
click's test runner; ``test_cli_smoke.py`` runs the installed entry point as a process.

All data are invented for the test (square-ish capnograms from ``test_ingest_support``).
"""

from __future__ import annotations

import datetime as dt
import fnmatch
import json
import re
import shlex
from pathlib import Path

import edfio
import numpy as np
import pytest
import wfdb
from click.testing import CliRunner, Result
from record_pdf import norm, page_texts
from test_ingest_support import make_session

from sedreport.cli import cli
from sedreport.demo import SCENARIOS
from sedreport.errors import CriteriaError, SessionError
from sedreport.ingest import load_session
from sedreport.ingest.streams import MIN_CO2_RATE_HZ

REPO = Path(__file__).resolve().parents[1]
#: The one line a CO2 stream at 1 Hz gets (issue 8), after ``<session>/<file>``.
TREND_1HZ = (
    "1.0 Hz \u2014 this looks like an EtCO2 trend, not a capnogram; a waveform needs >= 10 Hz"
)


def invoke(*args: object) -> Result:
    """Run ``sedreport ARGS`` in-process; stdout and stderr are kept apart (click >= 8.2)."""
    return CliRunner().invoke(cli, [str(a) for a in args])


def assert_refused(result: Result, line: str) -> None:
    """Exit 2, stderr exactly ``line``, nothing on stdout, no traceback."""
    assert result.exit_code == 2, (result.exit_code, result.output, result.exception)
    assert result.stderr.splitlines() == [line], result.stderr
    assert result.stdout == ""
    assert "Traceback" not in result.output


def etco2_trend_csv(step_s: float = 1.0, duration_s: float = 120.0) -> str:
    """What a monitor's EtCO2 trend export looks like: one end-tidal value per ``step_s``."""
    t = np.arange(0.0, duration_s, step_s)
    etco2 = 38.0 + 2.0 * np.sin(t / 20.0)
    return "time,co2\n" + "".join(f"{a:.3f},{b:.1f}\n" for a, b in zip(t, etco2, strict=True))


# ----- a CO2 stream below 10 Hz ------------------------------------------------------------------
def test_minimum_co2_rate_is_the_design_lower_bound():
    # DESIGN.md "The session folder": the capnogram is uniformly sampled at 10-200 Hz.
    assert MIN_CO2_RATE_HZ == 10.0


@pytest.mark.parametrize("command", ["check", "breaths", "episodes", "record"])
def test_1hz_co2_csv_is_refused_by_every_command(tmp_path, command):
    folder = make_session(tmp_path, files={"co2.csv": etco2_trend_csv(1.0)})
    out = tmp_path / "out"
    out.mkdir()
    extra = ["-o", out / "rec.pdf"] if command == "record" else []
    assert_refused(invoke(command, folder, *extra), f"error: T-0001/co2.csv: {TREND_1HZ}")
    assert list(out.iterdir()) == []


def test_1hz_co2_csv_library_error(tmp_path):
    folder = make_session(tmp_path, files={"co2.csv": etco2_trend_csv(1.0)})
    with pytest.raises(SessionError, match=f"^T-0001/co2.csv: {re.escape(TREND_1HZ)}$"):
        load_session(folder)


def test_co2_rate_limit_is_not_off_by_one(tmp_path):
    # 10 Hz written with times to one decimal (0.1, 0.2...) is a waveform; 9.9 Hz is not.
    ten = "time,co2\n" + "".join(
        f"{i / 10:.1f},{38.0 if i % 40 < 18 else 0.4}\n" for i in range(600)
    )
    assert load_session(make_session(tmp_path, files={"co2.csv": ten})).co2.sample_rate_hz == (
        pytest.approx(10.0)
    )
    slow = make_session(tmp_path, files={"co2.csv": etco2_trend_csv(0.101, 60.0)}, name="slow")
    with pytest.raises(SessionError, match=r"^T-0001/co2.csv: 9\.9 Hz \u2014 this looks like"):
        load_session(slow)


def test_1hz_co2_edf_channel_is_refused(tmp_path):
    # EDF: Kemp et al., Electroencephalogr Clin Neurophysiol 1992 (written here with edfio).
    sig = edfio.EdfSignal(
        np.full(120, 38.0), 1, label="CO2", physical_dimension="mmHg", physical_range=(-10, 150)
    )
    edf = edfio.Edf(
        [sig],
        starttime=dt.time(9, 12, 0),
        recording=edfio.Recording(startdate=dt.date(2026, 3, 14)),
    )
    folder = make_session(tmp_path, {"sources.co2": {"file": "rec.edf", "channel": "CO2"}})
    edf.write(folder / "rec.edf")
    with pytest.raises(SessionError, match=f"^T-0001/rec.edf:channel CO2: {re.escape(TREND_1HZ)}$"):
        load_session(folder)
    assert_refused(invoke("check", folder), f"error: T-0001/rec.edf:channel CO2: {TREND_1HZ}")


def test_1hz_co2_wfdb_channel_is_refused(tmp_path):
    # WFDB record written by the wfdb package (Xie et al., PhysioNet WFDB-Python).
    folder = make_session(tmp_path, {"sources.co2": {"file": "rw.hea", "channel": "CO2"}})
    wfdb.wrsamp(
        "rw",
        fs=1,
        units=["mmHg"],
        sig_name=["CO2"],
        p_signal=np.full((120, 1), 38.0),
        fmt=["16"],
        adc_gain=[100.0],
        baseline=[0],
        write_dir=str(folder),
        base_datetime=dt.datetime(2026, 3, 14, 9, 12, 0),
    )
    with pytest.raises(SessionError, match=f"^T-0001/rw.hea:channel CO2: {re.escape(TREND_1HZ)}$"):
        load_session(folder)


# ----- ISO times with and without a UTC offset in one file ---------------------------------------
MIXED_EVENTS = (
    "time,event,value,note\n"
    "2026-03-14T09:12:02+01:00,procedure_start,,\n"
    "2026-03-14T09:12:15+01:00,oxygen_increase,4,after desaturation\n"
    "2026-03-14T09:12:28,procedure_end,,\n"
)
MIXED_EVENTS_LINE = (
    "error: T-0001/events.csv:4: mixed time styles: '2026-03-14T09:12:28' has no UTC offset "
    "but line 2 ('2026-03-14T09:12:02+01:00') has one; write every time of a file with an "
    "offset or every time without"
)


@pytest.mark.parametrize("command", ["check", "episodes", "record"])
def test_offset_and_naive_times_in_one_events_file_are_refused(tmp_path, command):
    folder = make_session(tmp_path, files={"events.csv": MIXED_EVENTS})
    out = tmp_path / "out"
    out.mkdir()
    extra = ["-o", out / "rec.pdf", "--json", out / "rec.json"] if command == "record" else []
    assert_refused(invoke(command, folder, *extra), MIXED_EVENTS_LINE)
    assert list(out.iterdir()) == []


def test_naive_then_offset_names_the_first_line_with_an_offset(tmp_path):
    text = (
        "time,spo2\n2026-03-14T09:12:00,97\n2026-03-14T09:12:01,97\n2026-03-14T09:12:02+01:00,97\n"
    )
    folder = make_session(tmp_path, files={"spo2.csv": text})
    with pytest.raises(
        SessionError,
        match=re.escape(
            "T-0001/spo2.csv:4: mixed time styles: '2026-03-14T09:12:02+01:00' has a UTC offset "
            "but line 2 ('2026-03-14T09:12:00') has none"
        ),
    ):
        load_session(folder)


def test_one_offset_style_per_file_still_loads(tmp_path):
    aware = MIXED_EVENTS.replace("09:12:28,", "09:12:28+01:00,")
    s = load_session(make_session(tmp_path, files={"events.csv": aware}))
    assert [e.time_s for e in s.events] == [2.0, 15.0, 28.0]
    naive = MIXED_EVENTS.replace("+01:00", "")
    s = load_session(make_session(tmp_path, files={"events.csv": naive}, name="naive"))
    assert [e.time_s for e in s.events] == [2.0, 15.0, 28.0]
    assert [f.kind for f in s.findings if f.source == "events"] == ["naive_time"]


# ----- streams that do not overlap the CO2 -------------------------------------------------------
#: SpO2 clock 2 h ahead: 30 samples 7200-7229 s against a CO2 of 0-29.96 s.
NO_OVERLAP_WARNING = (
    "warning: T-0001: spo2: spans 7200.0-7229.0 s, outside the CO2 (0.0-30.0 s); "
    "check clock_offset_s and the file's clock"
)


@pytest.fixture
def shifted_spo2(tmp_path: Path) -> Path:
    return make_session(tmp_path, {"sources.spo2.clock_offset_s": 7200})


@pytest.mark.parametrize("command", ["check", "breaths", "episodes"])
def test_no_overlap_is_one_stderr_warning(shifted_spo2, command):
    result = invoke(command, shifted_spo2, "--format", "json")
    assert result.exit_code == 0, result.output
    assert result.stderr.splitlines() == [NO_OVERLAP_WARNING]
    json.loads(result.stdout)


def test_no_overlap_is_in_the_records_data_quality_section(shifted_spo2, tmp_path):
    """The record warns on stderr and its data-quality section states the finding; the
    output name's suffix and --paper are matched in any case (issue 8)."""
    out = tmp_path / "out"
    out.mkdir()
    result = invoke("record", shifted_spo2, "-o", out / "rec.PDF", "--paper", "A4")
    assert result.exit_code == 0, result.output
    assert result.stderr.splitlines() == [NO_OVERLAP_WARNING]
    text = norm(" ".join(page_texts(out / "rec.PDF")))
    quality = text[text.index("Data quality") :]
    assert "No overlap" in quality or "no overlap" in quality, quality[:400]
    assert "outside the CO2" in quality, quality[:2000]


def test_overlapping_streams_warn_nothing(tmp_path):
    result = invoke("check", make_session(tmp_path))
    assert result.exit_code == 0 and result.stderr == ""


# ----- command-line slips ------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("args", "line"),
    [
        (
            ["-o", "x.txt"],
            "error: Invalid value for '-o' / '--output': 'x.txt' does not end in .pdf; "
            "the record is a PDF file",
        ),
        (
            ["-o", "x.pdf", "--json", "x.txt"],
            "error: Invalid value for '--json': 'x.txt' does not end in .json; "
            "the episodes file is JSON",
        ),
    ],
    ids=["output_txt", "json_txt"],
)
def test_record_output_names_must_fit_their_format(tmp_path, monkeypatch, args, line):
    folder = make_session(tmp_path / "in")
    cwd = tmp_path / "out"
    cwd.mkdir()
    monkeypatch.chdir(
        cwd
    )  # relative output names land here (click's isolated_filesystem is deprecated)
    result = CliRunner().invoke(cli, ["record", str(folder), *args])
    assert list(cwd.iterdir()) == []
    assert_refused(result, line)


@pytest.mark.parametrize(
    "args",
    [
        ["check", "--format", "JSON"],
        ["breaths", "--format", "Json"],
        ["episodes", "--format", "JSON"],
    ],
)
def test_format_choice_ignores_case(tmp_path, args):
    folder = make_session(tmp_path)
    result = invoke(args[0], folder, *args[1:])
    assert result.exit_code == 0, result.output
    assert isinstance(json.loads(result.stdout), dict)


def test_unknown_choice_still_refused():
    assert_refused(
        invoke("breaths", "S", "--format", "xml"),
        "error: Invalid value for '--format': 'xml' is not one of 'table', 'csv', 'json'.",
    )


def test_session_file_given_as_criteria(tmp_path):
    folder = make_session(tmp_path)
    where = str(folder / "session.yaml")
    line = f"{where}: this is a session file (format: sedreport-session/1), not a criteria file"
    assert_refused(invoke("criteria", where), f"error: {line}")
    result = invoke("episodes", folder, "--criteria", where)
    assert_refused(result, f"error: {line}")
    from sedreport.criteria import load_criteria

    with pytest.raises(CriteriaError, match=re.escape(line)):
        load_criteria(where)


def test_demo_help_lists_every_scenario():
    result = invoke("demo", "--help")
    assert result.exit_code == 0
    listed = re.findall(r"^  (\w+)", result.stdout[result.stdout.index("Scenarios") :], re.M)
    assert listed == list(SCENARIOS)


def test_no_command_shows_help_and_exit_2():
    result = invoke()
    assert result.exit_code == 2
    assert result.stderr.startswith("Usage: ") and "Commands:" in result.stderr


def test_unknown_command_is_one_line():
    assert_refused(invoke("nope"), "error: No such command 'nope'.")


# ----- the README's first command ----------------------------------------------------------------
def _readme_first_command() -> list[str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    block = text[text.index("```sh\n") + len("```sh\n") :]
    return shlex.split(block.splitlines()[0])


def _ignored_at_top(name: str) -> bool:
    """True when a top-level ``name`` matches an anchored pattern of the repo's .gitignore."""
    patterns = (REPO / ".gitignore").read_text(encoding="utf-8").splitlines()
    return any(
        fnmatch.fnmatchcase(name, p.lstrip("/"))
        for p in patterns
        if p and not p.startswith("#") and "/" not in p.strip("/")
    )


def test_readme_first_command_writes_an_ignored_record(tmp_path, monkeypatch):
    """The README's first command must leave no untracked file in a fresh clone: the record it
    writes at the top of the checkout matches .gitignore, and the command works."""
    words = _readme_first_command()
    i = words.index("record")
    session, output = words[i + 1], words[words.index("-o", i) + 1]
    assert "/" not in output and output.endswith(".pdf")
    assert _ignored_at_top(output), f"{output} is not ignored by .gitignore"
    assert not _ignored_at_top("README.md") and not _ignored_at_top("pyproject.toml")
    monkeypatch.chdir(tmp_path)  # click's isolated_filesystem is deprecated from click 8.5
    result = CliRunner().invoke(cli, ["record", str(REPO / session), "-o", output])
    assert result.exit_code == 0, result.output
    assert Path(output).read_bytes()[:5] == b"%PDF-"
