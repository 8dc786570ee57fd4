"""Criteria files: every detection threshold with its published source.

A criteria file is YAML (format ``sedreport-criteria/1``). Each threshold is an entry
``{value, unit, source, note}``; the loader checks types, units, ranges and the relations
between thresholds, rejects unknown keys, and raises :class:`sedreport.errors.CriteriaError`
naming the file and the key. The detectors read every number from the returned
:class:`Criteria`; the file's SHA-256 goes into every output.
"""

from __future__ import annotations

import functools
import hashlib
import math
from dataclasses import dataclass, fields, replace
from pathlib import Path

import yaml

from sedreport.errors import CriteriaError, SessionError
from sedreport.session import Session

CRITERIA_FORMAT = "sedreport-criteria/1"
#: libyaml's safe loader where PyYAML was built with it (ten times faster on the long criteria
#: files, which every command reads), else the pure-Python one; both load only plain data.
_SAFE_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
#: Folder of the criteria files shipped with the package.
CRITERIA_DIR = Path(__file__).resolve().parent / "templates" / "criteria"
DEFAULT_CRITERIA_FILE = CRITERIA_DIR / "default.yaml"


@dataclass(frozen=True)
class Criterion:
    """One threshold of a criteria file, with where it comes from.

    ``value`` is NaN for an optional threshold that the file switches off (``value: null``).
    """

    section: str
    name: str
    value: float
    unit: str
    source: str
    note: str = ""


@dataclass(frozen=True)
class _Spec:
    unit: str
    low: float
    high: float
    optional: bool = False


# ----- typed sections (field names are the YAML keys) ------------------------------------------
@dataclass(frozen=True)
class ApnoeaCriteria:
    """No capnographic breath for at least ``min_duration_s``; ``prolonged_s`` is the top tier.

    Breaths whose EtCO2 is at or below ``breath_min_etco2_mmHg`` do not end an apnoea unless
    they belong to a rhythmic run (``rhythm_*``: at least that many breaths at a breathing rate).
    """

    min_duration_s: float
    prolonged_s: float
    breath_min_etco2_mmHg: float
    rhythm_breaths: float
    rhythm_rate_min_per_min: float
    rhythm_rate_max_per_min: float


@dataclass(frozen=True)
class HypoventilationCriteria:
    """Hypercapnic/bradypnoeic and hypopnoeic hypoventilation, sustained.

    ``rise_from_baseline_pct`` is NaN when switched off.
    """

    etco2_high_mmHg: float
    rise_from_baseline_mmHg: float
    rise_from_baseline_pct: float
    bradypnoea_rr_per_min: float
    hypopnoea_amplitude_fraction: float
    min_duration_s: float
    max_interruption_s: float


@dataclass(frozen=True)
class DesaturationCriteria:
    """SpO2 below ``spo2_below_pct`` for at least ``min_duration_s``, with the top-tier limits."""

    spo2_below_pct: float
    min_duration_s: float
    severe_below_pct: float
    prolonged_s: float


@dataclass(frozen=True)
class OximetryCriteria:
    """What counts as no SpO2 reading and the artefact rules of :mod:`sedreport.oximetry`."""

    min_reading_pct: float
    spike_min_pct: float
    spike_return_pct: float
    spike_max_s: float
    drop_min_pct: float
    drop_steady_s: float
    drop_max_s: float
    flat_s: float
    flat_below_pct: float
    acquisition_s: float
    startup_s: float
    startup_after_s: float
    acquisition_tolerance_pct: float
    pulse_max_bpm: float


@dataclass(frozen=True)
class RebreathingCriteria:
    """Inspired CO2 (FiCO2) above ``fico2_above_mmHg``, sustained."""

    fico2_above_mmHg: float
    min_duration_s: float
    max_interruption_s: float


@dataclass(frozen=True)
class SlopedPlateauCriteria:
    """Waveform shape relative to the patient's own baseline, sustained."""

    slope_ratio: float
    slope_floor_per_s: float
    upstroke_ratio: float
    smoothing_breaths: float
    min_duration_s: float
    max_interruption_s: float


@dataclass(frozen=True)
class Etco2FallCriteria:
    """EtCO2 below the patient's baseline by ``fall_from_baseline_mmHg`` (or ``_pct``), sustained.

    ``fall_from_baseline_pct`` is NaN when switched off.
    """

    fall_from_baseline_mmHg: float
    fall_from_baseline_pct: float
    min_duration_s: float
    max_interruption_s: float


