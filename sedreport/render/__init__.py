"""Rendering stage: reportlab vector PDFs from an Analysis (no detection knowledge here).

Public API: :func:`render_record` writes the PDF sedation record of one analysed session.
"""

from sedreport.render.record import render_record

__all__ = ["render_record"]
