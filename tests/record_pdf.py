"""Read a rendered record back with pdfplumber (a general-purpose PDF reader) for the tests."""

from __future__ import annotations

from pathlib import Path

import pdfplumber


def page_texts(path: Path, pages: slice | None = None) -> list[str]:
    """Extracted text of every page (or of the pages in ``pages``)."""
    with pdfplumber.open(path) as pdf:
        chosen = pdf.pages if pages is None else pdf.pages[pages]
        return [p.extract_text() or "" for p in chosen]


def norm(text: str) -> str:
    """Whitespace collapsed to single spaces."""
    return " ".join(text.split())


def table_cells(
    path: Path, page_no: int, headers: list[str], row_ids: list[str], stop_word: str
) -> dict[str, list[str]]:
    """Cell texts of a table, cut by the x of its heading words and the y of its row ids.

    Parameters
    ----------
    headers : list of str
        First word of each column heading, left to right.
    row_ids : list of str
        Text of the first cell of each row (e.g. ``E1``), in order.
    stop_word : str
        First word of the line below the table.
    """
    with pdfplumber.open(path) as pdf:
        page = pdf.pages[page_no]
        words = page.extract_words()
        # the heading line: the first headers[0] with headers[1] beside it (the record has
        # more than one table whose heading starts with "ID")
        head_top = next(
            w["top"]
            for w in words
            if w["text"] == headers[0]
            and any(v["text"] == headers[1] and abs(v["top"] - w["top"]) < 3 for v in words)
        )
        lefts = []
        for h in headers:
            cand = [w for w in words if w["text"] == h and abs(w["top"] - head_top) < 3]
            lefts.append(cand[0]["x0"] - 1.5)
        lefts.append(page.width)
        id_words = [w for w in words if w["x0"] < lefts[1] and w["top"] > head_top + 5]
        tops = []
        for rid in row_ids:
            tops.append(
                next(
                    w["top"]
                    for w in id_words
                    if w["text"] == rid and (not tops or w["top"] > tops[-1])
                )
                - 1
            )
        tops.append(
            next(w["top"] for w in words if w["text"] == stop_word and w["top"] > tops[-1]) - 1
        )
        cells = {}
        for i, rid in enumerate(row_ids):
            row = []
            for j in range(len(headers)):
                box = (lefts[j], tops[i], min(lefts[j + 1], page.width), tops[i + 1])
                row.append(norm(page.crop(box).extract_text() or ""))
            cells[rid] = row
        return cells
