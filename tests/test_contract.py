"""Independent audit of the machine-readable contract of DESIGN.md, through the real CLI.

Every check runs the ``sedreport`` click group in-process (click's test runner, stdout and
stderr apart; ``test_cli_smoke.py`` runs the entry point as a process) on invented demo sessions
written
with :func:`sedreport.demo.write_scenario` (or :func:`sedreport.demo.simulate_and_write` for a
variant) and compares the output with the planted truth JSON, with the raw data files read
here independently, and with the contract text of DESIGN.md ("Machine-readable outputs", "The
session folder"). The CLI runs are made once per module, so the file stays fast.

Tolerances: the breaths csv prints times to 3 decimals (0.0005 s rounding), EtCO2/FiCO2 to 2 and
rr to 2; the episodes json prints full floats. Where a check allows for that rounding it says so.
"""

from __future__ import annotations

import csv
import dataclasses
import datetime as dt
import gzip
import hashlib
import io
import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import yaml
from click.testing import CliRunner

from sedreport import demo
from sedreport.cli import cli
from sedreport.demo.case import Apnoea

pytestmark = pytest.mark.filterwarnings("error")

REPO = Path(__file__).resolve().parents[1]
CRITERIA_DIR = REPO / "sedreport" / "templates" / "criteria"
SHIPPED_CRITERIA = sorted(p.name for p in CRITERIA_DIR.glob("*.yaml"))
EPOCH = "1700000000"
#: DESIGN.md contract: the top-level keys and per-episode keys of ``episodes --format json``.
TOP_KEYS = {
    "session_id", "started", "criteria", "episodes", "events", "brief_dips", "summary", "quality",
}  # fmt: skip
EVENT_KEYS = {
    "id", "episodes", "start_s", "end_s", "start_time", "severity", "descriptors",
    "interventions", "outcome",
}  # fmt: skip
TIERS = ("minimal", "minor", "moderate", "sentinel")
EPISODE_KEYS = {
    "id", "kind", "start_s", "end_s", "duration_s", "start_time", "severity",
    "peak_etco2_mmHg", "min_spo2_pct", "min_rr_per_min", "preceding_doses",
    "interventions", "notes", "event",
}  # fmt: skip
KINDS = {
    "apnoea",
    "hypoventilation",
    "desaturation",
    "rebreathing",
    "sloped_plateau",
    "signal_loss",
    "low_amplitude",
    "etco2_fall",
    "co2_signal_absent",
    # the cardiovascular findings of the sedation-record work (non-invasive BP, pulse)
    "hypotension",
    "bradycardia",
}
BREATH_COLUMNS = [
    "start_s", "end_s", "etco2_mmHg", "fico2_mmHg", "rr_per_min", "phase3_slope_mmHg_s", "valid",
]  # fmt: skip
#: The breaths csv rounds times to 1 ms: half a unit plus float slack.
CSV_TIME_TOL_S = 0.0006
#: Planted-truth edges vs detected breath edges: well under one expiration (~2.5 s at
#: 15/min), so a wrong convention (e.g. dating an apnoea from the last breath's start, or from
#: the moment the 15 s criterion is met) cannot pass.
TRUTH_EDGE_TOL_S = 0.5
EDF_RANGE_MMHG = (-10.0, 150.0)
#: EDF 16-bit digital resolution of that physical range (EDF spec, Kemp et al., Electroenceph
#: Clin Neurophysiol 1992: 2-byte integers scaled linearly to the physical range).
EDF_RES_MMHG = (EDF_RANGE_MMHG[1] - EDF_RANGE_MMHG[0]) / 65535.0
SCENARIO_NAMES = list(demo.SCENARIOS)
#: Scenarios whose episodes also run as csv (two episodes of two kinds; one hypoventilation).
CSV_EPISODE_RUNS = ["desaturation_bag_mask", "radiology_opioid_hypoventilation"]
#: Scenarios whose breaths csv is checked against the contract, and the breath-dated kinds:
#: kind -> (breath column its start lies on, breath column its end lies on), DESIGN.md.
BREATH_RUNS = ["upper_gi_apnoea", "desaturation_bag_mask", "gap_and_probe_artefact", "short"]
EDGE_RUNS = {
    "radiology_opioid_hypoventilation": ("hypoventilation", "start_s", "end_s"),
    "rebreathing_under_drapes": ("rebreathing", "start_s", "start_s"),
    "copd_sloped_plateau": ("sloped_plateau", "start_s", "end_s"),
}


