"""Write a simulated case as a ``sedreport-session/1`` folder plus its ``.truth.json``.

Files are byte-reproducible: fixed float formatting, gzip with ``mtime=0`` and no file name,
YAML and JSON dumped in a fixed key order.
"""

from __future__ import annotations

import csv
import gzip
import io
import json
from datetime import datetime
from pathlib import Path

import numpy as np
import yaml

from sedreport.demo.case import CaseSpec
from sedreport.demo.simulate import Signals
from sedreport.errors import SessionError

#: mmHg per kPa (1 kPa = 7.50062 mmHg; common practice conversion).
MMHG_PER_KPA = 7.50062


def fixed(values: np.ndarray, decimals: int) -> np.ndarray:
    """Non-negative numbers as fixed-point strings, e.g. ``12.340`` (vectorised).

    Whole and fractional parts are looked up in small string tables, which is much faster
    than converting every number.
    """
    scale = 10**decimals
    ints = np.rint(np.asarray(values, dtype=float) * scale).astype(np.int64)
    if ints.size and ints.min() < 0:
        raise ValueError("fixed() formats non-negative values only")
    whole_i = ints // scale
    top = int(whole_i.max()) + 1 if ints.size else 1
    whole = np.arange(top).astype(str)[whole_i]
    if decimals == 0:
        return whole
    frac_tab = np.strings.zfill(np.arange(scale).astype(str), decimals)
    return np.strings.add(np.strings.add(whole, "."), frac_tab[ints % scale])


def iso_times(started: str, times_s: np.ndarray, decimals: int) -> np.ndarray:
    """ISO 8601 timestamps with the UTC offset of ``started`` for session-clock seconds."""
    start = datetime.fromisoformat(started)
    offset = started[-6:] if started[-6] in "+-" else "+00:00"
    local = np.datetime64(start.replace(tzinfo=None), "ms")
    ms = np.rint(np.asarray(times_s, dtype=float) * 1000.0).astype(np.int64)
    unit = "ms" if decimals > 0 else "s"
    stamps = np.datetime_as_string(local + ms.astype("timedelta64[ms]"), unit=unit)
    return np.strings.add(stamps, offset)


def time_column(spec: CaseSpec, file_times_s: np.ndarray, style: str, decimals: int) -> np.ndarray:
    """The time column of a file, in seconds or ISO 8601."""
    if style == "iso8601":
        return iso_times(spec.started, file_times_s, decimals)
    return fixed(file_times_s, decimals)


def co2_in_units(
    co2_mmHg: np.ndarray, units: str, barometric_mmHg: float
) -> tuple[np.ndarray, int]:
    """CO2 converted to the file's units and the number of decimals to write."""
    if units == "kPa":
        return co2_mmHg / MMHG_PER_KPA, 2
    if units == "percent":
        return co2_mmHg / barometric_mmHg * 100.0, 2
    return co2_mmHg, 1


def csv_text(header: str, columns: list[np.ndarray]) -> str:
    """CSV text from string columns (no quoting needed for our values)."""
    rows = columns[0]
    for col in columns[1:]:
        rows = np.strings.add(np.strings.add(rows, ","), col)
    return header + "\n" + "\n".join(rows.tolist()) + "\n"


def write_gzip(path: Path, text: str, compresslevel: int = 6) -> None:
    """Gzip text with mtime=0 and no stored name (byte-reproducible)."""
    buf = io.BytesIO()
    with gzip.GzipFile(
        filename="", mode="wb", fileobj=buf, mtime=0, compresslevel=compresslevel
    ) as gz:
        gz.write(text.encode("ascii"))
    path.write_bytes(buf.getvalue())


def _co2_csv(spec: CaseSpec, sig: Signals) -> str:
    values, nd = co2_in_units(sig.co2_mmHg, spec.co2_units, spec.barometric_mmHg)
    step_s = 1.0 / spec.co2_rate_hz
    decimals = next((d for d in (2, 3) if abs(step_s * 10**d - round(step_s * 10**d)) < 1e-9), 4)
    times = time_column(spec, sig.co2_time_s - spec.co2_offset_s, spec.co2_time_style, decimals)
    return csv_text("time,co2", [times, fixed(values, nd)])


def _spo2_csv(spec: CaseSpec, sig: Signals) -> str:
    file_t = sig.spo2_time_s - spec.spo2_offset_s
    decimals = 0 if np.all(file_t == np.rint(file_t)) else 3
    times = time_column(spec, file_t, spec.spo2_time_style, decimals)
    return csv_text("time,spo2,pulse", [times, fixed(sig.spo2_pct, 0), fixed(sig.pulse_bpm, 0)])


def _bp_csv(spec: CaseSpec, sig: Signals) -> str:
    t, systolic, diastolic = sig.bp
    times = time_column(spec, t, spec.spo2_time_style, 0)
    return csv_text("time,systolic,diastolic", [times, fixed(systolic, 0), fixed(diastolic, 0)])


