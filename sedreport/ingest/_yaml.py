"""``session.yaml`` checked field by field (format ``sedreport-session/1``, DESIGN.md).

Every problem names the field (``<session>/session.yaml:patient.weight_kg``) and the value
given. Unknown keys are kept as warnings, never fatal. Ranges are plausibility limits chosen
here (common practice), not clinical thresholds.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from datetime import date, datetime

import yaml

from sedreport.errors import SessionError
from sedreport.ingest._assessment import parse_assessment
from sedreport.ingest.units import canonical_co2_unit
from sedreport.session import OUTCOMES, Assessment, BloodGas, Oxygen, Patient, Team

FORMAT = "sedreport-session/1"
SESSION_ID_RE = re.compile(r"[A-Za-z0-9._-]{1,64}")
SEXES = ("female", "male", "other", "unknown")
#: ASA continuum of depth of sedation (minimal, moderate, deep); general anaesthesia is not a
#: sedation target.
DEPTHS = ("minimal", "moderate", "deep")
ROLES = ("co2", "spo2", "doses", "events")
#: Sources that may be left out without a ``missing_stream`` finding (added later, optional).
OPTIONAL_ROLES = ("bp",)
TOP_KEYS = (
    "format",
    "session_id",
    "started",
    "area",
    "procedure",
    "target_depth",
    "patient",
    "team",
    "oxygen",
    "sources",
    "barometric_mmHg",
    "criteria",
    "blood_gas",
    "outcome",
    "assessment",
)
PATIENT_KEYS = (
    "ref",
    "age_years",
    "sex",
    "weight_kg",
    "height_cm",
    "asa_class",
    "conditions",
    "spo2_target_pct",
)
BLOOD_GAS_KEYS = ("pco2_mmHg", "pco2_kPa", "sample", "time_s")
BLOOD_SAMPLES = ("arterial", "capillary")
#: mmHg per kPa (1 kPa = 7.50062 mmHg; common practice conversion).
MMHG_PER_KPA = 7.50062
SOURCE_KEYS = {
    "co2": ("file", "units", "clock_offset_s", "channel"),
    "spo2": ("file", "units", "clock_offset_s", "channel", "pulse_channel"),
    "doses": ("file", "clock_offset_s"),
    "events": ("file", "clock_offset_s"),
    "bp": ("file", "clock_offset_s"),
}
#: Largest clock correction accepted, seconds (one day; a larger one is a wrong date).
MAX_CLOCK_OFFSET_S = 86400.0


@dataclass(frozen=True)
class SourceSpec:
    """One ``sources:`` entry."""

    role: str
    file: str
    clock_offset_s: float = 0.0
    units: str | None = None
    channel: str | None = None
    pulse_channel: str | None = None


@dataclass(frozen=True)
class SessionSpec:
    """Checked contents of ``session.yaml``."""

    session_id: str
    started: datetime
    area: str
    procedure: str
    target_depth: str | None
    patient: Patient
    team: Team
    oxygen: Oxygen
    sources: dict[str, SourceSpec]
    barometric_mmHg: float
    criteria: str | None
    outcome: tuple[str, ...] = ()
    warnings: tuple[str, ...] = field(default=())
    blood_gas: BloodGas | None = None
    assessment: Assessment | None = None


def load_yaml_text(text: str, where: str) -> dict:
    """Parse YAML text that must hold one mapping."""
    try:
        doc = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        at = f" (line {mark.line + 1})" if mark is not None else ""
        problem = getattr(exc, "problem", None) or "syntax error"
        raise SessionError(where, f"not valid YAML{at}: {problem}") from None
    except (ValueError, TypeError, OverflowError, RecursionError) as exc:
        raise SessionError(where, f"not valid YAML: {exc}") from None
    if not isinstance(doc, dict):
        raise SessionError(where, f"must be a YAML mapping of fields, got {type(doc).__name__}")
    return doc


def _key(key: object) -> str:
    """A YAML key as shown in warnings: as written when printable text, else its repr."""
    return key if isinstance(key, str) and key.isprintable() else repr(key)


class _Fields:
    """Field checker bound to one file; collects warnings for unknown keys."""

    def __init__(self, where: str) -> None:
        self.where = where
        self.warnings: list[str] = []

    def err(self, name: str, what: str) -> SessionError:
        return SessionError(f"{self.where}:{name}", what)

    def unknown(self, doc: dict, known: tuple[str, ...], prefix: str) -> None:
        for key in doc:
            if key not in known:
                self.warnings.append(f"session.yaml: unknown field {prefix}{_key(key)} ignored")

    def mapping(self, doc: dict, key: str, prefix: str = "") -> dict:
        value = doc.get(key)
        if value is None:
            return {}
        if not isinstance(value, dict):
            raise self.err(prefix + key, f"must be a mapping, got {value!r}")
        return value

    def text(self, doc: dict, key: str, prefix: str = "", codes: bool = False) -> str | None:
        value = doc.get(key)
        if value is None:
            return None
        if codes and isinstance(value, int) and not isinstance(value, bool):
            return str(value)
        if not isinstance(value, str):
            raise self.err(prefix + key, f"must be text, got {value!r}")
        return value.strip()

    def number(
        self,
        doc: dict,
        key: str,
        lo: float,
        hi: float,
        unit: str,
        prefix: str = "",
        integer: bool = False,
    ) -> float | None:
        value = doc.get(key)
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.err(prefix + key, f"must be a number, got {value!r}")
        if integer and not float(value).is_integer():
            raise self.err(prefix + key, f"must be a whole number, got {value!r}")
        if not math.isfinite(value) or not lo <= value <= hi:
            raise self.err(prefix + key, f"{value!r} is outside {lo:g} to {hi:g}{unit}")
        return float(value)

    def choice(self, doc: dict, key: str, options: tuple[str, ...], prefix: str = "") -> str | None:
        value = doc.get(key)
        if value is None:
            return None
        if not isinstance(value, str) or value.strip().lower() not in options:
            raise self.err(prefix + key, f"{value!r} is not one of {' | '.join(options)}")
        return value.strip().lower()


def _started(f: _Fields, doc: dict) -> datetime:
    value = doc.get("started")
    if value is None:
        raise f.err("started", "missing (ISO 8601 date and time with UTC offset)")
    if isinstance(value, str):
        try:
            value = datetime.fromisoformat(value.strip())
        except ValueError:
            raise f.err("started", f"{value!r} is not an ISO 8601 date and time") from None
    if not isinstance(value, datetime):
        if isinstance(value, date):
            raise f.err(
                "started", f"{value.isoformat()} has no time of day; give date, time and UTC offset"
            )
        raise f.err("started", f"{value!r} is not an ISO 8601 date and time")
    if value.tzinfo is None or value.utcoffset() is None:
        raise f.err("started", f"{value.isoformat()} has no UTC offset (write e.g. +01:00 or Z)")
    return value


def _session_id(f: _Fields, doc: dict) -> str:
    value = doc.get("session_id")
    if value is None:
        raise f.err("session_id", "missing")
    if not isinstance(value, str):
        raise f.err("session_id", f"must be text (quote it in YAML), got {value!r}")
    if not SESSION_ID_RE.fullmatch(value):
        raise f.err("session_id", f"{value!r} must be 1-64 characters of A-Z a-z 0-9 . _ -")
    return value


def _patient(f: _Fields, doc: dict) -> Patient:
    p = f.mapping(doc, "patient")
    pre = "patient."
    f.unknown(p, PATIENT_KEYS, pre)
    conditions = p.get("conditions") or []
    if isinstance(conditions, str):
        conditions = [conditions]
    if not isinstance(conditions, list) or not all(isinstance(c, str) for c in conditions):
        raise f.err(pre + "conditions", f"must be a list of words, got {conditions!r}")
    asa = f.number(p, "asa_class", 1, 6, "", pre, integer=True)
    return Patient(
        ref=f.text(p, "ref", pre, codes=True) or "",
        age_years=f.number(p, "age_years", 0, 120, " years", pre),
        sex=f.choice(p, "sex", SEXES, pre) or "unknown",
        weight_kg=f.number(p, "weight_kg", 1, 400, " kg", pre),
        height_cm=f.number(p, "height_cm", 30, 250, " cm", pre),
        asa_class=None if asa is None else int(asa),
        conditions=tuple(c.strip().lower() for c in conditions),
        spo2_target_pct=_spo2_target(f, p),
    )


def _spo2_target(f: _Fields, p: dict) -> tuple[float, float] | None:
    """``patient.spo2_target_pct: [low, high]``, e.g. [88, 92] (BTS, O'Driscoll 2017)."""
    value = p.get("spo2_target_pct")
    if value is None:
        return None
    name = "patient.spo2_target_pct"
    ok = isinstance(value, list) and len(value) == 2
    ok = ok and all(isinstance(v, int | float) and not isinstance(v, bool) for v in value)
    if not ok:
        raise f.err(name, f"must be a list [low, high] of two numbers in %, got {value!r}")
    low, high = float(value[0]), float(value[1])
    if not (50.0 <= low < high <= 100.0):
        raise f.err(name, f"{value!r}: need 50 <= low < high <= 100 (%)")
    return (low, high)


def _blood_gas(f: _Fields, doc: dict) -> BloodGas | None:
    """``blood_gas: {sample: arterial|capillary, pco2_kPa: 6.9 | pco2_mmHg: 52, time_s: 300}``."""
    b = f.mapping(doc, "blood_gas")
    if not b:
        return None
    pre = "blood_gas."
    f.unknown(b, BLOOD_GAS_KEYS, pre)
    mmhg = f.number(b, "pco2_mmHg", 10, 150, " mmHg", pre)
    kpa = f.number(b, "pco2_kPa", 1.3, 20, " kPa", pre)
    if (mmhg is None) == (kpa is None):
        raise f.err(pre + "pco2_mmHg", "give exactly one of pco2_mmHg or pco2_kPa")
    sample = f.choice(b, "sample", BLOOD_SAMPLES, pre)
    if sample is None:
        raise f.err(pre + "sample", "missing (arterial | capillary)")
    return BloodGas(
        pco2_mmHg=mmhg if mmhg is not None else kpa * MMHG_PER_KPA,
        sample=sample,
        time_s=f.number(b, "time_s", -MAX_CLOCK_OFFSET_S, MAX_CLOCK_OFFSET_S, " s", pre),
    )


def _team(f: _Fields, doc: dict) -> Team:
    t = f.mapping(doc, "team")
    f.unknown(t, ("sedation_provider", "proceduralist"), "team.")
    return Team(
        sedation_provider=f.text(t, "sedation_provider", "team.", codes=True),
        proceduralist=f.text(t, "proceduralist", "team.", codes=True),
    )


def _oxygen(f: _Fields, doc: dict) -> Oxygen:
    o = f.mapping(doc, "oxygen")
    f.unknown(o, ("device", "flow_l_min"), "oxygen.")
    return Oxygen(
        device=f.text(o, "device", "oxygen."),
        flow_l_min=f.number(o, "flow_l_min", 0, 15, " L/min", "oxygen."),
    )


def _source(f: _Fields, role: str, entry: object) -> SourceSpec:
    pre = f"sources.{role}."
    if not isinstance(entry, dict):
        raise f.err(f"sources.{role}", f"must be a mapping with a file: entry, got {entry!r}")
    f.unknown(entry, SOURCE_KEYS[role], pre)
    name = entry.get("file")
    if name is None:
        raise f.err(pre + "file", "missing")
    if not isinstance(name, str) or not name.strip():
        raise f.err(pre + "file", f"must be a file name, got {name!r}")
    offset = f.number(entry, "clock_offset_s", -MAX_CLOCK_OFFSET_S, MAX_CLOCK_OFFSET_S, " s", pre)
    units = None
    if role == "co2" and entry.get("units") is not None:
        raw = entry["units"]
        units = canonical_co2_unit(raw) if isinstance(raw, str) else None
        if units is None:
            raise f.err(pre + "units", f"{raw!r} is not one of mmHg | kPa | percent")
    spo2_units = entry.get("units") if role == "spo2" else None
    if spo2_units is not None and canonical_co2_unit(str(spo2_units)) != "percent":
        raise f.err(pre + "units", f"{spo2_units!r}: SpO2 is read in percent only (% | percent)")
    return SourceSpec(
        role=role,
        file=name.strip(),
        clock_offset_s=offset or 0.0,
        units=units,
        channel=f.text(entry, "channel", pre, codes=True),
        pulse_channel=f.text(entry, "pulse_channel", pre, codes=True),
    )


def _sources(f: _Fields, doc: dict) -> dict[str, SourceSpec]:
    s = f.mapping(doc, "sources")
    out: dict[str, SourceSpec] = {}
    for key, entry in s.items():
        if key not in ROLES + OPTIONAL_ROLES:
            known = ", ".join(ROLES + OPTIONAL_ROLES)
            f.warnings.append(
                f"session.yaml: unknown source sources.{_key(key)} ignored (known: {known})"
            )
            continue
        if entry is None:
            continue
        out[key] = _source(f, key, entry)
    return out


def _outcome(f: _Fields, doc: dict) -> tuple[str, ...]:
    """The ``outcome:`` list: words of :data:`OUTCOMES`, each once; no key or ``[]`` = none."""
    value = doc.get("outcome")
    if value is None:
        return ()
    if not isinstance(value, list):
        raise f.err("outcome", f"must be a list of outcome words, got {value!r}")
    out: list[str] = []
    for i, word in enumerate(value):
        if not isinstance(word, str) or word.strip().lower() not in OUTCOMES:
            raise f.err(
                f"outcome[{i}]", f"{word!r} is not a known outcome (known: {', '.join(OUTCOMES)})"
            )
        if word.strip().lower() not in out:
            out.append(word.strip().lower())
    return tuple(out)


def parse_session_yaml(doc: dict, where: str) -> SessionSpec:
    """Check a parsed ``session.yaml`` mapping field by field.

    Parameters
    ----------
    doc : dict
        The YAML mapping.
    where : str
        ``<folder name>/session.yaml``; once ``session_id`` is valid it replaces the folder
        name in later messages.
    """
    f = _Fields(where)
    fmt = doc.get("format")
    if fmt != FORMAT:
        raise f.err("format", f"must be {FORMAT!r}, got {fmt!r}")
    session_id = _session_id(f, doc)
    f.where = f"{session_id}/session.yaml"
    f.unknown(doc, TOP_KEYS, "")
    criteria = doc.get("criteria")
    if criteria is not None and not isinstance(criteria, str):
        raise f.err("criteria", f"must be null or a file name, got {criteria!r}")
    return SessionSpec(
        session_id=session_id,
        started=_started(f, doc),
        area=f.text(doc, "area", codes=True) or "",
        procedure=f.text(doc, "procedure", codes=True) or "",
        target_depth=f.choice(doc, "target_depth", DEPTHS),
        patient=_patient(f, doc),
        team=_team(f, doc),
        oxygen=_oxygen(f, doc),
        sources=_sources(f, doc),
        barometric_mmHg=f.number(doc, "barometric_mmHg", 400, 800, " mmHg") or 760.0,
        criteria=criteria,
        blood_gas=_blood_gas(f, doc),
        outcome=_outcome(f, doc),
        assessment=parse_assessment(f, doc),
        warnings=tuple(f.warnings),
    )