# ----------------------------------------------------------------------------- workspace
def _short_apnoea_spec():
    """upper_gi_apnoea with a ~23 s apnoea, CO2 in mmHg, seconds, no offset (EDF-friendly)."""
    base = demo.SCENARIOS["upper_gi_apnoea"]
    return dataclasses.replace(
        base,
        session_id="AUDIT-APN-24",
        scenario="audit_short_apnoea",
        planted=(Apnoea(onset_s=312.0, pause_s=24.0),),
        co2_units="mmHg",
        co2_time_style="seconds",
        co2_offset_s=0.0,
    )


def _edit_yaml(folder: Path, edit) -> None:
    doc = yaml.safe_load((folder / "session.yaml").read_text(encoding="utf-8"))
    edit(doc)
    (folder / "session.yaml").write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")


def _shifted_copy(src: Path, dst: Path, shift_s: float) -> Path:
    """Copy with co2/spo2 file times moved by ``shift_s`` and ``clock_offset_s = -shift_s``."""
    shutil.copytree(src, dst)
    co2 = gzip.decompress((src / "co2.csv.gz").read_bytes()).decode("ascii").splitlines()
    rows = [f"{float(t) + shift_s:.2f},{v}" for t, v in (r.split(",") for r in co2[1:])]
    (dst / "co2.csv.gz").write_bytes(
        gzip.compress(("time,co2\n" + "\n".join(rows) + "\n").encode())
    )
    spo2 = (src / "spo2.csv").read_text(encoding="ascii").splitlines()
    rows = [f"{float(r.split(',')[0]) + shift_s:g},{r.split(',', 1)[1]}" for r in spo2[1:]]
    (dst / "spo2.csv").write_text(spo2[0] + "\n" + "\n".join(rows) + "\n", encoding="ascii")

    def edit(doc):
        doc["sources"]["co2"]["clock_offset_s"] = -shift_s
        doc["sources"]["spo2"]["clock_offset_s"] = -shift_s

    _edit_yaml(dst, edit)
    return dst


def _edf_copy(src: Path, dst: Path) -> Path:
    """Copy whose CO2 is an EDF file (edfio) holding the same samples as ``co2.csv.gz``."""
    import edfio

    shutil.copytree(src, dst)
    t, v = _read_co2(src)
    fs = round(1.0 / float(np.median(np.diff(t))))
    assert abs(t[0]) < 1e-9 and np.allclose(np.diff(t), 1.0 / fs, atol=1e-6)
    sig = edfio.EdfSignal(
        v, fs, label="CO2", physical_dimension="mmHg", physical_range=EDF_RANGE_MMHG
    )
    started = dt.datetime.fromisoformat(_yaml(src)["started"])
    edf = edfio.Edf(
        [sig], starttime=started.time().replace(tzinfo=None), data_record_duration=1 / fs
    )
    edf.startdate = started.date()
    (dst / "co2.csv.gz").unlink()
    edf.write(dst / "co2.edf")

    def edit(doc):
        doc["sources"]["co2"] = {"file": "co2.edf", "channel": "CO2", "clock_offset_s": 0.0}

    _edit_yaml(dst, edit)
    return dst


def _low_desat_criteria(path: Path) -> Path:
    """default.yaml with desaturation.min_duration_s = 5 s, so a 29 s artefact would fire."""
    doc = yaml.safe_load((CRITERIA_DIR / "default.yaml").read_text(encoding="utf-8"))
    doc["name"] = "audit_desat_5s"
    doc["desaturation"]["min_duration_s"]["value"] = 5
    doc["desaturation"]["min_duration_s"]["source"] = "audit variant of default.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


def _bad_criteria(path: Path) -> Path:
    """default.yaml with apnoea.min_duration_s = -5 (a duration must be positive)."""
    doc = yaml.safe_load((CRITERIA_DIR / "default.yaml").read_text(encoding="utf-8"))
    doc["apnoea"]["min_duration_s"]["value"] = -5
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


@dataclass(frozen=True)
class Ran:
    """What one command printed and returned."""

    returncode: int
    stdout: str
    stderr: str


