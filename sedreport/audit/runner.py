"""Running an audit: find session folders, key them, analyse the new ones, store each at once.

Per-session analysis runs in-process (``jobs=1``), on a process pool, or on a Dask cluster
(``scheduler``). Only this process writes the register, one transaction per session, as each
result arrives: memory stays flat in the number of sessions, and a run killed at any moment
keeps every session already stored. A broken session is stored as failed with its one-line
error and never stops the audit.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from dataclasses import dataclass
from datetime import date
from multiprocessing import get_context
from pathlib import Path

import yaml

from sedreport._version import __version__
from sedreport.audit.records import record_of
from sedreport.audit.register import Register
from sedreport.criteria import DEFAULT_CRITERIA_FILE
from sedreport.errors import SedreportError

_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
#: Seconds to wait for a Dask scheduler before giving up (a choice of this tool).
SCHEDULER_TIMEOUT_S = 15.0


@dataclass(frozen=True)
class SessionInput:
    """A session folder found for an audit, with its register key."""

    path: str
    session_id: str
    started: str
    key: str


@dataclass(frozen=True)
class RunSummary:
    """What one audit run did.

    Attributes
    ----------
    inputs : tuple of SessionInput
        Every session folder in the audit (after ``since``/``until``).
    analysed, reused, failed : int
        Analysed now, found in the register, failed now (stored as failed).
    outside_period : int
        Session folders left out by ``since``/``until``.
    """

    inputs: tuple[SessionInput, ...]
    analysed: int
    reused: int
    failed: int
    outside_period: int


def find_session_folders(arguments: Iterable[str | Path]) -> list[Path]:
    """Session folders named or found (recursively) under the arguments, in sorted order.

    Raises
    ------
    SedreportError
        When an argument is neither a session folder nor a folder holding session folders.
    """
    found: dict[Path, None] = {}
    for arg in arguments:
        p = Path(arg)
        if (p / "session.yaml").is_file():
            found[p.resolve()] = None
        elif p.is_dir():
            subs = sorted(q.parent.resolve() for q in p.rglob("session.yaml"))
            if not subs:
                raise SedreportError(f"{arg}: no session folder (session.yaml) found in it")
            found.update(dict.fromkeys(subs))
        else:
            raise SedreportError(f"{arg}: not a session folder or a folder of sessions")
    return sorted(found)


def _sha256_file(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _named_files(folder: Path, doc: dict) -> list[str]:
    """Files a session.yaml names (sources, a criteria file; a WFDB record's other files)."""
    names = []
    sources = doc.get("sources") if isinstance(doc.get("sources"), dict) else {}
    for entry in sources.values():
        if isinstance(entry, dict) and isinstance(entry.get("file"), str):
            name = entry["file"]
            names.append(name)
            if name.endswith(".hea"):
                stem = Path(name).stem
                names += [q.name for q in folder.glob(f"{stem}.*") if q.name != name]
    if isinstance(doc.get("criteria"), str):
        names.append(doc["criteria"])
    return sorted(set(names))


def criteria_digest(criteria_path: str | Path | None) -> str:
    """SHA-256 of the criteria file the audit was given (else of the shipped default)."""
    return _sha256_file(Path(criteria_path) if criteria_path else DEFAULT_CRITERIA_FILE)


def scan_session(folder: Path, criteria_sha256: str) -> SessionInput:
    """Key of a session: SHA-256 over its input files, the criteria and the sedreport version.

    An unreadable ``session.yaml`` still gets a key (from its bytes); the analysis then stores
    the error, so the same broken input is not tried again.
    """
    raw = (folder / "session.yaml").read_bytes()
    try:
        doc = yaml.load(raw, Loader=_LOADER)
    except yaml.YAMLError:
        doc = None
    doc = doc if isinstance(doc, dict) else {}
    parts = {"version": __version__, "criteria": criteria_sha256, "session.yaml": raw.hex()}
    for name in _named_files(folder, doc):
        f = folder / name
        parts[f"file:{name}"] = _sha256_file(f) if f.is_file() else "missing"
    key = hashlib.sha256(json.dumps(parts, sort_keys=True).encode()).hexdigest()
    sid = str(doc.get("session_id") or folder.name)
    return SessionInput(str(folder), sid, str(doc.get("started") or ""), key)


def in_period(started: str, since: date | None, until: date | None) -> bool:
    """Whether a session's start date (``YYYY-MM-DD...``) is within ``since``..``until``."""
    day = started[:10]
    if not day:
        return True
    return not ((since and day < since.isoformat()) or (until and day > until.isoformat()))


def analyse_one(path: str, criteria_path: str | None = None) -> tuple[str, dict | None, str | None]:
    """The per-session worker: (path, record, None) or (path, None, one-line error)."""
    # Imported here: a warm audit (nothing new to analyse) never loads the detection stack.
    from sedreport.analysis import analyse_session
    from sedreport.ingest import load_session

    try:
        analysis = analyse_session(load_session(path), criteria_path)
        return path, record_of(analysis, path), None
    except SedreportError as exc:
        return path, None, str(exc).splitlines()[0]
    except Exception as exc:  # noqa: BLE001 - a broken session never stops the audit
        return path, None, f"internal error: {type(exc).__name__}: {exc}".splitlines()[0]


def _pool_results(paths, criteria_path, jobs: int) -> Iterator[tuple]:
    """Results as they complete, never more than ``4 * jobs`` sessions in flight."""
    todo = iter(paths)
    with ProcessPoolExecutor(max_workers=jobs, mp_context=get_context("spawn")) as pool:
        pending = set()
        for p in todo:
            pending.add(pool.submit(analyse_one, p, criteria_path))
            if len(pending) >= 4 * jobs:
                break
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                yield fut.result()
                nxt = next(todo, None)
                if nxt is not None:
                    pending.add(pool.submit(analyse_one, nxt, criteria_path))


def _dask_results(paths, criteria_path, scheduler: str) -> Iterator[tuple]:
    """Results from a Dask cluster as they complete (``sedreport[cluster]``)."""
    try:
        from distributed import Client, as_completed
    except ImportError as exc:  # pragma: no cover - depends on the optional extra
        raise SedreportError(
            "--scheduler: dask.distributed is not installed (pip install 'sedreport[cluster]')"
        ) from exc
    try:
        client = Client(scheduler, timeout=f"{SCHEDULER_TIMEOUT_S}s")
    except (OSError, TimeoutError) as exc:
        raise SedreportError(f"--scheduler: cannot reach {scheduler} ({exc})") from exc
    try:
        futures = client.map(analyse_one, list(paths), criteria_path=criteria_path, pure=False)
        for fut in as_completed(futures):
            yield fut.result()
            fut.release()
    finally:
        client.close()


def results(paths, criteria_path, jobs: int, scheduler: str | None) -> Iterator[tuple]:
    """Per-session results from the chosen executor, in completion order."""
    if scheduler:
        return _dask_results(paths, criteria_path, scheduler)
    if jobs <= 1 or len(paths) <= 1:
        return (analyse_one(p, criteria_path) for p in paths)
    return _pool_results(paths, criteria_path, jobs)


def run_audit(
    arguments: Iterable[str | Path],
    register: Register,
    *,
    criteria_path: str | None = None,
    jobs: int | None = None,
    scheduler: str | None = None,
    since: date | None = None,
    until: date | None = None,
    on_start: Callable[[int], None] | None = None,
    on_result: Callable[[str, str | None], None] | None = None,
) -> RunSummary:
    """Bring the register up to date for the sessions under ``arguments`` and select them.

    Parameters
    ----------
    arguments : paths
        Session folders or folders searched for session folders.
    register : Register
        Open register; after the run it is restricted to this audit's sessions.
    criteria_path : str or None
        Criteria file for every session (None: each session's own, else the default).
    jobs : int or None
        Worker processes (None: all cores).
    scheduler : str or None
        Address of a Dask scheduler; the analysis then runs on its workers.
    since, until : date or None
        Keep sessions started on or after / on or before these dates.
    on_start : callable or None
        Called with the number of sessions to analyse now, before the first.
    on_result : callable or None
        Called with (path, error or None) after each session analysed now.
    """
    folders = find_session_folders(arguments)
    digest = criteria_digest(criteria_path)
    scanned = [scan_session(f, digest) for f in folders]
    inputs = [s for s in scanned if in_period(s.started, since, until)]
    known = register.known_keys(s.key for s in inputs)
    todo = {s.path: s for s in inputs if s.key not in known}
    failed = 0
    if on_start is not None:
        on_start(len(todo))
    for path, record, error in results(
        list(todo), criteria_path, jobs or os.cpu_count() or 1, scheduler
    ):
        s = todo[path]
        if error is None:
            register.store(s.key, record)
        else:
            failed += 1
            register.store_failure(s.key, s.session_id, path, error)
        if on_result is not None:
            on_result(path, error)
    register.select(s.key for s in inputs)
    return RunSummary(
        tuple(inputs),
        len(todo) - failed,
        len(inputs) - len(todo),
        failed,
        len(scanned) - len(inputs),
    )
