"""Criteria files: every detection threshold with its published source (owned by the episodes work)."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Criterion:
    """One threshold of a criteria file, with where it comes from."""

    section: str
    name: str
    value: float
    unit: str
    source: str
    note: str = ""


@dataclass(frozen=True)
class Criteria:
    """A loaded, checked criteria file (implementation pending in the episodes issue)."""

    name: str
    path: str
    sha256: str
    description: str
    items: tuple[Criterion, ...]