def _run(args: list[str]) -> Ran:
    """``sedreport ARGS`` in-process with ``SOURCE_DATE_EPOCH`` set (reproducible outputs)."""
    result = CliRunner(env={"SOURCE_DATE_EPOCH": EPOCH}).invoke(cli, args)
    return Ran(result.exit_code, result.stdout, result.stderr)


@pytest.fixture(scope="module")
def ws(tmp_path_factory):
    """Demo sessions, their variants, and every CLI run of this module (run in parallel)."""
    root = tmp_path_factory.mktemp("contract")
    folders = {n: demo.write_scenario(root, n, seed=0) for n in SCENARIO_NAMES}
    short = demo.simulate_and_write(root, _short_apnoea_spec(), seed=0)
    folders["short"] = short
    folders["shifted"] = _shifted_copy(
        folders["desaturation_bag_mask"], root / "shifted" / "DEMO-ERCP-07", 7.0
    )
    folders["edf"] = _edf_copy(short, root / "edf" / "AUDIT-APN-24")
    truth = {n: demo.load_truth(root / f"{f.name}.truth.json") for n, f in folders.items()}
    low = _low_desat_criteria(root / "desat_5s.yaml")
    # ``short`` runs with each shipped criteria file below (default.yaml is its plain run).
    jobs = {
        f"ep:{n}": ["episodes", str(f), "--format", "json"]
        for n, f in folders.items()
        if n != "short"
    }
    for n in CSV_EPISODE_RUNS:
        jobs[f"epcsv:{n}"] = ["episodes", str(folders[n]), "--format", "csv"]
    for n in [*BREATH_RUNS, *EDGE_RUNS, "shifted", "edf"]:
        jobs[f"br:{n}"] = ["breaths", str(folders[n]), "--format", "csv"]
    for name in SHIPPED_CRITERIA:
        path = str(CRITERIA_DIR / name)
        jobs[f"crit:{name}"] = ["episodes", str(short), "--format", "json", "--criteria", path]
    jobs["ep:artefact_5s"] = ["episodes", str(folders["gap_and_probe_artefact"]), "--format",
                              "json", "--criteria", str(low)]  # fmt: skip
    ugi = folders["upper_gi_apnoea"]
    bad = _bad_criteria(root / "bad_criteria.yaml")
    jobs["bad_ep"] = ["episodes", str(ugi), "--format", "json", "--criteria", str(bad)]
    (root / "out_bad").mkdir()
    jobs["bad_rec"] = ["record", str(ugi), "-o", str(root / "out_bad" / "x.pdf"), "--criteria",
                       str(bad)]  # fmt: skip
    outs = {k: root / "out" / f"{k}.pdf" for k in ("rec_a", "rec_b", "rec_edf")}
    outs["rec_b"] = root / "out_b" / "rec_b.pdf"
    for p in outs.values():
        p.parent.mkdir(exist_ok=True)
    jobs["rec_a"] = ["record", str(ugi), "-o", str(outs["rec_a"])]
    jobs["rec_b"] = ["record", str(ugi), "-o", str(outs["rec_b"])]
    jobs["rec_edf"] = ["record", str(folders["edf"]), "-o", str(outs["rec_edf"])]
    results = {key: _run(args) for key, args in jobs.items()}
    return {"root": root, "folders": folders, "truth": truth, "runs": results, "pdf": outs}


def _ok(ws, key: str) -> str:
    res = ws["runs"][key]
    assert res.returncode == 0, f"{key}: exit {res.returncode}: {res.stderr[-2000:]}"
    return res.stdout


def _strict_json(text: str) -> dict:
    """json.loads that rejects NaN/Infinity (RFC 8259 JSON has no such tokens)."""

    def bad(token):
        raise ValueError(f"non-JSON constant {token}")

    return json.loads(text, parse_constant=bad)


def _episodes(ws, key: str) -> dict:
    return _strict_json(_ok(ws, key))


def _breaths(ws, key: str) -> tuple[list[str], dict[str, np.ndarray]]:
    rows = list(csv.reader(io.StringIO(_ok(ws, key))))
    header, body = rows[0], rows[1:]
    cols = {}
    for j, name in enumerate(header):
        raw = [r[j] for r in body]
        if name == "valid":
            assert set(raw) <= {"true", "false"}, f"valid column values {set(raw)}"
            cols[name] = np.array([x == "true" for x in raw])
        elif name != "reason":
            cols[name] = np.array([float(x) if x != "" else np.nan for x in raw])
    return header, cols


