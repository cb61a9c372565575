# Verbatim copy of server/storage.py at commit fffa6fc (schema 1), kept to make schema-1 files for
# tests/test_store_migration.py. Do not edit: it stands for the databases that exist.
"""Saved scenarios: the one storage interface, and its SQLite implementation.

Everything the routes need goes through :class:`ScenarioStore`; another database can be
added by implementing it, without touching the routes. Scenarios are immutable: there is
no update and no delete, so a saved link always shows what was sent.

SQLite (standard library): one file, WAL mode, a busy timeout for concurrent writers, a
connection per operation (safe across threads). The schema is created and migrated at
start-up; the file is marked with our application id so a foreign or corrupted file is
refused with a clear error instead of being written over. At start-up SQLite's quick_check
reads every page: damage anywhere refuses the start and leaves the file as it was. A file
or folder that cannot be written is served read-only (saves are refused in words); a
record found damaged later stops all writes to the file; a full disk is said so.
"""

import errno
import json
import os
import secrets
import sqlite3
import tempfile
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Protocol

APPLICATION_ID = 0x50524359  # "PRCY": marks a presscycle database file
SCHEMA_VERSION = 1
ID_BYTES = 9  # 12 url-safe characters, 72 random bits: unguessable


class StorageError(RuntimeError):
    """The database cannot be used (foreign, corrupted, newer schema, unwritable, full).

    ``status`` is the HTTP status a request that meets it gets: 503 while the database
    cannot take the request, 507 when the disk is full.
    """

    def __init__(self, message: str, status: int = 503):
        super().__init__(message)
        self.status = status


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

    def mark_damaged(self, what: str): ...


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
    def __init__(self, path: Path | str, check_integrity: bool = True):
        self.path = Path(path)
        #: why the file is served read-only (None: writable)
        self.read_only: str | None = None
        #: what damage was found while running (None: none); no write goes into a damaged file
        self.damaged: str | None = None
        self.check_integrity = check_integrity
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StorageError(f"the folder of {self.path} cannot be created ({exc.strerror}); "
                               f"point PRESSCYCLE_DB at a writable place") from None
        self._migrate()

    def _connect(self) -> sqlite3.Connection:
        if self.read_only:
            # nothing may be written, not even SQLite's shared-memory file beside it
            conn = sqlite3.connect(f"file:{self.path}?immutable=1", uri=True, timeout=30.0, isolation_level=None)
        else:
            conn = sqlite3.connect(self.path, timeout=30.0, isolation_level=None)
        conn.execute("PRAGMA busy_timeout = 30000")
        return conn

    def _writable(self) -> str | None:
        """Why this file cannot be written, or None: tried, not guessed from permission bits
        (the file is opened for writing and closed untouched; a scratch file is made and
        removed in its folder, where SQLite keeps its journal)."""
        if self.path.exists():
            try:
                os.close(os.open(self.path, os.O_RDWR))
            except PermissionError:
                return f"the database file {self.path} is read-only"
            except OSError as exc:
                if exc.errno == errno.EROFS:
                    return f"the database file {self.path} is on a read-only filesystem"
                raise
        try:
            fd, scratch = tempfile.mkstemp(prefix=".presscycle-write-test-", dir=self.path.parent)
            os.close(fd)
            os.unlink(scratch)
        except OSError:
            return f"the folder of {self.path} is read-only (SQLite writes its journal beside the file)"
        return None

    def _refuse_damage(self, detail: str) -> StorageError:
        return StorageError(
            f"{self.path} is damaged ({detail}). Nothing was changed; restore it from a backup or point "
            f"PRESSCYCLE_DB at another file."
        )

    def _migrate(self) -> None:
        reason = self._writable()
        if reason is not None and not self.path.exists():
            raise StorageError(f"{reason}: the new database cannot be created there")
        self.read_only = reason
        wal = self.path.with_name(self.path.name + "-wal")
        if self.read_only and wal.exists() and wal.stat().st_size > 0:
            raise StorageError(
                f"{reason}, and {wal.name} beside it holds saves not yet merged into the file: make the file and "
                f"its folder writable for one start (they are merged then); read-only they would not be shown"
            )
        try:
            existing = self.path.exists() and self.path.stat().st_size > 0
            version = self._check() if existing else 0
            if self.read_only:
                if version < SCHEMA_VERSION:
                    raise StorageError(f"{self.read_only}, and it needs migrating to schema {SCHEMA_VERSION}: "
                                       f"make it writable for one start")
                return
            conn = self._connect()
            try:
                if not existing:
                    conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")  # a new file: ours from now on
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
        except sqlite3.OperationalError as exc:
            if _kind(exc) == "read-only":
                raise StorageError(f"{self.path} cannot be opened for writing ({exc}); make the file and its "
                                   f"folder writable, or point PRESSCYCLE_DB at another file") from None
            raise StorageError(f"{self.path} cannot be opened ({exc}); nothing was changed") from None
        except sqlite3.DatabaseError as exc:
            raise StorageError(
                f"{self.path} cannot be opened as a presscycle database ({exc}); it may be corrupted. "
                f"Nothing was changed; restore it from a backup or point PRESSCYCLE_DB at another file."
            ) from None

    def _check(self) -> int:
        """Check an existing file over a read-only connection (nothing written, no checkpoint):
        ours, not from a newer presscycle, undamaged. Returns its schema version."""
        uri = f"file:{self.path}?{'immutable=1' if self.read_only else 'mode=ro'}"
        conn = sqlite3.connect(uri, uri=True, timeout=30.0, isolation_level=None)
        try:
            app_id = conn.execute("PRAGMA application_id").fetchone()[0]
            version = conn.execute("PRAGMA user_version").fetchone()[0]
            tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
            if app_id != APPLICATION_ID and not (app_id == 0 and not tables):
                raise StorageError(
                    f"{self.path} is not a presscycle database (application id {app_id:#x}); "
                    f"refusing to use it. Point PRESSCYCLE_DB at another file."
                )
            if version > SCHEMA_VERSION:
                raise StorageError(
                    f"{self.path} has schema version {version}, newer than this presscycle "
                    f"({SCHEMA_VERSION}); upgrade presscycle instead."
                )
            if self.check_integrity and tables:
                problems = [r[0] for r in conn.execute("PRAGMA quick_check(5)")]
                if problems != ["ok"]:
                    raise self._refuse_damage("; ".join(problems)[:300])
            return version
        finally:
            conn.close()

    @contextmanager
    def _errors(self, writing: bool):
        """SQLite failures in the block as StorageError with a plain message and status."""
        if writing and (self.read_only or self.damaged):
            raise StorageError(f"nothing was saved: {self.read_only or self.damaged}; saved scenarios can "
                               f"still be read. Ask whoever runs presscycle to fix the database.")
        try:
            yield
        except sqlite3.DatabaseError as exc:
            kind = _kind(exc)
            if kind == "full":
                raise StorageError(f"nothing was saved: the disk holding {self.path} is full", 507) from None
            if kind == "read-only":
                raise StorageError(f"nothing was saved: {self.path} or its folder is read-only") from None
            if kind == "damaged":
                self.damaged = f"{self.path} was found damaged ({exc})"
                raise StorageError(f"{self.damaged}: no more writes go into it; restore it from a backup") from None
            raise StorageError(f"the database {self.path} could not be used ({exc}); try again") from None

    def _row(self, r) -> Scenario:
        try:
            s = Scenario(r[0], r[1], r[2], r[3], json.loads(r[4]), json.loads(r[5]), r[6], r[7], json.loads(r[8]))
            shape_ok = (all(isinstance(v, str) for v in (s.id, s.name, s.note, s.created, s.solver_version))
                        and all(isinstance(v, dict) for v in (s.inputs, s.results, s.summary)))
        except (ValueError, TypeError):
            shape_ok = False
        if not shape_ok:
            self.mark_damaged(f"the record of scenario {r[0]!r} in {self.path} is damaged")
        return s

    def mark_damaged(self, what: str):
        """Stop all writes into a file found damaged, and say so (raises StorageError)."""
        self.damaged = what
        raise StorageError(f"{what}: no more writes go into the file; restore it from a backup and restart presscycle")

    _COLUMNS = "id, name, note, created, inputs, results, solver_version, parent, summary"

    def create(self, name, note, inputs, results, solver_version, parent, summary) -> Scenario:
        created = datetime.now(UTC).isoformat(timespec="milliseconds")
        payload = (name, note, created, json.dumps(inputs, allow_nan=False),
                   json.dumps(results, allow_nan=False), solver_version, parent, json.dumps(summary, allow_nan=False))
        with self._errors(writing=True):
            return self._insert(payload, name, note, created, inputs, results, solver_version, parent, summary)

    def _insert(self, payload, name, note, created, inputs, results, solver_version, parent, summary) -> Scenario:
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
        with self._errors(writing=False):
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
        with self._errors(writing=False):
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


def _kind(exc: sqlite3.DatabaseError) -> str:
    """What an SQLite failure means for the person: full, read-only, damaged or other."""
    code = getattr(exc, "sqlite_errorname", "") or ""
    text = str(exc).lower()
    if code.startswith("SQLITE_FULL") or "disk is full" in text:
        return "full"
    if code.startswith(("SQLITE_READONLY", "SQLITE_CANTOPEN")) or "readonly" in text or "unable to open" in text:
        return "read-only"
    if code.startswith(("SQLITE_CORRUPT", "SQLITE_NOTADB")) or "malformed" in text or "not a database" in text:
        return "damaged"
    return "other"