@dataclass(frozen=True)
class LowAmplitudeCriteria:
    """A run of small breaths that began abruptly at an unchanged rate, SpO2 not falling."""

    amplitude_fraction: float
    onset_s: float
    rate_change_pct: float
    spo2_fall_pct: float
    min_duration_s: float
    max_interruption_s: float


@dataclass(frozen=True)
class Co2SignalCriteria:
    """When a flat CO2 trace is reported as an absent signal rather than an apnoea."""

    flat_exact_s: float
    max_apnoea_s: float
    spo2_fall_pct: float
    small_wave_mmHg: float


@dataclass(frozen=True)
class SignalLossCriteria:
    """Sample steps that are gaps, and the shortest gap reported as an episode."""

    co2_gap_s: float
    spo2_gap_s: float
    min_duration_s: float


@dataclass(frozen=True)
class LinkingCriteria:
    """Windows for linking doses, interventions and the capnographic lead time."""

    dose_lookback_s: float
    intervention_after_s: float
    lead_window_s: float
    intervention_before_s: float


@dataclass(frozen=True)
class EventCriteria:
    """How episodes are joined into one adverse event (World SIVA grading, Mason 2012)."""

    link_window_s: float


@dataclass(frozen=True)
class CardiovascularCriteria:
    """Hypotension (non-invasive BP readings) and bradycardia (cleaned pulse) findings.

    Each is an absolute limit or a fall of more than a percentage from the patient's baseline
    (:mod:`sedreport.episodes.cardiovascular`).
    """

    systolic_below_mmHg: float
    systolic_fall_pct: float
    pulse_below_bpm: float
    pulse_fall_pct: float
    bradycardia_min_duration_s: float
    pulse_baseline_window_s: float


_SECTIONS: dict[str, type] = {
    "apnoea": ApnoeaCriteria,
    "hypoventilation": HypoventilationCriteria,
    "desaturation": DesaturationCriteria,
    "oximetry": OximetryCriteria,
    "rebreathing": RebreathingCriteria,
    "sloped_plateau": SlopedPlateauCriteria,
    "etco2_fall": Etco2FallCriteria,
    "low_amplitude": LowAmplitudeCriteria,
    "co2_signal": Co2SignalCriteria,
    "signal_loss": SignalLossCriteria,
    "linking": LinkingCriteria,
    "events": EventCriteria,
    "cardiovascular": CardiovascularCriteria,
}

