"""What the command line prints on stdout, by ``--format``: one call per command.

``table`` is the terminal text of :mod:`.terminal`, ``csv`` the contract of :mod:`.csv_text`,
``json`` the contract of :mod:`.json_text`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from sedreport.capnography.model import BreathTable
from sedreport.criteria import Criteria
from sedreport.render.csv_text import breaths_csv, episodes_csv
from sedreport.render.json_text import breaths_json, episodes_json
from sedreport.render.terminal import breaths_table, episode_table

if TYPE_CHECKING:  # types only: the text outputs must not load the detectors
    from sedreport.analysis import Analysis


#: The output forms of ``breaths`` and ``episodes``.
FORMATS: tuple[str, ...] = ("table", "csv", "json")


def _check(fmt: str) -> str:
    fmt = fmt.lower()
    if fmt not in FORMATS:
        raise ValueError(f"unknown format {fmt!r}; expected one of {', '.join(FORMATS)}")
    return fmt


def breaths_text(breaths: BreathTable, session_id: str, criteria: Criteria, fmt: str) -> str:
    """``sedreport breaths`` output in ``table``, ``csv`` or ``json``."""
    fmt = _check(fmt)
    if fmt == "csv":
        return breaths_csv(breaths)
    if fmt == "json":
        return breaths_json(breaths, session_id, criteria)
    return breaths_table(breaths, session_id)


def episodes_text(analysis: Analysis, fmt: str) -> str:
    """``sedreport episodes`` output in ``table``, ``csv`` or ``json``."""
    fmt = _check(fmt)
    if fmt == "csv":
        return episodes_csv(analysis)
    if fmt == "json":
        return episodes_json(analysis)
    return episode_table(analysis)