def _log_time(spec: CaseSpec, t_s: float) -> str:
    """Time of a dose/event line: ISO when the case logs in ISO, else seconds."""
    decimals = 0 if float(t_s).is_integer() else 1
    return str(time_column(spec, np.array([t_s]), spec.co2_time_style, decimals)[0])


def _number(x: float | None) -> str:
    return "" if x is None else format(float(x), "g")


def _rows_csv(header: list[str], rows: list[list[str]]) -> str:
    """CSV text through the csv module (cells with commas or quotes get quoted)."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    return buf.getvalue()


def _doses_csv(spec: CaseSpec) -> str:
    rows = [
        [_log_time(spec, t), drug, _number(dose), unit, route]
        for t, drug, dose, unit, route in sorted(spec.doses, key=lambda d: d[0])
    ]
    return _rows_csv(["time", "drug", "dose", "unit", "route"], rows)


def _events_csv(spec: CaseSpec) -> str:
    rows = [
        [_log_time(spec, t), event, _number(value), note]
        for t, event, value, note in sorted(spec.events, key=lambda e: e[0])
    ]
    return _rows_csv(["time", "event", "value", "note"], rows)


def session_yaml(spec: CaseSpec) -> str:
    """The ``session.yaml`` text of a case."""
    doc = {
        "format": "sedreport-session/1",
        "session_id": spec.session_id,
        "started": spec.started,
        "area": spec.area,
        "procedure": spec.procedure,
        "target_depth": spec.target_depth,
        "patient": spec.patient,
        "team": spec.team,
        "oxygen": {"device": spec.oxygen_device, "flow_l_min": spec.flow_l_min},
        "sources": {
            "co2": {
                "file": "co2.csv.gz",
                "units": spec.co2_units,
                "clock_offset_s": spec.co2_offset_s,
            },
            "spo2": {"file": "spo2.csv", "clock_offset_s": spec.spo2_offset_s},
            "doses": {"file": "doses.csv"},
            "events": {"file": "events.csv"},
            **({"bp": {"file": "bp.csv"}} if spec.bp_interval_s is not None else {}),
        },
        "barometric_mmHg": spec.barometric_mmHg,
        "criteria": None,
        "outcome": list(spec.outcome),
        **({"assessment": spec.assessment} if spec.assessment is not None else {}),
    }
    head = (
        f"# Invented demo session ({spec.scenario}); no real patient. Made by `sedreport demo`.\n"
    )
    return head + yaml.safe_dump(doc, sort_keys=False, default_flow_style=None, width=100)


def write_case(
    outdir: Path, spec: CaseSpec, sig: Signals, truth: dict, compresslevel: int = 6
) -> Path:
    """Write the session folder ``outdir/<session_id>/`` and ``outdir/<session_id>.truth.json``.

    ``compresslevel`` is the gzip level of ``co2.csv.gz`` (cohorts use 1 for speed).
    """
    folder = Path(outdir) / spec.session_id
    folder.mkdir(parents=True, exist_ok=True)
    write_gzip(folder / "co2.csv.gz", _co2_csv(spec, sig), compresslevel)
    (folder / "spo2.csv").write_text(_spo2_csv(spec, sig), encoding="ascii")
    (folder / "doses.csv").write_text(_doses_csv(spec), encoding="ascii")
    (folder / "events.csv").write_text(_events_csv(spec), encoding="ascii")
    if spec.bp_interval_s is not None:
        (folder / "bp.csv").write_text(_bp_csv(spec, sig), encoding="ascii")
    (folder / "session.yaml").write_text(session_yaml(spec), encoding="utf-8")
    truth_path = Path(outdir) / f"{spec.session_id}.truth.json"
    truth_path.write_text(json.dumps(truth, separators=(",", ":")) + "\n", encoding="ascii")
    return folder


def load_truth(path: str | Path) -> dict:
    """Read a ``<session_id>.truth.json`` written by :func:`write_case`.

    Raises
    ------
    SessionError
        When the file is missing, not JSON or not of format ``sedreport-truth/1``.
    """
    p = Path(path)
    try:
        doc = json.loads(p.read_text(encoding="ascii"))
    except FileNotFoundError as exc:
        raise SessionError(str(p), "truth file not found") from exc
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise SessionError(str(p), f"not a JSON truth file ({exc})") from exc
    if not isinstance(doc, dict) or doc.get("format") != "sedreport-truth/1":
        raise SessionError(f"{p}:format", "expected 'sedreport-truth/1'")
    for key in ("session_id", "scenario", "seed", "breaths", "episodes", "gaps", "artefacts"):
        if key not in doc:
            raise SessionError(f"{p}:{key}", "missing field")
    return doc