# Units and plausible ranges; a value outside is an error, not a clamp.
_SCHEMA: dict[str, dict[str, _Spec]] = {
    "apnoea": {
        "min_duration_s": _Spec("s", 5, 120),
        "prolonged_s": _Spec("s", 10, 600),
        "breath_min_etco2_mmHg": _Spec("mmHg", 0, 20),
        "rhythm_breaths": _Spec("breaths", 2, 20),
        "rhythm_rate_min_per_min": _Spec("1/min", 1, 20),
        "rhythm_rate_max_per_min": _Spec("1/min", 20, 90),
    },
    "hypoventilation": {
        "etco2_high_mmHg": _Spec("mmHg", 30, 100),
        "rise_from_baseline_mmHg": _Spec("mmHg", 1, 50),
        "rise_from_baseline_pct": _Spec("%", 1, 100, optional=True),
        "bradypnoea_rr_per_min": _Spec("1/min", 2, 20),
        "hypopnoea_amplitude_fraction": _Spec("fraction", 0.05, 0.95),
        "min_duration_s": _Spec("s", 0, 900),
        "max_interruption_s": _Spec("s", 0, 120),
    },
    "desaturation": {
        "spo2_below_pct": _Spec("%", 70, 99),
        "min_duration_s": _Spec("s", 0, 600),
        "severe_below_pct": _Spec("%", 50, 95),
        "prolonged_s": _Spec("s", 1, 900),
    },
    "oximetry": {
        "min_reading_pct": _Spec("%", 1, 70),
        "spike_min_pct": _Spec("%", 2, 50),
        "spike_return_pct": _Spec("%", 0, 10),
        "spike_max_s": _Spec("s", 1, 120),
        "drop_min_pct": _Spec("%", 2, 60),
        "drop_steady_s": _Spec("s", 0, 120),
        "drop_max_s": _Spec("s", 1, 600),
        "flat_s": _Spec("s", 30, 3600),
        "flat_below_pct": _Spec("%", 50, 101),
        "acquisition_s": _Spec("s", 0, 120),
        "startup_s": _Spec("s", 0, 600),
        "startup_after_s": _Spec("s", 1, 3600),
        "acquisition_tolerance_pct": _Spec("%", 0, 20),
        "pulse_max_bpm": _Spec("1/min", 100, 400),
    },
    "rebreathing": {
        "fico2_above_mmHg": _Spec("mmHg", 0.5, 30),
        "min_duration_s": _Spec("s", 0, 900),
        "max_interruption_s": _Spec("s", 0, 120),
    },
    "sloped_plateau": {
        "slope_ratio": _Spec("ratio", 1.1, 50),
        "slope_floor_per_s": _Spec("1/s", 0, 1),
        "upstroke_ratio": _Spec("ratio", 1.1, 50),
        "smoothing_breaths": _Spec("breaths", 1, 15),
        "min_duration_s": _Spec("s", 0, 900),
        "max_interruption_s": _Spec("s", 0, 120),
    },
    "etco2_fall": {
        "fall_from_baseline_mmHg": _Spec("mmHg", 1, 50),
        "fall_from_baseline_pct": _Spec("%", 1, 100, optional=True),
        "min_duration_s": _Spec("s", 0, 900),
        "max_interruption_s": _Spec("s", 0, 120),
    },
    "low_amplitude": {
        "amplitude_fraction": _Spec("fraction", 0.05, 0.95),
        "onset_s": _Spec("s", 1, 120),
        "rate_change_pct": _Spec("%", 1, 100),
        "spo2_fall_pct": _Spec("%", 1, 20),
        "min_duration_s": _Spec("s", 0, 900),
        "max_interruption_s": _Spec("s", 0, 120),
    },
    "co2_signal": {
        "flat_exact_s": _Spec("s", 1, 600),
        "max_apnoea_s": _Spec("s", 30, 3600),
        "spo2_fall_pct": _Spec("%", 1, 20),
        "small_wave_mmHg": _Spec("mmHg", 0.5, 10),
    },
    "signal_loss": {
        "co2_gap_s": _Spec("s", 0.05, 10),
        "spo2_gap_s": _Spec("s", 1, 120),
        "min_duration_s": _Spec("s", 0.05, 900),
    },
    "linking": {
        "dose_lookback_s": _Spec("s", 0, 7200),
        "intervention_after_s": _Spec("s", 0, 1800),
        "lead_window_s": _Spec("s", 0, 1800),
        "intervention_before_s": _Spec("s", 0, 600),
    },
    "events": {"link_window_s": _Spec("s", 0, 1800)},
    "cardiovascular": {
        "systolic_below_mmHg": _Spec("mmHg", 50, 140),
        "systolic_fall_pct": _Spec("%", 5, 80),
        "pulse_below_bpm": _Spec("1/min", 20, 80),
        "pulse_fall_pct": _Spec("%", 5, 80),
        "bradycardia_min_duration_s": _Spec("s", 0, 900),
        "pulse_baseline_window_s": _Spec("s", 10, 3600),
    },
}

# (smaller key, larger key, what the relation means)
_RELATIONS: tuple[tuple[str, str, str], ...] = (
    ("apnoea.min_duration_s", "apnoea.prolonged_s", "the minor apnoea must be shorter"),
    ("desaturation.severe_below_pct", "desaturation.spo2_below_pct", "the severe level is lower"),
    ("desaturation.min_duration_s", "desaturation.prolonged_s", "the minor tier must be shorter"),
    ("signal_loss.co2_gap_s", "signal_loss.min_duration_s", "a reported loss is at least a gap"),
    ("oximetry.spike_return_pct", "oximetry.spike_min_pct", "a return must be nearer than a step"),
    ("oximetry.spike_return_pct", "oximetry.drop_min_pct", "a return must be nearer than a fall"),
    ("apnoea.min_duration_s", "co2_signal.max_apnoea_s", "an apnoea must fit below the limit"),
    (
        "apnoea.rhythm_rate_min_per_min",
        "apnoea.rhythm_rate_max_per_min",
        "the rhythm range runs slow to fast",
    ),
)
_TOP_KEYS = {"format", "name", "description", *_SECTIONS}
_ENTRY_KEYS = {"value", "unit", "source", "note"}


