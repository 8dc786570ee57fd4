"""Rendering stage: every output form of an Analysis, and nothing about detection.

PDF record: :func:`sedreport.render.record.render_record` (also ``sedreport.render_record``);
JSON, CSV and terminal text: :mod:`.json_text`, :mod:`.csv_text`, :mod:`.terminal`, chosen per
command in :mod:`.stdout`. Nothing is imported here, so the text outputs never load reportlab.
"""
