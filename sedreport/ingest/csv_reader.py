"""Reading the CSV data files into columns that remember their file line numbers.

Rules: the first line is the header (names are trimmed and compared in lower case); data line
``k`` is file line ``k + 1``. Blank lines are skipped and counted. Each column is taken as
pandas' C parser reads it when nothing was lost (finite numbers, text without missing cells:
the fast path); any other column is re-read as exact text so that the first bad cell can be
named by its line. A line break inside a quoted cell would shift the line numbers.
"""

from __future__ import annotations

import io
import re
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from sedreport.errors import SessionError

_FIELDS_RE = re.compile(r"Expected (\d+) fields in line (\d+), saw (\d+)")


@dataclass(frozen=True)
class CsvTable:
    """Columns of one CSV file.

    Attributes
    ----------
    where : str
        ``<session>/<file>`` for error messages.
    frame : DataFrame
        One column per header name (lower case); numeric dtypes on the fast path, else text.
    lines : ndarray of int
        File line number (header = 1) of each row of ``frame``.
    blank_lines : int
        Blank lines skipped.
    extra_columns : tuple of str
        Header names not used by the reader (reported as a warning by the caller).
    """

    where: str
    frame: pd.DataFrame
    lines: np.ndarray
    blank_lines: int = 0
    extra_columns: tuple[str, ...] = field(default=())

    def at(self, row: int) -> str:
        """``<session>/<file>:<line>`` of a row index."""
        return f"{self.where}:{int(self.lines[row])}"

    def __len__(self) -> int:
        return len(self.frame)


def _read(text: str, where: str) -> pd.DataFrame:
    kwargs: dict = {"skip_blank_lines": False, "index_col": False, "engine": "c"}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", pd.errors.ParserWarning)
            return pd.read_csv(io.StringIO(text), **kwargs)
    except pd.errors.ParserWarning:
        raise SessionError(f"{where}:2", "more fields than the header has columns") from None
    except pd.errors.EmptyDataError:
        raise SessionError(where, "file is empty (no header line)") from None
    except (pd.errors.ParserError, ValueError, OverflowError) as exc:
        match = _FIELDS_RE.search(str(exc))
        if match:
            n_want, line, n_saw = match.groups()
            raise SessionError(
                f"{where}:{line}", f"{n_saw} fields but the header has {n_want}"
            ) from None
        detail = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise SessionError(where, f"not readable as CSV ({detail})") from None


def _show(name: str) -> str:
    """A header name as printed in messages: plain when it is a simple word, else repr."""
    return name if re.fullmatch(r"[\w ./%-]*", name) and name.strip() else repr(name)


def _header(frame: pd.DataFrame, where: str, required: tuple[str, ...]) -> list[str]:
    names = [str(c).strip().lower() for c in frame.columns]
    if any(
        re.fullmatch(r".*\.\d+", str(c)) and str(c).rsplit(".", 1)[0].strip().lower() in names
        for c in frame.columns
    ):
        raise SessionError(
            f"{where}:1", f"repeated column name in header {', '.join(map(_show, names))}"
        )
    if len(set(names)) != len(names):
        raise SessionError(
            f"{where}:1", f"repeated column name in header {', '.join(map(_show, names))}"
        )
    missing = [r for r in required if r not in names]
    if missing:
        raise SessionError(
            f"{where}:1",
            f"missing column(s) {', '.join(missing)}; header has {', '.join(map(_show, names))}",
        )
    return names


def read_csv_table(
    text: str, where: str, required: tuple[str, ...], optional: tuple[str, ...] = ()
) -> CsvTable:
    """Parse CSV text into a :class:`CsvTable`.

    Parameters
    ----------
    text : str
        Decoded file contents.
    where : str
        ``<session>/<file>``.
    required, optional : tuple of str
        Column names (lower case) that must / may appear.

    Raises
    ------
    SessionError
        No header, missing or repeated columns, header only (no data rows), ragged rows.
    """
    frame = _read(text, where)
    names = _header(frame, where, required)
    use = [n for n in names if n in required or n in optional]
    extra = tuple(n for n in names if n not in use)
    columns = {}
    for i, name in enumerate(names):
        if name in use:
            kept = _usable(frame.iloc[:, i])
            col = kept if kept is not None else _text_column(text, i)
            columns[name] = col if _is_number_column(col) else col.astype(str).str.strip()
    frame = pd.DataFrame(columns)
    lines = np.arange(2, len(frame) + 2, dtype=np.int64)
    blank = _blank_rows(frame)
    if blank.any():
        frame = frame.loc[~blank].reset_index(drop=True)
        lines = lines[~blank]
    if len(frame) == 0:
        raise SessionError(where, "no data rows (header only)")
    return CsvTable(where, frame, lines, int(blank.sum()), extra)


def _usable(col: pd.Series) -> pd.Series | None:
    """The column as parsed by the fast read when nothing was lost, else None.

    Kept: finite float/int columns, and text columns without missing cells (the text is
    unchanged). Anything with NaN (blank, ``NA``...), booleans or mixed objects is re-read as
    text so that the first bad cell can be named exactly.
    """
    if pd.api.types.is_bool_dtype(col):
        return None
    if pd.api.types.is_float_dtype(col) or pd.api.types.is_integer_dtype(col):
        return col if np.isfinite(col.to_numpy(dtype=float)).all() else None
    if pd.api.types.is_string_dtype(col) and not col.isna().any():
        return col
    return None


def _text_column(text: str, index: int) -> pd.Series:
    """Column ``index`` re-read as exact text (no NA conversion)."""
    frame = pd.read_csv(
        io.StringIO(text),
        usecols=[index],
        dtype=str,
        keep_default_na=False,
        na_filter=False,
        skip_blank_lines=False,
        index_col=False,
        engine="c",
    )
    return frame.iloc[:, 0].fillna("")


def _is_number_column(col: pd.Series) -> bool:
    return pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col)


def _blank_rows(frame: pd.DataFrame) -> np.ndarray:
    """Rows whose every cell is empty (text columns are already stripped)."""
    blank = np.ones(len(frame), dtype=bool)
    for name in frame.columns:
        col = frame[name]
        blank &= col.isna().to_numpy() if _is_number_column(col) else col.eq("").to_numpy()
    return blank


def column_numbers(table: CsvTable, name: str, label: str, allow_blank: bool = False) -> np.ndarray:
    """One column as float64, naming the first cell that is not a finite number.

    Parameters
    ----------
    table : CsvTable
    name : str
        Column name.
    label : str
        Plain name for messages (``CO2 value``, ``dose``...).
    allow_blank : bool
        Blank cells become NaN instead of an error (the caller counts them).
    """
    col = table.frame[name]
    if pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col):
        return col.to_numpy(dtype=np.float64)
    text = col  # stripped text (see read_csv_table)
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64, copy=True)
    blank = text.eq("").to_numpy()
    bad = ~np.isfinite(values)
    if allow_blank:
        bad &= ~blank
    if bad.any():
        row = int(np.argmax(bad))
        given = text.iloc[row]
        what = "is empty" if given == "" else f"{given!r} is not a finite number"
        raise SessionError(table.at(row), f"{label} {what}")
    values[blank] = np.nan
    return values


def column_text(table: CsvTable, name: str) -> np.ndarray:
    """One column as stripped strings (empty string where blank or absent)."""
    if name not in table.frame.columns:
        return np.full(len(table), "", dtype=object)
    col = table.frame[name]
    if pd.api.types.is_numeric_dtype(col):
        return np.array([("" if pd.isna(v) else repr(v)) for v in col.tolist()], dtype=object)
    return col.to_numpy(dtype=object)
