"""Malformed session folders, each run through the real command line.

An independent check of ingestion, written from the specification alone (DESIGN.md "The
session folder" and the exit-code contract of "Machine-readable outputs", issue 2 "Ingestion"
and "`sedreport check`"), without reading the ingest code. Every case starts from the valid base
session of :mod:`malformed_cases` and applies one mutation; the comment beside each case names
the rule it checks.

The contract under test (DESIGN.md "Exit codes", issue 2 item 6): bad input gives exit code 2
and one line on stderr, ``error: <session>/<file>:<line>: <what is wrong>`` (or
``<session>/session.yaml:<field>``), never a traceback and never a partial output file. The
tests match the session, the file name, the line number or field name, not the wording.

Each case's folder is built once (module-wide) and every command runs in-process through click's
test runner, which goes through the same click group as the installed ``sedreport`` command
(the group maps errors to ``error:`` lines and exit 2). ``test_cli_smoke.py`` runs the entry
point as a process, once per command. Every command under test exists: a missing or renamed
command fails here (click: "No such command" is exit 2 with the wrong message), it never skips.

All data are invented for the test (see :mod:`malformed_cases`).
"""

from __future__ import annotations

import json
import re
import traceback
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from malformed_cases import (
    SESSION_ID,
    STARTED,
    Mutation,
    SessionParts,
    base_parts,
    cell,
    cell_text,
    co2_all_iso_times,
    co2_as_edf,
    co2_edf_truncated,
    co2_gap,
    co2_gz_bytes,
    co2_gz_not_gzip,
    co2_in_subfolder_via_symlink,
    co2_kpa_30,
    co2_only_parts,
    co2_outside,
    co2_real_gzip,
    co2_time_backwards,
    co2_time_duplicate,
    criteria_file,
    crlf_line_ends,
    doses_no_unit,
    dotdot_staying_inside,
    events_binary,
    events_latin1,
    file_bytes,
    file_line,
    file_removed,
    gzip_of_random,
    infusion_no_weight,
    iso_time,
    no_yaml,
    set_field,
    truncated,
    yaml_latin1,
    yaml_removed,
    yaml_text,
    yaml_value,
)

from sedreport.cli import cli

REPO_ROOT = Path(__file__).resolve().parents[1]
COMMANDS = ("check", "episodes", "record")


# ----- running the command line -----------------------------------------------------------------
@dataclass(frozen=True)
class Run:
    """Outcome of one command-line run."""

    argv: tuple[str, ...]
    returncode: int
    stdout: str
    stderr: str
    out_dir_entries: tuple[str, ...] = ()
    internal_error: str = ""

    def describe(self) -> str:
        return (
            f"argv={' '.join(self.argv)}\nexit={self.returncode}\n"
            f"stderr={self.stderr!r}\nstdout={self.stdout[-2000:]!r}\n{self.internal_error}"
        )


def _argv(command: str, folder: Path, out_pdf: Path, *extra: str) -> list[str]:
    argv = [command, str(folder)]
    if command == "episodes":
        argv += ["--format", "json"]
    elif command == "record":
        argv += ["-o", str(out_pdf)]
    return argv + list(extra)


def run_cli(argv: list[str], out_dir: Path | None = None) -> Run:
    """Run ``sedreport ARGV`` in-process (stdout and stderr apart, click >= 8.2).

    An exception that escapes the click group (an internal failure, exit 1) is kept as its
    formatted traceback for the failure message. ``out_dir``: its entries after the run.
    """
    result = CliRunner().invoke(cli, argv)
    internal = ""
    if result.exc_info is not None and not isinstance(result.exception, SystemExit):
        internal = "".join(traceback.format_exception(*result.exc_info))
    entries = tuple(sorted(e.name for e in out_dir.iterdir())) if out_dir is not None else ()
    return Run(tuple(argv), result.exit_code, result.stdout, result.stderr, entries, internal)