def _yaml(folder: Path) -> dict:
    return yaml.safe_load((folder / "session.yaml").read_text(encoding="utf-8"))


def _file_seconds(values: list[str], started: str) -> np.ndarray:
    """Time column as seconds since ``started`` (numbers, or ISO 8601 with an offset)."""
    try:
        return np.array([float(x) for x in values])
    except ValueError:
        t0 = dt.datetime.fromisoformat(started)
        return np.array([(dt.datetime.fromisoformat(x) - t0).total_seconds() for x in values])


def _read_co2(folder: Path) -> tuple[np.ndarray, np.ndarray]:
    """CO2 samples on the session clock (file time + clock_offset_s), values as written."""
    doc = _yaml(folder)
    text = gzip.decompress((folder / "co2.csv.gz").read_bytes()).decode("ascii")
    rows = [r.split(",") for r in text.splitlines()[1:]]
    t = _file_seconds([r[0] for r in rows], str(doc["started"]))
    return t + float(doc["sources"]["co2"]["clock_offset_s"]), np.array([float(r[1]) for r in rows])


def _read_spo2(folder: Path) -> tuple[np.ndarray, np.ndarray]:
    doc = _yaml(folder)
    rows = [r.split(",") for r in (folder / "spo2.csv").read_text().splitlines()[1:]]
    t = _file_seconds([r[0] for r in rows], str(doc["started"]))
    return t + float(doc["sources"]["spo2"]["clock_offset_s"]), np.array(
        [float(r[1]) for r in rows]
    )


def _of_kind(doc: dict, kind: str) -> list[dict]:
    return [e for e in doc["episodes"] if e["kind"] == kind]


JSON_RUNS = [f"ep:{n}" for n in [*SCENARIO_NAMES, "shifted", "edf"]] + [
    f"crit:{n}" for n in SHIPPED_CRITERIA
]


# ----------------------------------------------------------------------------- episodes json
@pytest.mark.parametrize("key", JSON_RUNS)
def test_episodes_json_shape(ws, key):
    # DESIGN.md contract, "Machine-readable outputs".
    doc = _episodes(ws, key)
    assert set(doc) == TOP_KEYS
    name = key.split(":", 1)[1]
    folder = ws["folders"].get(name, ws["folders"]["short"])
    meta = _yaml(folder)
    assert doc["session_id"] == meta["session_id"]
    started = dt.datetime.fromisoformat(doc["started"])
    assert started == dt.datetime.fromisoformat(str(meta["started"]))
    assert isinstance(doc["criteria"], dict) and isinstance(doc["summary"], dict)
    assert isinstance(doc["quality"], dict)
    starts = []
    for i, e in enumerate(doc["episodes"], start=1):
        assert EPISODE_KEYS <= set(e), f"missing {EPISODE_KEYS - set(e)}"
        assert e["id"] == f"E{i}"
        assert e["kind"] in KINDS
        assert all(isinstance(e[k], list) for k in ("preceding_doses", "interventions", "notes"))
        assert e["start_s"] <= e["end_s"]
        assert e["duration_s"] == pytest.approx(e["end_s"] - e["start_s"], abs=1e-9)
        # start_time = started + start_s; printed to the millisecond.
        shown = dt.datetime.fromisoformat(e["start_time"])
        assert shown.utcoffset() == started.utcoffset()
        delta = (shown - started).total_seconds() - e["start_s"]
        assert abs(delta) <= 0.001, f"{e['id']}: start_time off by {delta:.4f} s"
        starts.append(e["start_s"])
    assert starts == sorted(starts), "ids E1.. must follow onset order"
    _check_events(doc)


def _check_events(doc: dict) -> None:
    """DESIGN.md: events graded once; each episode names its event or null, and its severity
    equals the event's (null for findings); events_by_severity counts the events."""
    by_id = {ev["id"]: ev for ev in doc["events"]}
    for i, ev in enumerate(doc["events"], start=1):
        assert EVENT_KEYS <= set(ev) and ev["id"] == f"A{i}" and ev["severity"] in TIERS
        assert all(set(d) >= {"text", "tier"} for d in ev["descriptors"])
    for e in doc["episodes"]:
        if e["event"] is None:
            assert e["severity"] is None
        else:
            assert e["id"] in by_id[e["event"]]["episodes"]
            assert e["severity"] == by_id[e["event"]]["severity"]
    counts = doc["summary"]["events_by_severity"]
    assert counts == {t: sum(ev["severity"] == t for ev in doc["events"]) for t in TIERS}


