"""Build ``sedreport-session/1`` folders from parts, for the malformed-session tests.

Written from the format specification alone (DESIGN.md "The session folder" and issue 2), not
from the ingest code, so that the malformed-session suite is an independent check of it.

A :class:`SessionParts` holds the ``session.yaml`` content as a dict and every data file as
bytes; the base session is valid, and each malformed case applies one mutation to a fresh copy
before :meth:`SessionParts.write` puts it on disk. All signals are invented for the test
(a demo-style scenario), not recorded from anyone.
"""

from __future__ import annotations

import copy
import gzip
import io
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone
from pathlib import Path

import edfio
import numpy as np
import yaml

#: Folder name and ``session_id`` of the base session (both the same on purpose, so that an
#: error message naming ``<session>`` matches whichever of the two the code chooses).
SESSION_ID = "ENDO-0412"
#: The session clock's zero, as in the DESIGN.md example.
STARTED = datetime(2026, 3, 14, 9, 12, 0, tzinfo=timezone(timedelta(hours=1)))

CO2_RATE_HZ = 25.0  # within the 10-200 Hz the format accepts (DESIGN.md)
CO2_DURATION_S = 120.0
BREATH_PERIOD_S = 5.0  # 12 breaths/min, a plausible resting rate (common practice)
ETCO2_MMHG = 38.0  # inside 35-45 mmHg, the usual normal EtCO2 range (common practice)

#: Exact definition of the conventional millimetre of mercury, in pascals (issue 2 asks for it).
MMHG_PA = 133.322387415


@dataclass
class SessionParts:
    """Everything that makes a session folder, before it is written.

    Attributes
    ----------
    config : dict
        Content of ``session.yaml``; ``None`` values are written as YAML ``null``.
    files : dict of str to bytes
        Data files by name relative to the folder.
    symlinks : dict of str to str
        Links to create inside the folder: name -> target (absolute path or relative text).
    outside : dict of str to bytes
        Files written next to (not inside) the session folder, in ``<parent>/outside/``.
    yaml_text : bytes or None
        When set, written as ``session.yaml`` verbatim instead of dumping ``config``.
    write_yaml : bool
        False leaves ``session.yaml`` out of the folder.
    """

    config: dict
    files: dict[str, bytes] = field(default_factory=dict)
    symlinks: dict[str, str] = field(default_factory=dict)
    outside: dict[str, bytes] = field(default_factory=dict)
    yaml_text: bytes | None = None
    write_yaml: bool = True

    def copy(self) -> SessionParts:
        """A deep copy that a mutation may change freely."""
        return copy.deepcopy(self)

    def write(self, parent: Path, name: str = SESSION_ID) -> Path:
        """Write the folder ``parent/name`` (and ``parent/outside``) and return its path."""
        folder = parent / name
        folder.mkdir(parents=True)
        outside_dir = parent / "outside"
        for fname, data in self.outside.items():
            outside_dir.mkdir(exist_ok=True)
            (outside_dir / fname).write_bytes(data)
        if self.write_yaml:
            text = self.yaml_text
            if text is None:
                text = yaml.safe_dump(self.config, sort_keys=False).encode("utf-8")
            (folder / "session.yaml").write_bytes(text)
        for fname, data in self.files.items():
            (folder / fname).parent.mkdir(parents=True, exist_ok=True)
            (folder / fname).write_bytes(data)
        for fname, target in self.symlinks.items():
            (folder / fname).symlink_to(target)
        return folder


# ----- CSV text ---------------------------------------------------------------------------------
def csv_bytes(header: str, rows: list[list[str]]) -> bytes:
    """CSV file bytes: header line, then one line per row, ``\\n`` line ends, UTF-8."""
    lines = [header] + [",".join(row) for row in rows]
    return ("\n".join(lines) + "\n").encode("utf-8")


def csv_rows(data: bytes) -> tuple[str, list[list[str]]]:
    """Split CSV bytes made by :func:`csv_bytes` back into header and rows (no quoting used)."""
    lines = data.decode("utf-8").splitlines()
    return lines[0], [line.split(",") for line in lines[1:]]


