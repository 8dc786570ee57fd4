"""Ingest: a session folder (format ``sedreport-session/1``) to one checked Session.

Every stream lands on the session clock (seconds since ``started``, after each file's
``clock_offset_s``) in one set of units (CO2 mmHg, SpO2 %, pulse /min, doses mg and mg/h).
Bad input raises :class:`sedreport.errors.SessionError` naming file and line or field;
data-quality facts (gaps, missing streams, ...) become findings, never silent fixes.
"""

from sedreport.ingest.load import load_session

__all__ = ["load_session"]
