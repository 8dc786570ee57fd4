"""Multi-channel recordings (EDF/EDF+ via edfio, WFDB via wfdb) as labelled signals.

Both readers return a :class:`SignalFile`: physical values per channel label, the sampling
frequency, the physical dimension from the header, the file's start (naive wall clock, or None
when the file has none) and the SHA-256 of every file read.
"""

from __future__ import annotations

import io
import warnings
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

import numpy as np

from sedreport.errors import SessionError
from sedreport.ingest.files import RawFile, read_file, resolve_inside

WFDB_MISSING = "WFDB support needs the optional extra: pip install 'sedreport[wfdb]'"


@dataclass(frozen=True)
class Signal:
    """One channel: physical values, Hz, and the unit written in the header."""

    label: str
    data: np.ndarray
    fs_hz: float
    unit: str


@dataclass(frozen=True)
class SignalFile:
    """All channels of one recording."""

    reader: str
    signals: tuple[Signal, ...]
    start: datetime | None
    files: tuple[tuple[str, str], ...]
    notes: tuple[str, ...] = ()

    def pick(self, label: str | None, where: str, field: str) -> Signal:
        """The channel whose label matches ``label`` (case-insensitive, trimmed)."""
        present = ", ".join(repr(s.label) for s in self.signals) or "none"
        if label is None:
            if len(self.signals) == 1:
                return self.signals[0]
            raise SessionError(where, f"{field} not given; channels present: {present}")
        hits = [s for s in self.signals if s.label.strip().lower() == label.strip().lower()]
        if not hits:
            raise SessionError(where, f"no channel labelled {label!r}; channels present: {present}")
        if len(hits) > 1:
            raise SessionError(
                where, f"{len(hits)} channels labelled {label!r}; labels must be unique"
            )
        return hits[0]


def read_edf_signals(raw: RawFile, where: str) -> SignalFile:
    """Read an EDF or EDF+ file from its bytes with edfio (annotations are not signals)."""
    import edfio

    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            edf = edfio.read_edf(io.BytesIO(raw.data), lazy_load_data=False)
            signals = tuple(
                Signal(
                    s.label,
                    np.asarray(s.data, dtype=np.float64),
                    float(s.sampling_frequency),
                    s.physical_dimension.strip(),
                )
                for s in edf.signals
            )
            continuous = edf.is_continuous if edf.reserved.strip().startswith("EDF+") else True
    except (ValueError, IndexError, KeyError, TypeError, OverflowError, EOFError) as exc:
        raise SessionError(where, f"not a readable EDF file ({_first_line(exc)})") from None
    if not continuous:
        raise SessionError(where, "discontinuous EDF+D recording is not supported; export as EDF+C")
    start, notes = _edf_start(edf)
    notes += _library_notes("edfio", caught)
    return SignalFile("edf", signals, start, ((raw.rel, raw.sha256),), notes)


def _library_notes(library: str, caught: list) -> tuple[str, ...]:
    """Warnings a reader library raised while reading, kept as plain notes (never dropped)."""
    return tuple(dict.fromkeys(f"{library} warned: {_first_line(w.message)}" for w in caught))


def _edf_start(edf) -> tuple[datetime | None, tuple[str, ...]]:
    try:
        return edf.startdatetime, ()
    except (ValueError, AttributeError) as exc:
        return None, (
            f"start date not usable ({_first_line(exc)}); file taken to start at started",
        )


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def read_wfdb_signals(folder: Path, rel: str, session: str, where: str) -> SignalFile:
    """Read a single-segment WFDB record (``rec.hea`` + its signal files) with wfdb.

    The header's signal file names must lie inside the session folder like every data file.
    """
    try:
        import wfdb
    except ImportError:
        raise SessionError(where, WFDB_MISSING) from None
    base = rel[:-4] if rel.lower().endswith((".hea", ".dat")) else rel
    hea_path, hea_rel = resolve_inside(folder, base + ".hea", where)
    hea = read_file(hea_path, hea_rel, session)
    record_name = str(hea_path)[:-4]
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            header = wfdb.rdheader(record_name)
            if getattr(header, "seg_name", None):
                raise SessionError(where, "multi-segment WFDB records are not supported")
            files = [(hea.rel, hea.sha256)]
            for name in dict.fromkeys(header.file_name or []):
                dat_path, dat_rel = resolve_inside(folder, str(Path(hea_rel).parent / name), where)
                dat = read_file(dat_path, dat_rel, session)
                files.append((dat.rel, dat.sha256))
            rec = wfdb.rdrecord(record_name, physical=True)
            fs = float(rec.fs)
            if not fs > 0 or rec.p_signal is None:
                raise ValueError("no signals or no sampling frequency")
            signals = tuple(
                Signal(
                    str(name), np.asarray(rec.p_signal[:, i], dtype=np.float64), fs, str(unit or "")
                )
                for i, (name, unit) in enumerate(zip(rec.sig_name, rec.units, strict=True))
            )
    except (ValueError, IndexError, KeyError, TypeError, OSError, AttributeError) as exc:
        raise SessionError(where, f"not a readable WFDB record ({_first_line(exc)})") from None
    start = rec.base_datetime if getattr(rec, "base_date", None) is not None else None
    notes = (
        () if start is not None else ("record has no base date/time; taken to start at started",)
    )
    return SignalFile("wfdb", signals, start, tuple(files), notes + _library_notes("wfdb", caught))