@dataclass(frozen=True)
class Criteria:
    """A loaded, checked criteria file.

    Attributes
    ----------
    name, path, sha256, description : str
        Identity of the file (``sha256`` of its bytes).
    items : tuple of Criterion
        Every threshold with unit, source and note, in file order.
    apnoea, hypoventilation, desaturation, oximetry, rebreathing, sloped_plateau, etco2_fall,
    low_amplitude, co2_signal, signal_loss, linking, events, cardiovascular
        Typed sections: ``criteria.apnoea.min_duration_s`` and so on.
    """

    name: str
    path: str
    sha256: str
    description: str
    items: tuple[Criterion, ...]
    apnoea: ApnoeaCriteria
    hypoventilation: HypoventilationCriteria
    desaturation: DesaturationCriteria
    oximetry: OximetryCriteria
    rebreathing: RebreathingCriteria
    sloped_plateau: SlopedPlateauCriteria
    etco2_fall: Etco2FallCriteria
    low_amplitude: LowAmplitudeCriteria
    co2_signal: Co2SignalCriteria
    signal_loss: SignalLossCriteria
    linking: LinkingCriteria
    events: EventCriteria
    cardiovascular: CardiovascularCriteria

    def item(self, key: str) -> Criterion:
        """The :class:`Criterion` of a dotted key such as ``"apnoea.min_duration_s"``."""
        for c in self.items:
            if f"{c.section}.{c.name}" == key:
                return c
        raise KeyError(key)

    def to_dict(self) -> dict:
        """JSON-ready description: identity plus every threshold with its source.

        Switched-off optional thresholds appear with ``"value": None``.
        """
        sections: dict[str, dict] = {}
        for c in self.items:
            value = None if math.isnan(c.value) else c.value
            sections.setdefault(c.section, {})[c.name] = {
                "value": value,
                "unit": c.unit,
                "source": c.source,
                "note": c.note,
            }
        return {
            "name": self.name,
            "path": self.path,
            "sha256": self.sha256,
            "description": self.description,
            "thresholds": sections,
        }


def _display_path(file: Path) -> str:
    """How a criteria file is named in outputs: shipped files by their place in the package
    (``templates/criteria/default.yaml``, the same on every install, so records stay
    reproducible), a user's file as given."""
    try:
        return f"templates/criteria/{file.resolve().relative_to(CRITERIA_DIR.resolve())}"
    except ValueError:
        return str(file)


def load_criteria(path: str | Path | None = None) -> Criteria:
    """Load and check a criteria file.

    Parameters
    ----------
    path : str or Path, optional
        The YAML file; None loads the shipped ``default.yaml``.

    Raises
    ------
    CriteriaError
        When the file is missing, not YAML, or has a wrong, unknown or inconsistent key.

    Examples
    --------
    >>> crit = load_criteria()  # the shipped default.yaml
    >>> crit.apnoea.min_duration_s, crit.desaturation.spo2_below_pct
    (15.0, 90.0)
    >>> crit.item("apnoea.min_duration_s").source.split(";")[0]
    'Deitch et al., Ann Emerg Med 2010'
    """
    file = DEFAULT_CRITERIA_FILE if path is None else Path(path)
    where = _display_path(file)
    try:
        raw = file.read_bytes()
    except OSError as exc:
        raise CriteriaError(where, f"cannot read criteria file ({exc.strerror})") from None
    try:
        doc = yaml.load(raw.decode("utf-8"), Loader=_SAFE_LOADER)
    except (yaml.YAMLError, UnicodeDecodeError) as exc:
        line = getattr(getattr(exc, "problem_mark", None), "line", None)
        at = f":{line + 1}" if line is not None else ""
        raise CriteriaError(f"{where}{at}", "not a valid YAML file") from None
    if not isinstance(doc, dict):
        raise CriteriaError(where, "top level must be a mapping of sections")
    _check_top(where, doc)
    items: list[Criterion] = []
    sections = {}
    for section, cls in _SECTIONS.items():
        if section in ADDED_SECTIONS and section not in doc and file != DEFAULT_CRITERIA_FILE:
            got = _default_section(section)
        else:
            got = _read_section(where, section, doc.get(section))
        items.extend(got)
        sections[section] = cls(**{c.name: c.value for c in got})
    values = {f"{c.section}.{c.name}": c.value for c in items}
    for small, large, why in _RELATIONS:
        if not values[small] < values[large]:
            raise CriteriaError(
                f"{where}: {small}",
                f"must be less than {large} ({values[small]:g} >= {values[large]:g}; {why})",
            )
    return Criteria(
        name=str(doc["name"]),
        path=where,
        sha256=hashlib.sha256(raw).hexdigest(),
        description=str(doc.get("description", "")).strip(),
        items=tuple(items),
        **sections,
    )


