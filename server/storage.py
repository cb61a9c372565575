"""Saved scenarios: the one storage interface, and its SQLite implementation.

Everything the routes need goes through :class:`ScenarioStore`; another database can be
added by implementing it, without touching the routes. Scenarios are immutable: there is
no update and no delete, so a saved link always shows what was sent.

SQLite (standard library): one file, WAL mode, a busy timeout for concurrent writers, a
connection per operation (safe across threads). The schema is created and migrated at
start-up; the file is marked with our application id so a foreign or corrupted file is
refused with a clear error instead of being written over.
"""

import json
import secrets
import sqlite3
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Protocol

APPLICATION_ID = 0x50524359  # "PRCY": marks a presscycle database file
SCHEMA_VERSION = 1
ID_BYTES = 9  # 12 url-safe characters, 72 random bits: unguessable


class StorageError(RuntimeError):
    """The database cannot be used (foreign, corrupted, newer schema, unwritable)."""


@dataclass(frozen=True)
class Scenario:
    id: str
    name: str
    note: str
    created: str  # ISO 8601, UTC
    inputs: dict  # as entered, with units
    results: dict  # as computed at save time (SI)
    solver_version: str
    parent: str | None
    summary: dict  # key figures for lists


class ScenarioStore(Protocol):
    def create(self, name: str, note: str, inputs: dict, results: dict, solver_version: str,
               parent: str | None, summary: dict) -> Scenario: ...

    def get(self, scenario_id: str) -> Scenario | None: ...

    def search(self, q: str, page: int, per_page: int) -> tuple[list[Scenario], int]: ...

    def recent(self, n: int) -> list[Scenario]: ...


_MIGRATIONS = {
    1: [
        """CREATE TABLE scenarios (
            id TEXT PRIMARY KEY,
            name TEXT NOT NULL,
            note TEXT NOT NULL,
            created TEXT NOT NULL,
            inputs TEXT NOT NULL,
            results TEXT NOT NULL,
            solver_version TEXT NOT NULL,
            parent TEXT REFERENCES scenarios(id),
            summary TEXT NOT NULL
        )""",
        "CREATE INDEX scenarios_created ON scenarios(created DESC)",
    ],
}


class SqliteStore:
    def __init__(self, path: Path | str):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._migrate()

    def _connect(self) -> sqlite3.Connection:
        conn = sqlite3.connect(self.path, timeout=30.0, isolation_level=None)
        conn.execute("PRAGMA busy_timeout = 30000")
        return conn

    def _migrate(self) -> None:
        try:
            conn = self._connect()
            try:
                app_id = conn.execute("PRAGMA application_id").fetchone()[0]
                version = conn.execute("PRAGMA user_version").fetchone()[0]
                tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
                if app_id == 0 and not tables:
                    app_id = APPLICATION_ID  # a new, empty file: ours from now on
                    conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")
                if app_id != APPLICATION_ID:
                    raise StorageError(
                        f"{self.path} is not a presscycle database (application id {app_id:#x}); "
                        f"refusing to use it. Point PRESSCYCLE_DB at another file."
                    )
                if version > SCHEMA_VERSION:
                    raise StorageError(
                        f"{self.path} has schema version {version}, newer than this presscycle "
                        f"({SCHEMA_VERSION}); upgrade presscycle instead."
                    )
                conn.execute("PRAGMA journal_mode = WAL")
                for v in range(version + 1, SCHEMA_VERSION + 1):
                    conn.execute("BEGIN IMMEDIATE")
                    for statement in _MIGRATIONS[v]:
                        conn.execute(statement)
                    conn.execute(f"PRAGMA user_version = {v}")
                    conn.execute("COMMIT")
                conn.execute("SELECT count(*) FROM scenarios").fetchone()
            finally:
                conn.close()
        except sqlite3.DatabaseError as exc:
            raise StorageError(
                f"{self.path} cannot be opened as a presscycle database ({exc}); it may be corrupted. "
                f"Nothing was changed; restore it from a backup or point PRESSCYCLE_DB at another file."
            ) from None

    @staticmethod
    def _row(r) -> Scenario:
        return Scenario(r[0], r[1], r[2], r[3], json.loads(r[4]), json.loads(r[5]), r[6], r[7], json.loads(r[8]))

    _COLUMNS = "id, name, note, created, inputs, results, solver_version, parent, summary"

    def create(self, name, note, inputs, results, solver_version, parent, summary) -> Scenario:
        created = datetime.now(UTC).isoformat(timespec="milliseconds")
        payload = (name, note, created, json.dumps(inputs, allow_nan=False),
                   json.dumps(results, allow_nan=False), solver_version, parent, json.dumps(summary, allow_nan=False))
        conn = self._connect()
        try:
            for _ in range(10):
                sid = secrets.token_urlsafe(ID_BYTES)
                try:
                    conn.execute(f"INSERT INTO scenarios ({self._COLUMNS}) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                                 (sid, *payload))
                    return Scenario(sid, name, note, created, inputs, results, solver_version, parent, summary)
                except sqlite3.IntegrityError:
                    continue  # an id collision: draw again
            raise StorageError("could not draw a free scenario id")
        finally:
            conn.close()

    def get(self, scenario_id: str) -> Scenario | None:
        conn = self._connect()
        try:
            r = conn.execute(f"SELECT {self._COLUMNS} FROM scenarios WHERE id = ?", (scenario_id,)).fetchone()
        finally:
            conn.close()
        return self._row(r) if r else None

    def search(self, q: str, page: int, per_page: int) -> tuple[list[Scenario], int]:
        like = "%" + q.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"
        where = "WHERE name LIKE ? ESCAPE '\\' OR note LIKE ? ESCAPE '\\'" if q else ""
        args = (like, like) if q else ()
        conn = self._connect()
        try:
            total = conn.execute(f"SELECT count(*) FROM scenarios {where}", args).fetchone()[0]
            rows = conn.execute(
                f"SELECT {self._COLUMNS} FROM scenarios {where} ORDER BY created DESC, rowid DESC LIMIT ? OFFSET ?",
                (*args, per_page, (page - 1) * per_page),
            ).fetchall()
        finally:
            conn.close()
        return [self._row(r) for r in rows], total

    def recent(self, n: int) -> list[Scenario]:
        return self.search("", 1, n)[0]
