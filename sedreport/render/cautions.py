"""The caution texts, read from ``templates/cautions.yaml`` only (never written elsewhere).

:func:`load_cautions` gives the titled notes of the PDF record; :func:`caution_line` the one
line that text, CSV-side and JSON outputs of the command line carry.
"""

from __future__ import annotations

import functools
from pathlib import Path

import yaml

from sedreport.errors import SedreportError

CAUTIONS_FILE = Path(__file__).resolve().parent.parent / "templates" / "cautions.yaml"


@functools.cache
def _read(path: Path) -> dict:
    try:
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
    except (OSError, yaml.YAMLError) as exc:
        raise SedreportError(f"{path}: cannot read the caution texts ({exc})") from exc
    if not isinstance(data, dict):
        raise SedreportError(f"{path}: expected a mapping with `summary` and `cautions`")
    return data


def load_cautions(path: Path = CAUTIONS_FILE, key: str = "cautions") -> list[tuple[str, str]]:
    """(title, text) pairs of the caution file: ``cautions`` for the PDF record,
    ``audit_cautions`` for the committee audit.

    Raises
    ------
    SedreportError
        When the file is missing or not of the form ``<key>: [{title, text}, ...]``.
    """
    entries = _read(path).get(key)
    if not isinstance(entries, list) or not entries:
        raise SedreportError(f"{path}:{key}: expected a non-empty list of title/text")
    out = []
    for i, e in enumerate(entries):
        if not isinstance(e, dict) or not e.get("title") or not e.get("text"):
            raise SedreportError(f"{path}:{key}[{i}]: needs a title and a text")
        out.append((str(e["title"]), " ".join(str(e["text"]).split())))
    return out


def caution_line(path: Path = CAUTIONS_FILE) -> str:
    """The one-line caution of the command-line outputs.

    Examples
    --------
    >>> "not an alarm or a diagnosis" in caution_line()
    True
    """
    text = _read(path).get("summary")
    if not isinstance(text, str) or not text.strip():
        raise SedreportError(f"{path}:summary: expected the one-line caution text")
    return " ".join(text.split())