@functools.cache
def default_criteria() -> Criteria:
    """The shipped ``default.yaml``, loaded once per process (criteria are frozen).

    Examples
    --------
    >>> default_criteria().signal_loss.co2_gap_s
    1.0
    """
    return load_criteria(None)


#: Sections added after criteria files were first written: a file without one takes the shipped
#: default's section (each item's note says so), so older criteria files stay valid.
ADDED_SECTIONS: tuple[str, ...] = ("cardiovascular",)


def _default_section(section: str) -> list[Criterion]:
    """The shipped default's items of ``section``, each note saying where they came from."""
    why = f"(from the shipped default.yaml: this criteria file has no {section} section) "
    return [replace(c, note=why + c.note) for c in default_criteria().items if c.section == section]


def _check_top(where: str, doc: dict) -> None:
    fmt = doc.get("format")
    if isinstance(fmt, str) and fmt.startswith("sedreport-session/"):
        raise CriteriaError(where, f"this is a session file (format: {fmt}), not a criteria file")
    unknown = sorted(str(k) for k in doc if k not in _TOP_KEYS)
    if unknown:
        raise CriteriaError(f"{where}: {unknown[0]}", "unknown top-level key")
    if doc.get("format") != CRITERIA_FORMAT:
        raise CriteriaError(
            f"{where}: format", f"must be {CRITERIA_FORMAT!r}, got {doc.get('format')!r}"
        )
    if not isinstance(doc.get("name"), str) or not doc["name"].strip():
        raise CriteriaError(f"{where}: name", "must be a non-empty string")


def _read_section(where: str, section: str, body: object) -> list[Criterion]:
    if not isinstance(body, dict):
        raise CriteriaError(f"{where}: {section}", "missing section or not a mapping")
    schema = _SCHEMA[section]
    for key in body:
        if key not in schema:
            raise CriteriaError(f"{where}: {section}.{key}", "unknown key")
    names = [f.name for f in fields(_SECTIONS[section])]
    return [_read_entry(where, section, name, body.get(name), schema[name]) for name in names]


def _read_entry(where: str, section: str, name: str, entry: object, spec: _Spec) -> Criterion:
    key = f"{where}: {section}.{name}"
    if entry is None:
        raise CriteriaError(key, "missing threshold")
    if not isinstance(entry, dict):
        raise CriteriaError(key, "must be a mapping with value, unit, source[, note]")
    extra = sorted(str(k) for k in entry if k not in _ENTRY_KEYS)
    if extra:
        raise CriteriaError(key, f"unknown field {extra[0]!r}")
    for needed in ("value", "unit", "source"):
        if needed not in entry:
            raise CriteriaError(key, f"missing field {needed!r}")
    value = entry["value"]
    if value is None and spec.optional:
        number = math.nan
    elif isinstance(value, bool) or not isinstance(value, int | float):
        raise CriteriaError(key, f"value must be a number, got {value!r}")
    else:
        number = float(value)
        if not (spec.low <= number <= spec.high):
            raise CriteriaError(
                key, f"value {number:g} outside the plausible range {spec.low:g}-{spec.high:g}"
            )
    if entry["unit"] != spec.unit:
        raise CriteriaError(key, f"unit must be {spec.unit!r}, got {entry['unit']!r}")
    source = entry["source"]
    if not isinstance(source, str) or not source.strip():
        raise CriteriaError(key, "source must be a non-empty string")
    note = entry.get("note", "") or ""
    if not isinstance(note, str):
        raise CriteriaError(key, "note must be a string")
    return Criterion(section, name, number, spec.unit, source.strip(), note.strip())


def list_criteria_files() -> tuple[Path, ...]:
    """The criteria files shipped with the package, sorted by name."""
    return tuple(sorted(CRITERIA_DIR.glob("*.yaml")))


def resolve_criteria(session: Session, criteria: Criteria | str | Path | None) -> Criteria:
    """The criteria to use: the argument, else the session's own file, else ``default.yaml``.

    A relative ``criteria:`` path in ``session.yaml`` is taken inside the session folder.
    """
    if isinstance(criteria, Criteria):
        return criteria
    if criteria is not None:
        return load_criteria(criteria)
    if session.criteria_file:
        path = Path(session.criteria_file)
        if not path.is_absolute() and session.folder is None:
            raise SessionError(
                f"{session.session_id}:criteria_file",
                f"relative criteria path {str(path)!r} needs the session's folder",
            )
        return load_criteria(path if path.is_absolute() else session.folder / path)
    return load_criteria(None)