def run_many(argvs: dict[str, list[str]]) -> dict[str, Run]:
    """Run the given command lines one after the other."""
    return {key: run_cli(argv) for key, argv in argvs.items()}


# ----- expectations -----------------------------------------------------------------------------
def at(fname: str, *lines: int) -> tuple[str, ...]:
    """The message must name ``fname:<line>`` for one of ``lines`` (issue 2 error format)."""
    return tuple(rf"{re.escape(fname)}:{line}(?!\d)" for line in lines)


def names(*texts: str) -> tuple[str, ...]:
    """The message must contain one of ``texts``."""
    return tuple(re.escape(t) for t in texts)


@dataclass(frozen=True)
class Case:
    """One malformed session: a mutation of the base and what the error line must name.

    ``expect`` is a tuple of groups; every group must match, and a group matches when any of
    its regular expressions is found in the error line.
    """

    id: str
    mutate: Mutation
    expect: tuple[tuple[str, ...], ...]


YAML = names("session.yaml")

CASES = [
    # DESIGN.md "The session folder": session.yaml is required
    Case("yaml_missing", no_yaml, (YAML,)),
    # DESIGN.md / issue 2: session.yaml is YAML; a syntax error is bad input, not a crash
    Case(
        "yaml_syntax_error",
        yaml_text(b"format: sedreport-session/1\nsession_id: ENDO-0412\npatient: {ref: [P\n"),
        (YAML,),
    ),
    # issue 2 "checked field by field": an empty file has no fields at all
    Case("yaml_empty", yaml_text(b""), (YAML,)),
    # issue 2 validation: undecodable bytes (session.yaml in latin-1)
    Case("yaml_latin1", yaml_latin1, (YAML,)),
    # issue 2 "checked field by field": the document must be a mapping of fields
    Case("yaml_not_a_mapping", yaml_text(b"- just\n- a list\n"), (YAML,)),
    # DESIGN.md: format is `sedreport-session/1`
    Case("format_wrong", yaml_value("format", "sedreport-session/9"), (YAML, names("format"))),
    # DESIGN.md: session_id is required, [A-Za-z0-9._-], 1-64 chars
    Case("session_id_missing", yaml_removed("session_id"), (YAML, names("session_id"))),
    Case("session_id_space", yaml_value("session_id", "ENDO 0412"), (YAML, names("session_id"))),
    Case("session_id_65_chars", yaml_value("session_id", "E" * 65), (YAML, names("session_id"))),
    # DESIGN.md: started is ISO 8601 *with offset*
    Case(
        "started_without_offset",
        yaml_value("started", STARTED.replace(tzinfo=None)),
        (YAML, names("started")),
    ),
    Case(
        "started_not_a_date", yaml_value("started", "yesterday morning"), (YAML, names("started"))
    ),
    # DESIGN.md: clock_offset_s is a number of seconds added to the file's times
    Case(
        "clock_offset_not_a_number",
        yaml_value("sources.spo2.clock_offset_s", "four"),
        (YAML, names("clock_offset_s")),
    ),
    # issue 2: ranges checked field by field, ASA 1-6
    Case("asa_0", yaml_value("patient.asa_class", 0), (YAML, names("asa_class"))),
    Case("asa_7", yaml_value("patient.asa_class", 7), (YAML, names("asa_class"))),
    # issue 2: weight 1-400 kg
    Case("weight_0", yaml_value("patient.weight_kg", 0), (YAML, names("weight_kg"))),
    Case("weight_500", yaml_value("patient.weight_kg", 500), (YAML, names("weight_kg"))),
    # issue 2: YAML .nan is a float in no range (a NaN passes `w < 1 or w > 400` checks)
    Case("weight_nan", yaml_value("patient.weight_kg", float("nan")), (YAML, names("weight_kg"))),
    # issue 2 types: YAML `true` is a bool (a Python int equal to 1), not an ASA class
    Case("asa_true", yaml_value("patient.asa_class", True), (YAML, names("asa_class"))),
    # issue 2: age 0-120
    Case("age_minus_1", yaml_value("patient.age_years", -1), (YAML, names("age_years"))),
    Case("age_130", yaml_value("patient.age_years", 130), (YAML, names("age_years"))),
    # issue 2: types checked field by field (age is a number of years)
    Case("age_not_a_number", yaml_value("patient.age_years", "sixty"), (YAML, names("age_years"))),
    # issue 2 "types, ranges": a negative barometric pressure or O2 flow is physically impossible
    Case("barometric_negative", yaml_value("barometric_mmHg", -760), (YAML, names("barometric"))),
    Case("oxygen_flow_negative", yaml_value("oxygen.flow_l_min", -2), (YAML, names("flow_l_min"))),
    # DESIGN.md: each source names its data file ({file: ...})
    Case("source_without_file", yaml_removed("sources.co2.file"), (YAML, names("file"))),
    # DESIGN.md: sex is female | male | other | unknown
    Case("sex_f", yaml_value("patient.sex", "f"), (YAML, names("sex"))),
    # DESIGN.md: target_depth is minimal | moderate | deep
    Case("target_depth_heavy", yaml_value("target_depth", "heavy"), (YAML, names("target_depth"))),
    # DESIGN.md / issue 2: data files live inside the folder; no absolute paths
    Case("path_absolute", co2_outside("absolute"), (names("session.yaml", "outside_co2.csv"),)),
    # DESIGN.md / issue 2: no `..`
    Case("path_dotdot", co2_outside("dotdot"), (names("session.yaml", "outside_co2.csv"),)),
    # DESIGN.md: "no `..`" -- even when the path would resolve inside the folder
    Case("path_dotdot_inside", dotdot_staying_inside, (YAML, names(".."))),
    # issue 2: no symlinks that leave the folder
    Case("symlink_outside", co2_outside("symlink"), (names("co2.csv"),)),
    # DESIGN.md: session.yaml names the data files; a named file must exist
    Case("data_file_missing", file_removed("co2.csv"), (names("co2.csv"),)),
    # DESIGN.md: co2 units are mmHg | kPa | percent
    Case(
        "co2_units_bar",
        yaml_value("sources.co2.units", "bar"),
        (names("session.yaml", "co2.csv"), names("unit")),
    ),
    # issue 2 validation: empty files
    Case("co2_empty_file", file_bytes("co2.csv", b""), (names("co2.csv"),)),
    Case("co2_header_only", file_bytes("co2.csv", b"time,co2\n"), (names("co2.csv"),)),
    # issue 2 validation names file and line: non-numeric values (data row 501 = line 502)
    Case(
        "co2_non_numeric",
        cell_text("co2.csv", 500, "co2", "thirty"),
        (at("co2.csv", file_line(500)),),
    ),
    # issue 2: non-numeric values -- "inf" parses as a float but is no CO2 value (line 2302)
    Case("co2_inf", cell_text("co2.csv", 2300, "co2", "inf"), (at("co2.csv", file_line(2300)),)),
    # DESIGN.md: a time is seconds or ISO 8601; "noon" is neither (line 2402)
    Case(
        "co2_time_not_a_time",
        cell_text("co2.csv", 2400, "time", "noon"),
        (at("co2.csv", file_line(2400)),),
    ),
    # issue 2: non-numeric values -- a "nan" time would slip past every ordering check (line 702)
    Case(
        "co2_time_nan", cell_text("co2.csv", 700, "time", "nan"), (at("co2.csv", file_line(700)),)
    ),
    # issue 2 validation: time going backwards (line 802 is earlier than line 801)
    Case("co2_time_backwards", co2_time_backwards, (at("co2.csv", file_line(800)),)),
    # issue 2 validation: duplicate times (lines 1201 and 1202 share a time; either is named)
    Case(
        "co2_time_duplicate",
        co2_time_duplicate,
        (at("co2.csv", file_line(1199), file_line(1200)),),
    ),
    # DESIGN.md: mixing seconds and ISO 8601 in one file is an error (first ISO row: line 1502)
    Case(
        "co2_mixed_time_styles",
        cell_text("co2.csv", 1500, "time", iso_time(60.0)),
        (at("co2.csv", file_line(1500)),),
    ),
    # issue 2: physiologically impossible CO2, > 150 mmHg
    Case(
        "co2_200_mmHg",
        cell_text("co2.csv", 2000, "co2", "200.0"),
        (at("co2.csv", file_line(2000)),),
    ),
    # issue 2: physiologically impossible CO2, < -5 mmHg
    Case(
        "co2_minus_10",
        cell_text("co2.csv", 2100, "co2", "-10.0"),
        (at("co2.csv", file_line(2100)),),
    ),
    # issue 2: the > 150 mmHg limit applies after kPa -> mmHg conversion (30 kPa = 225 mmHg)
    Case("co2_30_kPa", co2_kpa_30, (at("co2.csv", file_line(2200)),)),
    # issue 2: non-numeric values in the SpO2 trend (line 12)
    Case(
        "spo2_non_numeric",
        cell_text("spo2.csv", 10, "spo2", "ninety"),
        (at("spo2.csv", file_line(10)),),
    ),
    # issue 2: SpO2 outside 0-100
    Case("spo2_101", cell_text("spo2.csv", 30, "spo2", "101"), (at("spo2.csv", file_line(30)),)),
    Case("spo2_minus_1", cell_text("spo2.csv", 60, "spo2", "-1"), (at("spo2.csv", file_line(60)),)),
    # issue 2: pulse outside 0-300
    Case("pulse_400", cell_text("spo2.csv", 90, "pulse", "400"), (at("spo2.csv", file_line(90)),)),
    # issue 2 validation names file and line: non-numeric values in a dose (line 2)
    Case(
        "dose_non_numeric",
        cell_text("doses.csv", 0, "dose", "two"),
        (at("doses.csv", file_line(0)),),
    ),
    # issue 2: a "nan" dose is not a number and would pass a "negative?" test (line 3)
    Case("dose_nan", cell_text("doses.csv", 1, "dose", "nan"), (at("doses.csv", file_line(1)),)),
    # issue 2: negative doses (fentanyl, data row 2 = line 3)
    Case(
        "dose_negative", cell_text("doses.csv", 1, "dose", "-50"), (at("doses.csv", file_line(1)),)
    ),
    # issue 2: unknown units (a rate per fortnight is not a dose unit)
    Case(
        "dose_unit_per_fortnight",
        cell_text("doses.csv", 4, "unit", "mg/fortnight"),
        (at("doses.csv", file_line(4)),),
    ),
    # issue 2: unknown units (a count, not a mass or rate unit)
    Case(
        "dose_unit_tablets",
        cell_text("doses.csv", 0, "unit", "tablets"),
        (at("doses.csv", file_line(0)),),
    ),
    # issue 2: weight-based rates are resolved with weight_kg; without it they cannot be
    Case(
        "infusion_without_weight",
        infusion_no_weight,
        (at("doses.csv", file_line(2)) + names("weight_kg"),),
    ),
    # issue 2: an unknown event name is an error that lists the known ones
    Case(
        "event_unknown",
        cell_text("events.csv", 4, "event", "shout_loudly"),
        (at("events.csv", file_line(4)), names("airway_repositioning")),
    ),
    # DESIGN.md: oxygen_increase value = new L/min; issue 2: non-numeric values (line 5)
    Case(
        "event_value_non_numeric",
        cell_text("events.csv", 3, "value", "lots"),
        (at("events.csv", file_line(3)),),
    ),
    # issue 2 validation names file and line: undecodable bytes (latin-1 "é" on line 4)
    Case("events_latin1_byte", events_latin1, (at("events.csv", file_line(2)),)),
    # issue 2: undecodable bytes (random binary)
    Case("events_random_binary", events_binary, (names("events.csv"),)),
    # DESIGN.md: .csv.gz accepted wherever .csv is -- so a .gz that is not gzip is bad input
    Case("co2_gz_not_gzip", co2_gz_not_gzip, (names("co2.csv.gz"),)),
    # DESIGN.md .csv.gz: a gzip stream cut mid-way is bad input, not a crash
    Case("co2_gz_truncated", co2_gz_bytes(truncated), (names("co2.csv.gz"),)),
    # issue 2: undecodable bytes inside a well-formed gzip stream
    Case("co2_gz_random_content", co2_gz_bytes(gzip_of_random), (names("co2.csv.gz"),)),
    # DESIGN.md: EDF records are accepted for co2 -- a text file named .edf is bad input
    Case("co2_edf_not_edf", co2_as_edf("CO2", b"time,co2\n0,0\n"), (names("rec.edf"),)),
    # DESIGN.md / issue 2: the EDF channel is chosen by label; a label not in the file is an error
    Case(
        "co2_edf_channel_missing",
        co2_as_edf("Pleth"),
        (names("rec.edf", "session.yaml"), names("CO2", "channel")),
    ),
    # DESIGN.md: doses.csv is time,drug,dose,unit,route; a missing column is bad input
    Case("doses_missing_column", doses_no_unit, (names("doses.csv"), names("unit"))),
]


