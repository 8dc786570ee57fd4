"""Published reference rates (a YAML file with citations) to show beside local audit rates."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import yaml

from sedreport.errors import SedreportError

#: The reference file shipped with sedreport.
DEFAULT_REFERENCE_FILE = (
    Path(__file__).resolve().parent.parent / "templates" / "audit" / "reference_rates.yaml"
)
_REQUIRED = (
    "name",
    "kind",
    "severity",
    "per_1000",
    "estimate",
    "population",
    "source",
    "from_memory",
)


@dataclass(frozen=True)
class ReferenceRate:
    """One published rate per 1,000 sedations with its citation.

    ``estimate`` says how it was made (``crude k/n`` of one series or a ``pooled`` estimate);
    ``from_memory`` is True where the value was not checked against the paper.
    """

    name: str
    kind: str
    severity: str
    per_1000: float
    low_per_1000: float | None
    high_per_1000: float | None
    k: int | None
    n: int | None
    estimate: str
    population: str
    source: str
    from_memory: bool


def load_reference_rates(path: str | Path | None = None) -> tuple[ReferenceRate, ...]:
    """Read a reference-rate file (default: the shipped one); errors name the file and field.

    Examples
    --------
    >>> rates = load_reference_rates()
    >>> rates[0].source, rates[0].per_1000
    ('Mallory et al., Ann Emerg Med 2011', 22.8)
    """
    file = Path(path) if path else DEFAULT_REFERENCE_FILE
    try:
        doc = yaml.safe_load(file.read_text(encoding="utf-8"))
    except (OSError, yaml.YAMLError) as exc:
        raise SedreportError(f"{file}: cannot read reference rates ({exc})") from exc
    if not isinstance(doc, dict) or doc.get("format") != "sedreport-reference-rates/1":
        raise SedreportError(f"{file}:format: expected 'sedreport-reference-rates/1'")
    entries = doc.get("rates")
    if not isinstance(entries, list) or not entries:
        raise SedreportError(f"{file}:rates: expected a non-empty list")
    out = []
    for i, e in enumerate(entries):
        where = f"{file}:rates[{i}]"
        if not isinstance(e, dict):
            raise SedreportError(f"{where}: expected a mapping")
        for key in _REQUIRED:
            if key not in e:
                raise SedreportError(f"{where}.{key}: missing")
        try:
            per = float(e["per_1000"])
        except (TypeError, ValueError) as exc:
            raise SedreportError(f"{where}.per_1000: not a number ({e['per_1000']!r})") from exc
        if not 0 <= per <= 1000:
            raise SedreportError(f"{where}.per_1000: must be 0-1000, got {per}")
        out.append(
            ReferenceRate(
                str(e["name"]),
                str(e["kind"]),
                str(e["severity"]),
                per,
                _opt_float(e.get("low_per_1000")),
                _opt_float(e.get("high_per_1000")),
                _opt_int(e.get("k")),
                _opt_int(e.get("n")),
                str(e["estimate"]),
                str(e["population"]),
                str(e["source"]),
                bool(e["from_memory"]),
            )  # fmt: skip
        )
    return tuple(out)


def _opt_float(x) -> float | None:
    return None if x is None else float(x)


def _opt_int(x) -> int | None:
    return None if x is None else int(x)
