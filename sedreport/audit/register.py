"""The audit register: one SQLite file of analysed sessions, keyed by what produced them.

Each session is stored under the SHA-256 of its input files, the criteria and the sedreport
version, so a re-run over a growing archive analyses only new or changed sessions. One
transaction per session: a run killed at any moment loses nothing already stored and leaves
no half-written rows. WAL mode and a busy timeout let two audits share one register.

The schema is plain SQL (TEXT, INTEGER, REAL; primary keys; no SQLite-only types) with a
schema version and a migration list: a change of schema adds ``MIGRATIONS[n + 1]`` (plain
``ALTER TABLE`` / ``CREATE`` statements) and raises :data:`SCHEMA_VERSION`; opening an older
register applies the missing steps in one transaction, and a newer one is refused. Writes name
their columns, so added columns do not break them. No patient name is stored (the session format has none);
``patient.ref`` is not stored either.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterable, Iterator
from pathlib import Path

from sedreport.errors import SedreportError

#: Current schema version; :data:`MIGRATIONS` brings any older register up to it.
SCHEMA_VERSION = 1

#: Statements that bring a register from version ``v - 1`` to ``v``.
MIGRATIONS: dict[int, tuple[str, ...]] = {
    1: (
        """CREATE TABLE IF NOT EXISTS sessions (
            key TEXT PRIMARY KEY,
            session_id TEXT NOT NULL,
            path TEXT NOT NULL,
            status TEXT NOT NULL,
            error TEXT,
            started TEXT,
            month TEXT,
            area TEXT,
            procedure_name TEXT,
            asa_class TEXT,
            target_depth TEXT,
            regimen TEXT,
            provider TEXT,
            criteria_name TEXT,
            criteria_sha256 TEXT,
            sedreport_version TEXT,
            summary_json TEXT
        )""",
        """CREATE TABLE IF NOT EXISTS episodes (
            key TEXT NOT NULL REFERENCES sessions (key),
            episode_id TEXT NOT NULL,
            kind TEXT NOT NULL,
            severity TEXT,
            event_id TEXT,
            start_s REAL,
            duration_s REAL,
            detail_json TEXT NOT NULL,
            PRIMARY KEY (key, episode_id)
        )""",
        """CREATE TABLE IF NOT EXISTS events (
            key TEXT NOT NULL REFERENCES sessions (key),
            event_id TEXT NOT NULL,
            severity TEXT NOT NULL,
            start_s REAL,
            detail_json TEXT NOT NULL,
            PRIMARY KEY (key, event_id)
        )""",
        "CREATE INDEX IF NOT EXISTS sessions_started ON sessions (started)",
    ),
}

#: Metadata columns of ``sessions`` and the record ``meta`` keys they hold.
META_COLUMNS: tuple[tuple[str, str], ...] = (
    ("started", "started"),
    ("month", "month"),
    ("area", "area"),
    ("procedure_name", "procedure"),
    ("asa_class", "asa_class"),
    ("target_depth", "target_depth"),
    ("regimen", "regimen"),
    ("provider", "provider"),
)

#: Columns written by :meth:`Register.store`, named so that a later migration may add columns.
SESSION_COLUMNS: tuple[str, ...] = (
    "key", "session_id", "path", "status", "error",
    *(c for c, _ in META_COLUMNS),
    "criteria_name", "criteria_sha256", "sedreport_version", "summary_json",
)  # fmt: skip
BUSY_TIMEOUT_MS = 60_000


class Register:
    """An open register. Use as a context manager or call :meth:`close`.

    Examples
    --------
    >>> import tempfile, os
    >>> path = os.path.join(tempfile.mkdtemp(), "r.sqlite")
    >>> with Register(path) as reg:
    ...     reg.schema_version()
    1
    """

    def __init__(self, path: str | Path):
        self.path = Path(path)
        try:
            self._db = sqlite3.connect(
                str(self.path), timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None
            )
            self._db.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            self._db.execute("PRAGMA journal_mode = WAL")
            self._db.execute("PRAGMA synchronous = NORMAL")
            self._migrate()
        except sqlite3.DatabaseError as exc:
            raise SedreportError(f"{self.path}: not a usable sedreport register ({exc})") from exc

    # ----- lifecycle --------------------------------------------------------------------
    def __enter__(self) -> Register:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Close the connection (every stored session is already committed)."""
        self._db.close()

    def _migrate(self) -> None:
        db = self._db
        db.execute("BEGIN IMMEDIATE")
        try:
            db.execute("CREATE TABLE IF NOT EXISTS schema_info (version INTEGER NOT NULL)")
            row = db.execute("SELECT MAX(version) FROM schema_info").fetchone()
            current = row[0] or 0
            if current > SCHEMA_VERSION:
                raise SedreportError(
                    f"{self.path}: register schema version {current} is newer than this "
                    f"sedreport reads ({SCHEMA_VERSION})"
                )
            for version in range(current + 1, SCHEMA_VERSION + 1):
                for statement in MIGRATIONS[version]:
                    db.execute(statement)
                db.execute("INSERT INTO schema_info (version) VALUES (?)", (version,))
            db.execute("COMMIT")
        except BaseException:
            db.execute("ROLLBACK")
            raise

    def schema_version(self) -> int:
        """The schema version of this register."""
        return int(self._db.execute("SELECT MAX(version) FROM schema_info").fetchone()[0])

    # ----- writing ----------------------------------------------------------------------
    def store(self, key: str, record: dict) -> None:
        """Store one analysed session (a record of :mod:`sedreport.audit.records`) in one
        transaction, replacing any earlier row under the same key."""
        meta = record["meta"]
        crit = record.get("criteria") or {}
        values = (
            key,
            record["session_id"],
            meta["path"],
            "ok",
            None,
            *(_text(meta.get(name)) for _, name in META_COLUMNS),
            crit.get("name"),
            crit.get("sha256"),
            meta.get("sedreport_version"),
            json.dumps(record.get("summary", {}), sort_keys=True),
        )
        episodes = [
            (
                key,
                e["id"],
                e["kind"],
                e.get("severity"),
                e.get("event"),
                e.get("start_s"),
                e.get("duration_s"),
                json.dumps(e, sort_keys=True),
            )
            for e in record.get("episodes", [])
        ]
        events = [
            (key, ev["id"], ev["severity"], ev.get("start_s"), json.dumps(ev, sort_keys=True))
            for ev in record.get("events", [])
        ]
        self._write(key, values, episodes, events)

    def store_failure(self, key: str, session_id: str, path: str, error: str) -> None:
        """Store a session that could not be analysed, with its one-line error."""
        values = (key, session_id, path, "failed", error, *([None] * 12))
        self._write(key, values, [], [])

    def _write(self, key: str, values: tuple, episodes: list, events: list) -> None:
        db = self._db
        db.execute("BEGIN IMMEDIATE")
        try:
            db.execute("DELETE FROM episodes WHERE key = ?", (key,))
            db.execute("DELETE FROM events WHERE key = ?", (key,))
            db.execute("DELETE FROM sessions WHERE key = ?", (key,))
            cols = ", ".join(SESSION_COLUMNS)
            marks = ", ".join("?" * len(SESSION_COLUMNS))
            db.execute(f"INSERT INTO sessions ({cols}) VALUES ({marks})", values)
            db.executemany(
                "INSERT INTO episodes (key, episode_id, kind, severity, event_id, start_s, "
                "duration_s, detail_json) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                episodes,
            )
            db.executemany(
                "INSERT INTO events (key, event_id, severity, start_s, detail_json) "
                "VALUES (?, ?, ?, ?, ?)",
                events,
            )
            db.execute("COMMIT")
        except BaseException:
            db.execute("ROLLBACK")
            raise

    # ----- reading ----------------------------------------------------------------------
    def known_keys(self, keys: Iterable[str]) -> set[str]:
        """Which of ``keys`` are stored (analysed or failed)."""
        out: set[str] = set()
        keys = list(keys)
        for i in range(0, len(keys), 500):
            chunk = keys[i : i + 500]
            q = f"SELECT key FROM sessions WHERE key IN ({', '.join('?' * len(chunk))})"
            out.update(r[0] for r in self._db.execute(q, chunk))
        return out

    def select(self, keys: Iterable[str]) -> None:
        """Restrict :meth:`records` and :meth:`failures` to ``keys`` (this audit's sessions)."""
        db = self._db
        db.execute("CREATE TEMP TABLE IF NOT EXISTS run_keys (key TEXT PRIMARY KEY)")
        db.execute("DELETE FROM run_keys")
        db.executemany("INSERT OR IGNORE INTO run_keys VALUES (?)", ((k,) for k in keys))

    def records(self) -> Iterator[dict]:
        """Every selected, analysed session as a record, in order of start time then id.

        One record at a time: memory does not grow with the number of sessions.
        """
        cols = ", ".join(c for c, _ in META_COLUMNS)
        q = (
            f"SELECT s.key, s.session_id, s.path, {cols}, s.criteria_name, s.criteria_sha256, "
            "s.sedreport_version, s.summary_json FROM sessions s JOIN run_keys r ON r.key = s.key "
            "WHERE s.status = 'ok' ORDER BY s.started, s.session_id, s.key"
        )
        reader = self._db.cursor()
        for row in reader.execute(q):
            key = row[0]
            meta = {name: row[3 + i] for i, (_, name) in enumerate(META_COLUMNS)}
            meta["path"] = row[2]
            meta["sedreport_version"] = row[-2]
            yield {
                "key": key,
                "session_id": row[1],
                "started": meta["started"],
                "criteria": {"name": row[-4], "sha256": row[-3]},
                "summary": json.loads(row[-1]),
                "episodes": self._details("episodes", "episode_id", key),
                "events": self._details("events", "event_id", key),
                "meta": meta,
            }

    def _details(self, table: str, id_column: str, key: str) -> list[dict]:
        q = f"SELECT detail_json FROM {table} WHERE key = ? ORDER BY start_s, {id_column}"
        return [json.loads(r[0]) for r in self._db.execute(q, (key,))]

    def failures(self) -> list[tuple[str, str, str]]:
        """Selected sessions that failed: (session_id, path, error), by path."""
        q = (
            "SELECT s.session_id, s.path, s.error FROM sessions s JOIN run_keys r "
            "ON r.key = s.key WHERE s.status = 'failed' ORDER BY s.path"
        )
        return [tuple(r) for r in self._db.execute(q)]

    def dump(self) -> list[tuple]:
        """Every row of every table in a fixed order (for comparing two registers)."""
        out: list[tuple] = []
        for table, order in (
            ("sessions", "key"),
            ("episodes", "key, episode_id"),
            ("events", "key, event_id"),
        ):
            out += [
                (table, *r) for r in self._db.execute(f"SELECT * FROM {table} ORDER BY {order}")
            ]
        return out


def _text(value: object) -> str | None:
    return None if value is None else str(value)