@pytest.mark.parametrize("name", CSV_EPISODE_RUNS)
def test_episodes_csv_matches_json(ws, name):
    # DESIGN.md contract: "--format csv prints one row an episode with the scalar fields".
    doc = _episodes(ws, f"ep:{name}")
    rows = list(csv.DictReader(io.StringIO(_ok(ws, f"epcsv:{name}"))))
    assert len(rows) == len(doc["episodes"]) > 0
    for e, row in zip(doc["episodes"], rows, strict=True):
        scalars = {k: v for k, v in e.items() if not isinstance(v, list | dict)}
        assert set(scalars) <= set(row), f"csv lacks {set(scalars) - set(row)}"
        for k, v in scalars.items():
            if v is None:
                assert row[k] == "", k
            elif isinstance(v, float | int) and not isinstance(v, bool):
                assert float(row[k]) == pytest.approx(v, rel=1e-12, abs=1e-12), k
            else:
                assert row[k] == str(v), k


def test_planted_episodes_found(ws):
    # Issue 4 "Done when": every planted episode found with onset within 3 s, kinds as planted.
    for name in [*SCENARIO_NAMES, "short"]:
        key = "crit:default.yaml" if name == "short" else f"ep:{name}"
        got = _episodes(ws, key)["episodes"]
        for p in ws["truth"][name]["episodes"]:
            hits = [e for e in got if e["kind"] == p["kind"]]
            assert hits, f"{name}: planted {p['kind']} not found"
            best = min(abs(e["start_s"] - p["start_s"]) for e in hits)
            assert best <= 3.0, f"{name}: {p['kind']} onset off by {best:.2f} s"
        assert len(got) == len(ws["truth"][name]["episodes"]), f"{name}: extra episodes"


def test_quiet_scenario_has_no_episode(ws):
    # Issue 4 "Done when": no episode in the quiet scenario.
    assert _episodes(ws, "ep:quiet_colonoscopy")["episodes"] == []


# ----------------------------------------------------------------------------- breaths csv
@pytest.mark.parametrize("name", [*BREATH_RUNS, *EDGE_RUNS])
def test_breaths_csv_contract(ws, name):
    # DESIGN.md contract: column order, rr = 60 / (start - previous start), start < end,
    # FiCO2 (inspired baseline) below EtCO2 for a valid breath.
    header, b = _breaths(ws, f"br:{name}")
    assert header[:7] == BREATH_COLUMNS
    start, end, rr, valid = b["start_s"], b["end_s"], b["rr_per_min"], b["valid"]
    assert start.size > 100 and np.all(start < end) and np.all(np.diff(start) > 0)
    expected = np.r_[np.nan, 60.0 / np.diff(start)]
    # Rounding: start to 1 ms (error in the difference <= 0.001 s), rr to 0.01.
    tol = np.r_[np.nan, 60.0 * 0.001 / np.diff(start) ** 2] + 0.005 + 1e-9
    shown = np.isfinite(rr)
    assert np.all(np.abs(rr - expected)[shown] <= tol[shown])
    # A rate may be left blank only for the first breath or next to an invalid breath.
    blank = np.flatnonzero(~shown)
    next_to_invalid = ~valid | np.r_[False, ~valid[:-1]]
    assert set(blank) <= {0} | set(np.flatnonzero(next_to_invalid)), f"blank rr at {blank}"
    et, fi = b["etco2_mmHg"][valid], b["fico2_mmHg"][valid]
    assert np.all(np.isfinite(et))
    both = np.isfinite(fi)
    assert np.all(fi[both] < et[both])