def file_line(row_index: int) -> int:
    """File line number of 0-based data row ``row_index`` (header is line 1, DESIGN.md/issue 2).

    Data row k (1-based) is file line k + 1, so 0-based row i is line i + 2.
    """
    return row_index + 2


def set_cell(parts: SessionParts, fname: str, row_index: int, column: str, text: str) -> None:
    """Replace one cell (0-based data row, column by header name) of a CSV file in place."""
    header, rows = csv_rows(parts.files[fname])
    col = header.split(",").index(column)
    rows[row_index][col] = text
    parts.files[fname] = csv_bytes(header, rows)


def cell(parts: SessionParts, fname: str, row_index: int, column: str) -> str:
    """Text of one cell of a CSV file."""
    header, rows = csv_rows(parts.files[fname])
    return rows[row_index][header.split(",").index(column)]


def drop_column(parts: SessionParts, fname: str, column: str) -> None:
    """Remove one column (header and every row) of a CSV file in place."""
    header, rows = csv_rows(parts.files[fname])
    names = header.split(",")
    col = names.index(column)
    del names[col]
    for row in rows:
        del row[col]
    parts.files[fname] = csv_bytes(",".join(names), rows)


# ----- session.yaml -----------------------------------------------------------------------------
def set_field(parts: SessionParts, dotted: str, value: object) -> None:
    """Set a ``session.yaml`` field by dotted path (``patient.asa_class``) in place."""
    *path, leaf = dotted.split(".")
    node = parts.config
    for key in path:
        node = node[key]
    node[leaf] = value


def del_field(parts: SessionParts, dotted: str) -> None:
    """Remove a ``session.yaml`` field by dotted path in place."""
    *path, leaf = dotted.split(".")
    node = parts.config
    for key in path:
        node = node[key]
    del node[leaf]