# ----- the malformed cases ----------------------------------------------------------------------
@pytest.fixture(scope="module")
def case_root(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """One folder for every case of this module (each case's session is built once)."""
    return tmp_path_factory.mktemp("malformed")


def case_run(root: Path, case: Case, command: str) -> Run:
    """Build the case's folder (once) and run ``command`` on it; ``record`` writes into a fresh
    ``out-<command>`` folder whose entries the run reports."""
    folder = root / case.id / SESSION_ID
    if not folder.parent.is_dir():
        parts = base_parts()
        case.mutate(parts, root / case.id)
        parts.write(root / case.id)
    out_dir = root / case.id / f"out-{command}"
    out_dir.mkdir()
    return run_cli(_argv(command, folder, out_dir / "record.pdf"), out_dir)


def assert_clean_error(run: Run, case: Case) -> None:
    """DESIGN.md "Exit codes" / issue 2 item 6: exit 2, one ``error:`` line naming the place."""
    info = run.describe()
    assert "Traceback" not in run.stderr + run.stdout, info
    assert run.returncode == 2, info
    lines = run.stderr.splitlines()
    assert len(lines) == 1, f"stderr must be exactly one line\n{info}"
    line = lines[0]
    assert line.startswith("error: ") and line[len("error: ") :].strip(), info
    # the <session> part of `error: <session>/<file>...`: folder name (= the base session_id)
    assert SESSION_ID in line, f"message does not name the session {SESSION_ID}\n{info}"
    for group in case.expect:
        assert any(re.search(p, line) for p in group), f"message names none of {group}\n{info}"


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_malformed_session_gives_one_line_error(case: Case, command: str, case_root: Path) -> None:
    run = case_run(case_root, case, command)
    assert_clean_error(run, case)
    if command == "record":
        # DESIGN.md "Exit codes": never a partial output file left behind
        assert run.out_dir_entries == (), run.describe()


def test_case_ids_are_unique() -> None:
    """Case ids name the folders and key the run cache, so they must not repeat."""
    ids = [c.id for c in CASES + CRITERIA_CASES]
    assert len(ids) == len(set(ids))


# ----- the builder itself: the mutations do what the case names say ------------------------------
def test_base_capnogram_is_plausible() -> None:
    """The base CO2 wave: 25 Hz, 120 s, baseline ~0 and plateau ~38 mmHg, 12 breaths/min."""
    parts = base_parts()
    data = np.loadtxt(parts.files["co2.csv"].decode().splitlines(), delimiter=",", skiprows=1)
    time_s, co2 = data[:, 0], data[:, 1]
    assert time_s.size == 3000
    np.testing.assert_allclose(np.diff(time_s), 0.04, atol=1e-9)
    assert 37.0 < co2.max() < 40.0 and co2.min() == 0.0
    # rising crossings of 19 mmHg (half the plateau): one per 5 s breath
    rising = np.flatnonzero((co2[:-1] < 19.0) & (co2[1:] >= 19.0))
    assert rising.size == 24
    np.testing.assert_allclose(np.diff(time_s[rising]), 5.0, atol=0.08)


def test_mutated_lines_hold_what_the_case_says() -> None:
    parts = base_parts()
    co2_time_backwards(parts, Path())
    t799, t800, t801 = (float(cell(parts, "co2.csv", i, "time")) for i in (799, 800, 801))
    assert t800 < t799 < t801
    lines = parts.files["co2.csv"].decode().splitlines()
    assert lines[file_line(800) - 1].startswith(f"{t800:.2f},")
    parts = base_parts()
    co2_kpa_30(parts, Path())
    assert 30.0 * 1000.0 / 133.322387415 > 150.0  # 225 mmHg: impossible (issue 2 limit)
    assert parts.files["co2.csv"].decode().splitlines()[2201] == "88.00,30.000"
    parts = base_parts()
    events_latin1(parts, Path())
    bad_line = parts.files["events.csv"].split(b"\n")[3]
    with pytest.raises(UnicodeDecodeError):
        bad_line.decode("utf-8")
    for i, raw in enumerate(parts.files["events.csv"].split(b"\n")):
        if i != 3:
            raw.decode("utf-8")  # every other line is clean UTF-8


# ----- positive cases -----------------------------------------------------------------------------
def _write(parts: SessionParts, tmp_path: Path) -> Path:
    folder = parts.write(tmp_path)
    (tmp_path / "out").mkdir()
    return folder


def test_valid_base_session_checks(tmp_path: Path) -> None:
    """The base session loads (exit 0), as text and as JSON (issue 2 item 6)."""
    folder = _write(base_parts(), tmp_path)
    runs = run_many(
        {
            "text": _argv("check", folder, Path()),
            "json": _argv("check", folder, Path(), "--format", "json"),
        }
    )
    for run in runs.values():
        assert run.returncode == 0, run.describe()
        assert "Traceback" not in run.stderr + run.stdout, run.describe()
        assert not any(ln.startswith("error:") for ln in run.stderr.splitlines()), run.describe()
    json.loads(runs["json"].stdout)
    assert SESSION_ID in runs["json"].stdout


def test_valid_base_session_episodes_json(tmp_path: Path) -> None:
    """DESIGN.md "Machine-readable outputs": the episodes JSON object and its top-level keys."""
    folder = _write(base_parts(), tmp_path)
    run = run_cli(_argv("episodes", folder, Path()))
    assert run.returncode == 0, run.describe()
    doc = json.loads(run.stdout)
    for key in ("session_id", "started", "criteria", "episodes", "summary", "quality"):
        assert key in doc, f"missing {key!r}"
    assert doc["session_id"] == SESSION_ID
    assert isinstance(doc["episodes"], list)


def test_valid_base_session_record(tmp_path: Path) -> None:
    """DESIGN.md: `sedreport record SESSION -o FILE.pdf` writes the record."""
    folder = _write(base_parts(), tmp_path)
    out_pdf = tmp_path / "out" / "record.pdf"
    run = run_cli(_argv("record", folder, out_pdf))
    assert run.returncode == 0, run.describe()
    assert out_pdf.read_bytes()[:5] == b"%PDF-"


def test_co2_only_session_loads_with_warnings(tmp_path: Path) -> None:
    """Issue 2 "Done when": a valid session with only a CO2 file loads with warnings for
    what is missing (the spo2, doses and events streams)."""
    folder = _write(co2_only_parts(), tmp_path)
    runs = run_many(
        {
            "text": _argv("check", folder, Path()),
            "json": _argv("check", folder, Path(), "--format", "json"),
        }
    )
    for run in runs.values():
        assert run.returncode == 0, run.describe()
        assert "Traceback" not in run.stderr + run.stdout, run.describe()
    json.loads(runs["json"].stdout)
    said = runs["json"].stdout + runs["json"].stderr
    for stream in ("spo2", "doses", "events"):
        assert stream in said, f"{stream} not mentioned\n{runs['json'].describe()}"
    assert re.search(r"missing|warn", said, flags=re.IGNORECASE), runs["json"].describe()


BOUNDARIES = {
    # DESIGN.md: session_id 1-64 chars -- 64 is allowed
    "session_id_64_chars": yaml_value("session_id", "E" * 64),
    # issue 2: ASA 1-6, weight 1-400 kg, age 0-120 are inclusive ranges
    "asa_1": yaml_value("patient.asa_class", 1),
    "asa_6": yaml_value("patient.asa_class", 6),
    "weight_400": yaml_value("patient.weight_kg", 400),
    "age_120": yaml_value("patient.age_years", 120),
    # DESIGN.md: `.csv.gz` is accepted wherever `.csv` is
    "co2_real_gzip": co2_real_gzip,
    # DESIGN.md: times may be ISO 8601 timestamps (so the mixed-styles case fails on mixing)
    "co2_iso_times": co2_all_iso_times,
    # common practice: monitor exports often end lines with CRLF; that is not malformed
    "crlf_line_ends": crlf_line_ends,
    # issue 2 rejects only symlinks that *leave* the folder; one to a file inside is fine
    "symlink_inside": co2_in_subfolder_via_symlink,
    # DESIGN.md: EDF records are accepted for co2 with {file: rec.edf, channel: CO2}
    "co2_edf": co2_as_edf("CO2"),
    # issue 2: a CO2 gap (> 1 s) is a data-quality finding, not an error
    "co2_gap": co2_gap,
}


def test_boundary_values_load(tmp_path: Path) -> None:
    """Values on the edge of each range load (exit 0): the limits above are not off by one."""
    argvs = {}
    for name, mutate in BOUNDARIES.items():
        parts = base_parts()
        mutate(parts, tmp_path / name)
        folder = parts.write(tmp_path / name)
        argvs[name] = _argv("check", folder, Path())
    runs = run_many(argvs)
    bad = {k: r.describe() for k, r in runs.items() if r.returncode != 0}
    assert not bad, bad


def test_unknown_key_is_warned_not_fatal(tmp_path: Path) -> None:
    """Issue 2: unknown keys in session.yaml are warned, not fatal."""
    parts = base_parts()
    set_field(parts, "ward_colour", "teal")
    folder = _write(parts, tmp_path)
    run = run_cli(_argv("check", folder, Path()))
    assert run.returncode == 0, run.describe()
    assert "ward_colour" in run.stdout + run.stderr, run.describe()


def test_gap_is_reported_not_bridged(tmp_path: Path) -> None:
    """Issue 2: a CO2 step > 1 s is recorded as a data-quality finding (exit 0, named)."""
    parts = base_parts()
    co2_gap(parts, tmp_path)
    folder = _write(parts, tmp_path)
    run = run_cli(_argv("check", folder, Path(), "--format", "json"))
    assert run.returncode == 0, run.describe()
    assert "gap" in (run.stdout + run.stderr).lower(), run.describe()


def test_missing_folder_is_bad_input(tmp_path: Path) -> None:
    """DESIGN.md "Exit codes": a session folder that does not exist is bad input (exit 2)."""
    run = run_cli(_argv("check", tmp_path / SESSION_ID, Path()))
    assert_clean_error(run, Case("missing_folder", no_yaml, ()))


def test_truncated_edf_fails_cleanly_or_warns(tmp_path: Path) -> None:
    """An EDF cut mid-record: either bad input (exit 2, names rec.edf) or read with a warning.

    The contract does not say which (a monitor export cut short still holds usable data), but
    it does say data are never dropped silently (issue 2; rules: count it and report it): the
    incomplete last data record must at least be reported.
    """
    parts = base_parts()
    co2_edf_truncated(parts, tmp_path)
    folder = _write(parts, tmp_path)
    run = run_cli(_argv("check", folder, Path()))
    if run.returncode == 2:
        assert_clean_error(run, Case("co2_edf_truncated", co2_edf_truncated, (names("rec.edf"),)))
    else:
        assert run.returncode == 0, run.describe()
        said = (run.stdout + run.stderr).lower()
        assert "rec.edf" in said and re.search(r"truncat|incomplete", said), run.describe()


SHIPPED_CRITERIA = REPO_ROOT / "sedreport" / "templates" / "criteria" / "default.yaml"

CRITERIA_CASES = [
    # DESIGN.md: criteria is a path inside the folder; a named file must exist
    Case(
        "criteria_missing_file",
        criteria_file("missing_criteria.yaml", None),
        (names("missing_criteria.yaml"),),
    ),
    # DESIGN.md: the criteria path must be inside the folder (a valid file placed outside)
    Case(
        "criteria_outside_folder",
        criteria_file("../outside/crit.yaml", SHIPPED_CRITERIA.read_bytes()),
        (names("session.yaml", "crit.yaml"),),
    ),
    # DESIGN.md "Exit codes": a criteria file that is not YAML at all is bad input
    Case(
        "criteria_not_yaml",
        criteria_file("crit.yaml", b"{{{{ not: [yaml\n"),
        (names("crit.yaml"),),
    ),
]


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("case", CRITERIA_CASES, ids=[c.id for c in CRITERIA_CASES])
def test_bad_criteria_reference(case: Case, command: str, case_root: Path) -> None:
    """A bad ``criteria:`` entry: `episodes` and `record` must stop with exit 2 naming it.

    `check` may not read the criteria at all (the contract does not say), so it may exit 0;
    if it does reject them, the error must be as clean as any other.
    """
    run = case_run(case_root, case, command)
    if command == "check" and run.returncode == 0:
        return
    assert_clean_error(run, case)
    if command == "record":
        assert run.out_dir_entries == (), run.describe()


def test_check_many_sessions_one_line_per_error(tmp_path: Path) -> None:
    """Issue 2 item 6: `check SESSION...` exits 2 when any session has an error, with one
    stderr line per error, each naming its own session and place."""
    folders = []
    for name, mutate in (
        ("ENDO-0412", None),
        ("ENDO-0413", yaml_value("patient.asa_class", 7)),
        ("ENDO-0414", cell_text("co2.csv", 2000, "co2", "200.0")),
    ):
        parts = base_parts()
        set_field(parts, "session_id", name)
        if mutate is not None:
            mutate(parts, tmp_path)
        folders.append(str(parts.write(tmp_path, name=name)))
    argv = ["check", *folders]
    run = run_cli(argv)
    assert "Traceback" not in run.stderr + run.stdout, run.describe()
    assert run.returncode == 2, run.describe()
    lines = run.stderr.splitlines()
    assert len(lines) == 2 and all(ln.startswith("error: ") for ln in lines), run.describe()
    assert any("ENDO-0413/session.yaml" in ln and "asa_class" in ln for ln in lines)
    assert any(re.search(r"ENDO-0414/co2\.csv:2002(?!\d)", ln) for ln in lines), run.describe()
    assert not any("ENDO-0412" in ln for ln in lines), run.describe()
