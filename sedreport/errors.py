"""One exception family; the command line turns every member into exit code 2."""

from __future__ import annotations


class SedreportError(Exception):
    """Base of every error caused by bad input or usage (exit code 2)."""


class SessionError(SedreportError):
    """A session folder, its ``session.yaml`` or one of its data files is unusable.

    Parameters
    ----------
    where : str
        Location in the form ``<session>/<file>`` with an optional ``:<line>`` or
        ``:<field>`` suffix, e.g. ``ENDO-0412/co2.csv:118``.
    what : str
        What is wrong, in one line, including the value given where that helps.
    """

    def __init__(self, where: str, what: str) -> None:
        self.where = where
        self.what = what
        super().__init__(f"{where}: {what}")


class CriteriaError(SedreportError):
    """A criteria file is malformed or inconsistent."""

    def __init__(self, where: str, what: str) -> None:
        self.where = where
        self.what = what
        super().__init__(f"{where}: {what}")