# ----- the base session -------------------------------------------------------------------------
def capnogram_mmHg(time_s: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """A square-ish capnogram: 0 mmHg inspired baseline, plateau rising to ``ETCO2_MMHG``.

    Each 5 s breath: 0.2 s upstroke (phase II), 2.6 s alveolar plateau rising 35 -> 38 mmHg
    (a small phase III slope), 0.2 s downstroke, 2.0 s inspiratory baseline. Small Gaussian
    noise (0.2 mmHg SD) stands in for sensor noise; values are clipped at 0.
    """
    phase = np.mod(time_s, BREATH_PERIOD_S)
    plateau = ETCO2_MMHG - 3.0 + 3.0 * np.clip((phase - 0.2) / 2.6, 0.0, 1.0)
    up = np.clip(phase / 0.2, 0.0, 1.0)
    down = np.clip((3.0 - phase) / 0.2, 0.0, 1.0)
    co2 = plateau * np.minimum(up, down)
    co2 = co2 + rng.normal(0.0, 0.2, size=time_s.size)
    return np.clip(co2, 0.0, None)


def co2_csv(rng: np.random.Generator, units: str = "mmHg") -> bytes:
    """``co2.csv`` (``time,co2``): 25 Hz for 120 s, times in seconds, 3000 data rows."""
    n = int(CO2_DURATION_S * CO2_RATE_HZ)
    time_s = np.arange(n) / CO2_RATE_HZ
    co2 = capnogram_mmHg(time_s, rng)
    if units == "kPa":
        co2 = co2 * MMHG_PA / 1000.0
        rows = [[f"{t:.2f}", f"{v:.3f}"] for t, v in zip(time_s, co2, strict=True)]
    else:
        rows = [[f"{t:.2f}", f"{v:.1f}"] for t, v in zip(time_s, co2, strict=True)]
    return csv_bytes("time,co2", rows)


def spo2_csv(rng: np.random.Generator) -> bytes:
    """``spo2.csv`` (``time,spo2,pulse``): 1 Hz for 120 s, SpO2 96-98 %, pulse ~72 /min."""
    time_s = np.arange(120)
    spo2 = rng.integers(96, 99, size=time_s.size)
    pulse = 72 + rng.integers(-2, 3, size=time_s.size)
    rows = [[str(t), str(s), str(p)] for t, s, p in zip(time_s, spo2, pulse, strict=True)]
    return csv_bytes("time,spo2,pulse", rows)


#: ``doses.csv`` rows of the base session (file lines 2-6). Line 4 starts a weight-based
#: propofol infusion, line 5 stops it with a rate of 0 (DESIGN.md "doses.csv").
DOSE_ROWS = [
    ["8", "midazolam", "2", "mg", "iv"],
    ["12", "fentanyl", "50", "mcg", "iv"],
    ["20", "propofol", "50", "mcg/kg/min", "iv"],
    ["90", "propofol", "0", "mcg/kg/min", "iv"],
    ["100", "midazolam", "1", "mg", "iv"],
]

#: ``events.csv`` rows of the base session (file lines 2-7).
EVENT_ROWS = [
    ["5", "procedure_start", "", ""],
    ["30", "depth_score", "3", "MOAA/S"],
    ["55", "airway_repositioning", "", "chin lift"],
    ["70", "oxygen_increase", "4", ""],
    ["75", "verbal_stimulus", "", ""],
    ["115", "procedure_end", "", ""],
]


def base_config() -> dict:
    """A valid ``session.yaml`` after the DESIGN.md example (invented demo values)."""
    return {
        "format": "sedreport-session/1",
        "session_id": SESSION_ID,
        "started": STARTED,
        "area": "endoscopy",
        "procedure": "colonoscopy",
        "target_depth": "moderate",
        "patient": {
            "ref": "P-0193",
            "age_years": 67,
            "sex": "female",
            "weight_kg": 72,
            "height_cm": 160,
            "asa_class": 3,
            "conditions": ["copd"],
        },
        "team": {"sedation_provider": "RN-12", "proceduralist": "DR-04"},
        "oxygen": {"device": "nasal_cannula", "flow_l_min": 2},
        "sources": {
            "co2": {"file": "co2.csv", "units": "mmHg", "clock_offset_s": 0},
            "spo2": {"file": "spo2.csv", "clock_offset_s": -4},
            "doses": {"file": "doses.csv"},
            "events": {"file": "events.csv"},
        },
        "barometric_mmHg": 760,
        "criteria": None,
    }


def base_parts(seed: int = 20260314) -> SessionParts:
    """The valid base session: CO2, SpO2/pulse, doses and events, all on one 120 s clock."""
    rng = np.random.default_rng(seed)
    return SessionParts(
        config=base_config(),
        files={
            "co2.csv": co2_csv(rng),
            "spo2.csv": spo2_csv(rng),
            "doses.csv": csv_bytes("time,drug,dose,unit,route", [r[:] for r in DOSE_ROWS]),
            "events.csv": csv_bytes("time,event,value,note", [r[:] for r in EVENT_ROWS]),
        },
    )


def co2_only_parts(seed: int = 20260314) -> SessionParts:
    """A valid session with only ``sources.co2`` (issue 2: loads, with warnings)."""
    parts = base_parts(seed)
    parts.config["sources"] = {"co2": parts.config["sources"]["co2"]}
    for name in ("spo2.csv", "doses.csv", "events.csv"):
        del parts.files[name]
    return parts


def gzip_co2(parts: SessionParts) -> None:
    """Store ``co2.csv`` as a real ``co2.csv.gz`` (DESIGN.md: accepted wherever .csv is)."""
    data = parts.files.pop("co2.csv")
    parts.files["co2.csv.gz"] = gzip.compress(data, mtime=0)
    set_field(parts, "sources.co2.file", "co2.csv.gz")


def iso_time(t_s: float) -> str:
    """ISO 8601 timestamp with offset of session-clock time ``t_s`` (no clock offset)."""
    return (STARTED + timedelta(seconds=t_s)).isoformat(timespec="milliseconds")


# ----- mutations: each turns a fresh copy of the base into one malformed case ------------------
#: A mutation changes the parts in place; ``parent`` is where the folder will be written.
Mutation = Callable[[SessionParts, Path], None]


def yaml_value(dotted: str, value: object) -> Mutation:
    return lambda p, _parent: set_field(p, dotted, value)


def cell_text(fname: str, row: int, column: str, text: str) -> Mutation:
    return lambda p, _parent: set_cell(p, fname, row, column, text)


def no_yaml(p: SessionParts, _parent: Path) -> None:
    p.write_yaml = False


def yaml_text(text: bytes) -> Mutation:
    def mutate(p: SessionParts, _parent: Path) -> None:
        p.yaml_text = text

    return mutate


def yaml_removed(dotted: str) -> Mutation:
    return lambda p, _parent: del_field(p, dotted)


def co2_outside(how: str) -> Mutation:
    """Point sources.co2 at a valid CO2 file outside the folder: absolute, ``..`` or symlink."""

    def mutate(p: SessionParts, parent: Path) -> None:
        p.outside["outside_co2.csv"] = p.files.pop("co2.csv")
        target = parent / "outside" / "outside_co2.csv"
        if how == "absolute":
            set_field(p, "sources.co2.file", str(target))
        elif how == "dotdot":
            set_field(p, "sources.co2.file", "../outside/outside_co2.csv")
        else:
            p.symlinks["co2.csv"] = str(target)

    return mutate


def file_removed(fname: str) -> Mutation:
    return lambda p, _parent: p.files.pop(fname)


def file_bytes(fname: str, data: bytes) -> Mutation:
    def mutate(p: SessionParts, _parent: Path) -> None:
        p.files[fname] = data

    return mutate


def co2_time_backwards(p: SessionParts, _parent: Path) -> None:
    # row 800 gets a time 0.5 s before row 799's: only row 800 (line 802) goes backwards
    earlier = float(cell(p, "co2.csv", 799, "time")) - 0.5
    set_cell(p, "co2.csv", 800, "time", f"{earlier:.2f}")


def co2_time_duplicate(p: SessionParts, _parent: Path) -> None:
    set_cell(p, "co2.csv", 1200, "time", cell(p, "co2.csv", 1199, "time"))


def co2_kpa_30(p: SessionParts, _parent: Path) -> None:
    p.files["co2.csv"] = co2_csv(np.random.default_rng(7), units="kPa")
    set_field(p, "sources.co2.units", "kPa")
    set_cell(p, "co2.csv", 2200, "co2", "30.000")  # 30 kPa = 225 mmHg (x 1000/133.322387415)


def infusion_no_weight(p: SessionParts, _parent: Path) -> None:
    del_field(p, "patient.weight_kg")


def events_latin1(p: SessionParts, _parent: Path) -> None:
    # the note of data row 2 (file line 4) re-encoded in latin-1: "é" is the lone byte 0xE9
    note = "menton relevé".encode("latin-1")
    p.files["events.csv"] = p.files["events.csv"].replace(b"chin lift", note)


def events_binary(p: SessionParts, _parent: Path) -> None:
    data = b"\x80\xc0\xff" + np.random.default_rng(11).bytes(4096)  # never valid UTF-8
    p.files["events.csv"] = data


def co2_gz_not_gzip(p: SessionParts, _parent: Path) -> None:
    p.files["co2.csv.gz"] = p.files.pop("co2.csv")  # plain text under a .gz name
    set_field(p, "sources.co2.file", "co2.csv.gz")


def doses_no_unit(p: SessionParts, _parent: Path) -> None:
    drop_column(p, "doses.csv", "unit")


def co2_real_gzip(p: SessionParts, _parent: Path) -> None:
    """Valid variant: ``co2.csv`` stored as a real gzip file."""
    gzip_co2(p)


def co2_all_iso_times(p: SessionParts, _parent: Path) -> None:
    """Valid variant: every ``co2.csv`` time written as ISO 8601 with offset."""
    header, rows = csv_rows(p.files["co2.csv"])
    p.files["co2.csv"] = csv_bytes(header, [[iso_time(float(t)), v] for t, v in rows])


# ----- EDF, gzip and layout variants -------------------------------------------------------------
def co2_edf_bytes(label: str = "CO2", seed: int = 5) -> bytes:
    """An EDF file (written by edfio) holding the base capnogram as one 25 Hz channel in mmHg.

    The recording starts at ``STARTED``'s local date and time, so its clock matches the session.
    """
    n = int(CO2_DURATION_S * CO2_RATE_HZ)
    co2 = capnogram_mmHg(np.arange(n) / CO2_RATE_HZ, np.random.default_rng(seed))
    signal = edfio.EdfSignal(
        co2, CO2_RATE_HZ, label=label, physical_dimension="mmHg", physical_range=(-10.0, 100.0)
    )
    edf = edfio.Edf(
        [signal],
        recording=edfio.Recording(startdate=STARTED.date()),
        starttime=STARTED.time().replace(tzinfo=None),
        data_record_duration=1.0,
    )
    buf = io.BytesIO()
    edf.write(buf)
    return buf.getvalue()


def co2_as_edf(label: str, data: bytes | None = None) -> Mutation:
    """Replace ``co2.csv`` by ``rec.edf`` (``channel: CO2``); ``data`` overrides the bytes."""

    def mutate(p: SessionParts, _parent: Path) -> None:
        del p.files["co2.csv"]
        p.files["rec.edf"] = co2_edf_bytes(label) if data is None else data
        set_field(p, "sources.co2", {"file": "rec.edf", "channel": "CO2", "units": "mmHg"})

    return mutate


def co2_edf_truncated(p: SessionParts, parent: Path) -> None:
    """A real EDF cut in half: the header promises more data records than the file holds."""
    co2_as_edf("CO2")(p, parent)
    p.files["rec.edf"] = p.files["rec.edf"][: len(p.files["rec.edf"]) // 2]


def co2_gz_bytes(data_of: Callable[[bytes], bytes]) -> Mutation:
    """Store ``co2.csv`` as ``co2.csv.gz`` whose bytes are ``data_of(gzip bytes)``."""

    def mutate(p: SessionParts, _parent: Path) -> None:
        gzip_co2(p)
        p.files["co2.csv.gz"] = data_of(p.files["co2.csv.gz"])

    return mutate


def truncated(data: bytes) -> bytes:
    """The first half of ``data`` (a gzip stream cut mid-way: magic bytes right, end missing)."""
    return data[: len(data) // 2]


def gzip_of_random(_data: bytes) -> bytes:
    """A well-formed gzip stream whose content is random bytes (undecodable as UTF-8)."""
    return gzip.compress(b"\x80\xc0\xff" + np.random.default_rng(13).bytes(4096), mtime=0)


def co2_gap(p: SessionParts, _parent: Path) -> None:
    """Valid variant: 2 s of CO2 rows removed (rows 1000-1049), a gap > 1 s (a finding)."""
    header, rows = csv_rows(p.files["co2.csv"])
    p.files["co2.csv"] = csv_bytes(header, rows[:1000] + rows[1050:])


def crlf_line_ends(p: SessionParts, _parent: Path) -> None:
    """Valid variant: every data file with CRLF line ends (common for monitor exports)."""
    for name, data in p.files.items():
        p.files[name] = data.replace(b"\n", b"\r\n")


def co2_in_subfolder_via_symlink(p: SessionParts, _parent: Path) -> None:
    """Valid variant: ``data/co2.csv`` inside the folder, reached through an inside symlink."""
    p.files["data/co2.csv"] = p.files.pop("co2.csv")
    p.symlinks["co2.csv"] = "data/co2.csv"


def dotdot_staying_inside(p: SessionParts, _parent: Path) -> None:
    """``sub/../co2.csv`` resolves inside the folder but still contains ``..``.

    ``sub/`` exists (with a note file), so the path resolves to the real ``co2.csv``: only the
    ``..`` itself is wrong.
    """
    p.files["sub/notes.txt"] = b"scratch notes\n"
    set_field(p, "sources.co2.file", "sub/../co2.csv")


def yaml_latin1(p: SessionParts, _parent: Path) -> None:
    """``session.yaml`` saved in latin-1: the "é" of the procedure is the lone byte 0xE9."""
    set_field(p, "procedure", "résection")
    p.yaml_text = yaml.safe_dump(p.config, sort_keys=False, allow_unicode=True).encode("latin-1")


def criteria_file(name: str, data: bytes | None) -> Mutation:
    """``criteria: <name>`` in ``session.yaml``; ``data`` (if given) is written as that file.

    A name starting with ``../outside/`` puts the file next to (outside) the session folder.
    """

    def mutate(p: SessionParts, _parent: Path) -> None:
        set_field(p, "criteria", name)
        if data is None:
            return
        if name.startswith("../outside/"):
            p.outside[name.removeprefix("../outside/")] = data
        else:
            p.files[name] = data

    return mutate
