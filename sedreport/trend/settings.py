"""The trend settings file (``templates/criteria/trend/default.yaml``), checked entry by entry.

Each number is an entry ``{value, unit, source, note}`` like the episode criteria files; a
wrong, missing or unknown key is a :class:`sedreport.errors.CriteriaError` naming the file and
the key. The settings' SHA-256 goes into the trend document.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from pathlib import Path

import yaml

from sedreport.criteria import CRITERIA_DIR
from sedreport.errors import CriteriaError

TREND_FORMAT = "sedreport-trend-criteria/1"
DEFAULT_TREND_FILE = CRITERIA_DIR / "trend" / "default.yaml"

#: section -> key -> (unit, low, high): plausible ranges; outside is an error, not a clamp.
_SCHEMA: dict[str, dict[str, tuple[str, float, float]]] = {
    "spo2_target": {
        "hypercapnic_risk_low_pct": ("%", 70, 100),
        "hypercapnic_risk_high_pct": ("%", 70, 100),
        "other_low_pct": ("%", 70, 100),
        "other_high_pct": ("%", 70, 100),
    },
    "shape": {
        "alpha_scale_mmHg_per_s": ("mmHg/s", 0.1, 1000),
        "phase2_low_frac": ("fraction", 0.05, 0.5),
        "phase2_high_frac": ("fraction", 0.5, 0.95),
        "average_grid_s": ("s", 0.005, 0.2),
    },
    "noise": {
        "bootstrap_resamples": ("count", 100, 100000),
        "block_breaths": ("breaths", 1, 100),
        "block_spo2_s": ("s", 1, 600),
        "confidence_pct": ("%", 50, 99.9),
        "spo2_resolution_pct": ("%", 0, 5),
        "min_breaths": ("breaths", 3, 1000),
    },
}


@dataclass(frozen=True)
class TrendEntry:
    """One setting with its unit and source."""

    key: str
    value: float
    unit: str
    source: str
    note: str


@dataclass(frozen=True)
class TrendSettings:
    """Checked trend settings; ``value(key)`` reads ``"section.name"``."""

    name: str
    path: str
    sha256: str
    description: str
    entries: tuple[TrendEntry, ...]

    def value(self, key: str) -> float:
        """The number of a dotted key such as ``"shape.alpha_scale_mmHg_per_s"``."""
        return self.entry(key).value

    def entry(self, key: str) -> TrendEntry:
        """The :class:`TrendEntry` of a dotted key."""
        for e in self.entries:
            if e.key == key:
                return e
        raise KeyError(key)


def load_trend_settings(path: str | Path | None = None) -> TrendSettings:
    """Load and check a trend settings file (None: the shipped default).

    Raises
    ------
    CriteriaError
        Missing file, bad YAML, or a wrong, missing or unknown key.

    Examples
    --------
    >>> s = load_trend_settings()
    >>> s.value("spo2_target.hypercapnic_risk_low_pct")
    88.0
    """
    file = DEFAULT_TREND_FILE if path is None else Path(path)
    where = "templates/criteria/trend/default.yaml" if path is None else str(file)
    try:
        raw = file.read_bytes()
        doc = yaml.safe_load(raw.decode("utf-8"))
    except OSError as exc:
        raise CriteriaError(where, f"cannot read trend settings ({exc.strerror})") from None
    except (yaml.YAMLError, UnicodeDecodeError):
        raise CriteriaError(where, "not a valid YAML file") from None
    if not isinstance(doc, dict) or doc.get("format") != TREND_FORMAT:
        raise CriteriaError(f"{where}: format", f"must be {TREND_FORMAT!r}")
    for key in doc:
        if key not in {"format", "name", "description", *_SCHEMA}:
            raise CriteriaError(f"{where}: {key}", "unknown top-level key")
    entries = []
    for section, keys in _SCHEMA.items():
        body = doc.get(section)
        if not isinstance(body, dict):
            raise CriteriaError(f"{where}: {section}", "missing section or not a mapping")
        for key in body:
            if key not in keys:
                raise CriteriaError(f"{where}: {section}.{key}", "unknown key")
        for key, spec in keys.items():
            entries.append(_entry(where, f"{section}.{key}", body.get(key), spec))
    settings = TrendSettings(
        name=str(doc.get("name", "")),
        path=where,
        sha256=hashlib.sha256(raw).hexdigest(),
        description=" ".join(str(doc.get("description", "")).split()),
        entries=tuple(entries),
    )
    _check_ranges(where, settings)
    return settings


def _entry(where: str, key: str, body: object, spec: tuple[str, float, float]) -> TrendEntry:
    unit, low, high = spec
    at = f"{where}: {key}"
    if not isinstance(body, dict) or not {"value", "unit", "source"} <= set(body):
        raise CriteriaError(at, "must be a mapping with value, unit, source[, note]")
    value = body["value"]
    if isinstance(value, bool) or not isinstance(value, int | float) or math.isnan(value):
        raise CriteriaError(at, f"value must be a number, got {value!r}")
    if not low <= value <= high:
        raise CriteriaError(at, f"value {value:g} outside the plausible range {low:g}-{high:g}")
    if body["unit"] != unit:
        raise CriteriaError(at, f"unit must be {unit!r}, got {body['unit']!r}")
    if not isinstance(body["source"], str) or not body["source"].strip():
        raise CriteriaError(at, "source must be a non-empty string")
    note = " ".join(str(body.get("note") or "").split())
    return TrendEntry(key, float(value), unit, body["source"].strip(), note)


def _check_ranges(where: str, s: TrendSettings) -> None:
    for low, high in (
        ("hypercapnic_risk_low_pct", "hypercapnic_risk_high_pct"),
        ("other_low_pct", "other_high_pct"),
    ):
        if not s.value(f"spo2_target.{low}") < s.value(f"spo2_target.{high}"):
            raise CriteriaError(f"{where}: spo2_target.{low}", f"must be below {high}")