# ----------------------------------------------------------------------------- time conventions
@pytest.mark.parametrize("name", ["upper_gi_apnoea", "desaturation_bag_mask", "short"])
def test_apnoea_dated_from_breaths(ws, name):
    # DESIGN.md: apnoea runs from the end of the last breath before the pause to the start of
    # the next breath, dated from the last breath (not from when the criterion was met).
    key = "crit:default.yaml" if name == "short" else f"ep:{name}"
    apnoeas = _of_kind(_episodes(ws, key), "apnoea")
    planted = [p for p in ws["truth"][name]["episodes"] if p["kind"] == "apnoea"]
    assert len(apnoeas) == len(planted) == 1
    _, b = _breaths(ws, f"br:{name}")
    a, p = apnoeas[0], planted[0]
    before = np.flatnonzero(b["end_s"] <= a["start_s"] + CSV_TIME_TOL_S)
    after = np.flatnonzero(b["start_s"] >= a["end_s"] - CSV_TIME_TOL_S)
    assert before.size and after.size
    assert abs(b["end_s"][before[-1]] - a["start_s"]) <= CSV_TIME_TOL_S
    assert abs(b["start_s"][after[0]] - a["end_s"]) <= CSV_TIME_TOL_S
    assert after[0] == before[-1] + 1, "a breath lies inside the apnoea"
    assert abs(a["start_s"] - p["start_s"]) <= TRUTH_EDGE_TOL_S
    assert abs(a["end_s"] - p["end_s"]) <= TRUTH_EDGE_TOL_S


@pytest.mark.parametrize("name", list(EDGE_RUNS))
def test_breath_dated_episode_edges(ws, name):
    # DESIGN.md: hypoventilation and sloped_plateau run from the first to the last qualifying
    # breath (start of the first, end of the last); rebreathing from the first breath followed
    # by a raised inspired baseline to the breath that closes the last one (its start).
    kind, start_col, end_col = EDGE_RUNS[name]
    (e,) = _of_kind(_episodes(ws, f"ep:{name}"), kind)
    (p,) = [p for p in ws["truth"][name]["episodes"] if p["kind"] == kind]
    _, b = _breaths(ws, f"br:{name}")
    assert np.min(np.abs(b[start_col] - e["start_s"])) <= CSV_TIME_TOL_S
    assert np.min(np.abs(b[end_col] - e["end_s"])) <= CSV_TIME_TOL_S
    assert abs(e["start_s"] - p["start_s"]) <= TRUTH_EDGE_TOL_S
    assert abs(e["end_s"] - p["end_s"]) <= TRUTH_EDGE_TOL_S


@pytest.mark.parametrize("name", ["desaturation_bag_mask", "shifted"])
def test_desaturation_dated_from_spo2_samples(ws, name):
    # DESIGN.md: from the first SpO2 sample below the threshold (90 %, Cravero et al.,
    # Pediatrics 2006) to the first one back above it; file times + clock_offset_s.
    desats = _of_kind(_episodes(ws, f"ep:{name}"), "desaturation")
    assert len(desats) == 1
    assert ws["truth"][name]["artefacts"] == []
    t, spo2 = _read_spo2(ws["folders"][name])
    low = spo2 < 90.0
    onsets = np.flatnonzero(low & ~np.r_[False, low[:-1]])
    d = desats[0]
    k = onsets[np.argmin(np.abs(t[onsets] - d["start_s"]))]
    assert d["start_s"] == pytest.approx(t[k], abs=1e-6)
    back = k + np.flatnonzero(~low[k:])[0]
    assert d["end_s"] == pytest.approx(t[back], abs=1e-6)
    truth = [p for p in ws["truth"][name]["episodes"] if p["kind"] == "desaturation"]
    assert [d["start_s"], d["end_s"]] == pytest.approx([truth[0]["start_s"], truth[0]["end_s"]])


def test_signal_loss_dated_from_co2_samples(ws):
    # DESIGN.md: signal_loss from the last sample before a gap to the first after it; a CO2
    # step > 1 s is a gap (session format). The file has ISO times and clock_offset_s -1.5.
    folder = ws["folders"]["gap_and_probe_artefact"]
    assert float(_yaml(folder)["sources"]["co2"]["clock_offset_s"]) != 0.0
    t, _ = _read_co2(folder)
    steps = np.flatnonzero(np.diff(t) > 1.0)
    assert steps.size == 1
    losses = _of_kind(_episodes(ws, "ep:gap_and_probe_artefact"), "signal_loss")
    co2 = [e for e in losses if e.get("subtype") in (None, "co2")]
    assert len(co2) == 1
    assert co2[0]["start_s"] == pytest.approx(t[steps[0]], abs=1e-6)
    assert co2[0]["end_s"] == pytest.approx(t[steps[0] + 1], abs=1e-6)


