"""Builders of small session folders for the ingest tests (synthetic data, planted values).

The module also holds a sanity test of the builder itself so that pytest collects it honestly.
"""

from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import yaml

BASE_YAML: dict = {
    "format": "sedreport-session/1",
    "session_id": "T-0001",
    "started": "2026-03-14T09:12:00+01:00",
    "area": "endoscopy",
    "procedure": "colonoscopy",
    "target_depth": "moderate",
    "patient": {
        "ref": "P-1",
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
        "spo2": {"file": "spo2.csv", "clock_offset_s": 0},
        "doses": {"file": "doses.csv"},
        "events": {"file": "events.csv"},
    },
    "barometric_mmHg": 760,
    "criteria": None,
}


def co2_csv(duration_s: float = 30.0, fs_hz: float = 25.0, rate_per_min: float = 12.0) -> str:
    """A square-ish capnogram 0 -> 38 mmHg at ``rate_per_min`` (times in seconds)."""
    t = np.arange(0.0, duration_s, 1.0 / fs_hz)
    phase = (t * rate_per_min / 60.0) % 1.0
    co2 = np.where(phase < 0.45, 38.0, 0.5)
    return "time,co2\n" + "".join(f"{a:.3f},{b:.1f}\n" for a, b in zip(t, co2, strict=True))


def spo2_csv(duration_s: float = 30.0) -> str:
    """1 Hz SpO2 97 % and pulse 72 /min."""
    return "time,spo2,pulse\n" + "".join(f"{i},97,72\n" for i in range(int(duration_s)))


DOSES_CSV = "time,drug,dose,unit,route\n5,midazolam,2,mg,iv\n10,propofol,50,mg/h,iv\n20,propofol,0,mg/h,iv\n"
EVENTS_CSV = "time,event,value,note\n2,procedure_start,,\n15,oxygen_increase,4,after desaturation\n28,procedure_end,,\n"


def make_session(
    root: Path,
    yaml_changes: dict | None = None,
    files: dict | None = None,
    drop: tuple[str, ...] = (),
    name: str = "sess",
) -> Path:
    """Write a valid session folder under ``root``; then apply changes.

    Parameters
    ----------
    yaml_changes : dict
        Dotted keys (``patient.weight_kg``) to values; the value ``...`` (Ellipsis) deletes.
    files : dict
        File name -> str or bytes, replacing or adding data files.
    drop : tuple of str
        Source roles removed from ``sources`` (their files are not written).
    """
    folder = root / name
    folder.mkdir(parents=True, exist_ok=True)
    doc = copy.deepcopy(BASE_YAML)
    for role in drop:
        del doc["sources"][role]
    for key, value in (yaml_changes or {}).items():
        *parents, last = key.split(".")
        node = doc
        for p in parents:
            node = node.setdefault(p, {})
        if value is Ellipsis:
            node.pop(last, None)
        else:
            node[last] = value
    (folder / "session.yaml").write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    contents = {
        "co2.csv": co2_csv(),
        "spo2.csv": spo2_csv(),
        "doses.csv": DOSES_CSV,
        "events.csv": EVENTS_CSV,
    }
    for role in drop:
        contents.pop(f"{role}.csv", None)
    contents.update(files or {})
    for fname, body in contents.items():
        path = folder / fname
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(body, bytes):
            path.write_bytes(body)
        else:
            path.write_text(body, encoding="utf-8")
    return folder


def test_builder_writes_a_readable_yaml(tmp_path):
    folder = make_session(tmp_path, {"patient.weight_kg": 80, "area": ...})
    doc = yaml.safe_load((folder / "session.yaml").read_text())
    assert doc["patient"]["weight_kg"] == 80
    assert "area" not in doc
    assert (folder / "co2.csv").read_text().count("\n") == 751  # header + 30 s x 25 Hz