def test_gap_is_never_apnoea(ws):
    # DESIGN.md / issue 4: "a data gap never reported as apnoea". The 75 s gap is longer than
    # every apnoea criterion, so bridging it would fire.
    doc = _episodes(ws, "ep:gap_and_probe_artefact")
    assert _of_kind(doc, "apnoea") == []
    for key in JSON_RUNS:
        doc = _episodes(ws, key)
        for a in _of_kind(doc, "apnoea"):
            for g in _of_kind(doc, "signal_loss"):
                assert a["end_s"] <= g["start_s"] or a["start_s"] >= g["end_s"], key


def test_probe_artefact_is_not_desaturation(ws):
    # DESIGN.md / issue 4: SpO2 artefact marking. With desaturation.min_duration_s lowered to
    # 5 s the 29 s of artefact readings below 90 % would fire if they were not rejected (so
    # would the start-up readings after the probe acquires, also planted in this scenario).
    folder = ws["folders"]["gap_and_probe_artefact"]
    (art,) = [
        a for a in ws["truth"]["gap_and_probe_artefact"]["artefacts"] if a["kind"] == "motion"
    ]
    t, spo2 = _read_spo2(folder)
    inside = (t >= art["start_s"]) & (t <= art["end_s"])
    assert np.count_nonzero(spo2[inside] < 90.0) >= 20  # the check has teeth
    for key in ("ep:gap_and_probe_artefact", "ep:artefact_5s"):
        assert _of_kind(_episodes(ws, key), "desaturation") == [], key
    assert _episodes(ws, "ep:artefact_5s")["criteria"]["name"] == "audit_desat_5s"


def test_clock_offset_applied(ws):
    # DESIGN.md session format: clock_offset_s is added to the file's times. The same data with
    # every co2/spo2 time moved by +7 s and clock_offset_s = -7 must give the same results.
    ref = _episodes(ws, "ep:desaturation_bag_mask")["episodes"]
    got = _episodes(ws, "ep:shifted")["episodes"]
    kinds = ["apnoea", "desaturation", "hypotension"]
    assert [e["kind"] for e in got] == [e["kind"] for e in ref] == kinds
    for r, g in zip(ref, got, strict=True):
        for k in ("start_s", "end_s", "duration_s", "peak_etco2_mmHg", "min_spo2_pct"):
            assert g[k] == pytest.approx(r[k], abs=1e-6), k
        assert g["start_time"] == r["start_time"] and g["severity"] == r["severity"]
    _, br = _breaths(ws, "br:desaturation_bag_mask")
    _, bs = _breaths(ws, "br:shifted")
    assert br["start_s"].size == bs["start_s"].size
    for k in ("start_s", "end_s", "etco2_mmHg", "fico2_mmHg"):
        np.testing.assert_allclose(bs[k], br[k], atol=0.0011, err_msg=k)


# ----------------------------------------------------------------------------- criteria files
@pytest.mark.parametrize("name", SHIPPED_CRITERIA)
def test_shipped_criteria_files(ws, name):
    # DESIGN.md: every threshold lives in a criteria file; each record names the file and its
    # SHA-256. The scenario's planted apnoea (~23 s) lies between the 20 s and 30 s cut-offs.
    path = CRITERIA_DIR / name
    spec = yaml.safe_load(path.read_text(encoding="utf-8"))
    doc = _episodes(ws, f"crit:{name}")
    crit = doc["criteria"]
    assert crit["name"] == spec["name"]
    assert crit["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    min_s = float(spec["apnoea"]["min_duration_s"]["value"])
    assert crit["thresholds"]["apnoea"]["min_duration_s"]["value"] == min_s
    (planted,) = [p for p in ws["truth"]["short"]["episodes"] if p["kind"] == "apnoea"]
    planted_s = planted["end_s"] - planted["start_s"]
    assert abs(planted_s - min_s) > 2.0, "scenario too close to the cut-off to tell"
    apnoeas = _of_kind(doc, "apnoea")
    assert len(apnoeas) == (1 if planted_s >= min_s else 0), f"{name}: {apnoeas}"
    for a in apnoeas:
        assert a["duration_s"] >= min_s


def test_thirty_second_file_drops_short_apnoea(ws):
    # Explicit form of the above for apnoea_30s.yaml vs default.yaml (15 s, Deitch et al.,
    # Ann Emerg Med 2010).
    assert len(_of_kind(_episodes(ws, "crit:default.yaml"), "apnoea")) == 1
    assert _of_kind(_episodes(ws, "crit:apnoea_30s.yaml"), "apnoea") == []


@pytest.mark.parametrize("key", ["bad_ep", "bad_rec"])
def test_bad_criteria_exit_2(ws, key):
    # DESIGN.md exit codes: 2 on bad input, one `error:` line on stderr naming the file or
    # field, no traceback, nothing on stdout and no partial output file.
    res = ws["runs"][key]
    assert res.returncode == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), res.stderr
    assert "min_duration_s" in lines[0] and "Traceback" not in res.stderr
    assert res.stdout == ""
    assert list((ws["root"] / "out_bad").iterdir()) == []


# ----------------------------------------------------------------------------- record
def _last_page_text(path: Path) -> str:
    """Text of the record's last page, whitespace removed (long digests may wrap)."""
    import pdfplumber

    with pdfplumber.open(path) as pdf:
        return "".join((pdf.pages[-1].extract_text() or "").split())


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_record_reproducible_and_hashes(ws):
    # DESIGN.md: with SOURCE_DATE_EPOCH set the same inputs give the same bytes; every record
    # carries the SHA-256 of each input file and of the criteria used.
    _ok(ws, "rec_a")
    _ok(ws, "rec_b")
    a, b = ws["pdf"]["rec_a"], ws["pdf"]["rec_b"]
    assert a.read_bytes()[:5] == b"%PDF-"
    assert a.read_bytes() == b.read_bytes()
    assert sorted(p.name for p in b.parent.iterdir()) == ["rec_b.pdf"], "stray files left"
    last = _last_page_text(a)
    folder = ws["folders"]["upper_gi_apnoea"]
    for f in sorted(folder.iterdir()):
        assert _sha(f) in last, f"last page lacks sha256 of {f.name}"
    assert _sha(CRITERIA_DIR / "default.yaml") in last


# ----------------------------------------------------------------------------- EDF input
def test_edf_input_matches_csv(ws):
    # DESIGN.md: EDF records are accepted for co2 with {file, channel}. The same samples in EDF
    # (16-bit, resolution EDF_RES_MMHG) and in CSV must give the same episodes and breaths:
    # times within one sample (25 Hz), values within the resolution. Per-breath EtCO2 may
    # move further where a sample sits on the 90 %-of-rise plateau-end threshold, so that
    # bound is asserted for 99 % of breaths and 0.1 mmHg (the CSV's own step) for all.
    one_sample_s = 1.0 / 25.0
    ref = _episodes(ws, "crit:default.yaml")["episodes"]
    got = _episodes(ws, "ep:edf")["episodes"]
    assert [e["kind"] for e in got] == [e["kind"] for e in ref] == ["apnoea"]
    for r, g in zip(ref, got, strict=True):
        for k in ("start_s", "end_s", "duration_s"):
            assert abs(g[k] - r[k]) <= one_sample_s, k
        assert abs(g["peak_etco2_mmHg"] - r["peak_etco2_mmHg"]) <= EDF_RES_MMHG
        assert g["severity"] == r["severity"] and g["min_spo2_pct"] == r["min_spo2_pct"]
    _, bc = _breaths(ws, "br:short")
    _, be = _breaths(ws, "br:edf")
    assert be["start_s"].size == bc["start_s"].size
    np.testing.assert_array_equal(be["valid"], bc["valid"])
    for k in ("start_s", "end_s"):
        assert np.max(np.abs(be[k] - bc[k])) <= one_sample_s + CSV_TIME_TOL_S, k
    for k in ("etco2_mmHg", "fico2_mmHg"):
        diff = np.abs(be[k] - bc[k])
        # + 0.005 + 0.005: both csv outputs round to 2 decimals.
        assert np.nanquantile(diff, 0.99) <= EDF_RES_MMHG + 0.01, k
        assert np.nanmax(diff) <= 0.1, k
    _ok(ws, "rec_edf")
    last = _last_page_text(ws["pdf"]["rec_edf"])
    assert _sha(ws["folders"]["edf"] / "co2.edf") in last
