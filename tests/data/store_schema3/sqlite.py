"""Saved scenarios in SQLite (standard library): the default store, one file, nothing to install.

One file, WAL mode, a busy timeout for concurrent writers, a connection per operation (safe
across threads). The schema is created and migrated at start-up; the file is marked with our
application id so a foreign or corrupted file is refused with a clear error instead of being
written over. At start-up SQLite's quick_check reads every page: damage anywhere refuses the
start and leaves the file as it was. A file or folder that cannot be written is served
read-only (saves are refused in words); a record found damaged later stops all writes to the
file; a full disk is said so.

Search: an FTS5 table with the trigram tokenizer over each scenario's search text (name,
note, summary words), so any substring of three characters or more is found through the
index; one or two characters find the words that begin with them (the table of word
prefixes). The count of scenarios is kept by triggers (schema 3), so a list reads no count(*).
"""

import errno
import json
import os
import sqlite3
import tempfile
from contextlib import contextmanager
from pathlib import Path

from .base import (
    SCHEMA_VERSION,
    Cursor,
    ListQueries,
    Page,
    Scenario,
    Search,
    StorageError,
    compact,
    dumps,
    like_pattern,
    new_id,
    now_iso,
    pack,
    page_from_rows,
    record,
    search_text,
    unpack,
    word_prefixes,
)

APPLICATION_ID = 0x50524359  # "PRCY": marks a presscycle database file


def _schema_1(conn):
    conn.execute("""CREATE TABLE scenarios (
            id TEXT PRIMARY KEY,
            name TEXT NOT NULL,
            note TEXT NOT NULL,
            created TEXT NOT NULL,
            inputs TEXT NOT NULL,
            results TEXT NOT NULL,
            solver_version TEXT NOT NULL,
            parent TEXT REFERENCES scenarios(id),
            summary TEXT NOT NULL
        )""")
    conn.execute("CREATE INDEX scenarios_created ON scenarios(created DESC)")


def _schema_2(conn, solver_version: str):
    """Compact results, a search index. Schema 1 kept every chart series with the results
    (about 155 kB a scenario); they are recomputed on view now. A record saved by another
    solver version keeps its series (this solver would draw different ones): nothing that
    cannot be recomputed is dropped."""
    conn.execute("CREATE VIRTUAL TABLE scenarios_search USING fts5(text, tokenize='trigram')")
    rows = conn.execute("SELECT rowid, name, note, inputs, results, solver_version, summary FROM scenarios")
    update = conn.cursor()
    for rowid, name, note, inputs, results, version, summary in rows:
        try:
            kept = unpack(results)
            inputs, summary = json.loads(inputs), json.loads(summary)
        except (ValueError, TypeError):
            continue  # a damaged record stays byte for byte as it was; reading it says so
        if not all(isinstance(v, dict) for v in (kept, inputs, summary)):
            continue
        update.execute("UPDATE scenarios SET results = ? WHERE rowid = ?",
                       (pack(compact(kept) if version == solver_version else kept), rowid))
        update.execute("INSERT INTO scenarios_search (rowid, text) VALUES (?, ?)",
                       (rowid, search_text(name, note, inputs, summary)))


def _schema_3(conn):
    """The count of scenarios kept by triggers in the saving transaction (a list then reads one
    row instead of counting); the first one and two characters of each word of the search
    text, for searches of one or two characters (no trigram serves them)."""
    conn.execute("CREATE TABLE scenario_count (n INTEGER NOT NULL)")
    conn.execute("INSERT INTO scenario_count SELECT count(*) FROM scenarios")
    conn.execute("CREATE TRIGGER scenario_count_insert AFTER INSERT ON scenarios "
                 "BEGIN UPDATE scenario_count SET n = n + 1; END")
    conn.execute("CREATE TRIGGER scenario_count_delete AFTER DELETE ON scenarios "
                 "BEGIN UPDATE scenario_count SET n = n - 1; END")
    conn.execute("CREATE TABLE scenario_prefixes (prefix TEXT NOT NULL, scenario INTEGER NOT NULL, "
                 "PRIMARY KEY (prefix, scenario)) WITHOUT ROWID")
    rows = conn.execute("SELECT rowid, text FROM scenarios_search")
    conn.executemany("INSERT INTO scenario_prefixes VALUES (?, ?)",
                     ((prefix, rowid) for rowid, text in rows for prefix in word_prefixes(text)))


class SqliteStore(ListQueries):
    def __init__(self, path: Path | str, check_integrity: bool = True, solver_version: str | None = None):
        self.path = Path(path)
        #: why the file is served read-only (None: writable)
        self.read_only: str | None = None
        #: what damage was found while running (None: none); no write goes into a damaged file
        self.damaged: str | None = None
        self.check_integrity = check_integrity
        if solver_version is None:
            from ..solver import SOLVER_VERSION as solver_version
        self.solver_version = solver_version
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StorageError(f"the folder of {self.path} cannot be created ({exc.strerror}); "
                               f"point PRESSCYCLE_DB at a writable place") from None
        self._migrate()

    _SEQ = "rowid"  # insertion order: orders scenarios saved in the same millisecond
    _P = "?"

    def __repr__(self):
        return f"SqliteStore({str(self.path)!r})"

    def close(self) -> None:
        pass  # a connection per operation: nothing held open

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
                steps = {1: _schema_1, 2: lambda c: _schema_2(c, self.solver_version), 3: _schema_3}
                for v in range(version + 1, SCHEMA_VERSION + 1):
                    conn.execute("BEGIN IMMEDIATE")
                    if conn.execute("PRAGMA user_version").fetchone()[0] >= v:
                        conn.execute("COMMIT")  # another process (a uvicorn worker) took this step meanwhile
                        continue
                    steps[v](conn)
                    conn.execute(f"PRAGMA user_version = {v}")
                    conn.execute("COMMIT")
                if 0 < version < 2:
                    conn.execute("VACUUM")  # give back the space the chart series took
                conn.execute("SELECT count(*) FROM scenarios").fetchone()
            finally:
                conn.close()
        except sqlite3.OperationalError as exc:
            if _kind(exc) == "read-only":
                raise StorageError(f"{self.path} cannot be opened for writing ({exc}); make the file and its "
                                   f"folder writable, or point PRESSCYCLE_DB at another file") from None
            if _kind(exc) == "full":
                raise StorageError(f"{self.path} could not be migrated: the disk is full. Nothing was changed; "
                                   f"free some space and start again") from None
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

    def mark_damaged(self, what: str):
        """Stop all writes into a file found damaged, and say so (raises StorageError)."""
        self.damaged = what
        raise StorageError(f"{what}: no more writes go into the file; restore it from a backup and restart presscycle")

    _COLUMNS = "id, name, note, created, inputs, results, solver_version, parent, summary"
    _MARKS = ", ".join("?" * 9)

    def create(self, name, note, inputs, results, solver_version, parent, summary) -> Scenario:
        created = now_iso()
        payload = (name, note, created, dumps(inputs), pack(results), solver_version, parent, dumps(summary))
        text = search_text(name, note, inputs, summary)
        with self._errors(writing=True):
            conn = self._connect()
            try:
                for _ in range(10):
                    sid = new_id()
                    try:
                        conn.execute("BEGIN IMMEDIATE")
                        cur = conn.execute(f"INSERT INTO scenarios ({self._COLUMNS}) VALUES ({self._MARKS})",
                                           (sid, *payload))
                        conn.execute("INSERT INTO scenarios_search (rowid, text) VALUES (?, ?)", (cur.lastrowid, text))
                        conn.executemany("INSERT INTO scenario_prefixes VALUES (?, ?)",
                                         [(prefix, cur.lastrowid) for prefix in word_prefixes(text)])
                        conn.execute("COMMIT")
                        return Scenario(sid, name, note, created, inputs, results, solver_version, parent, summary)
                    except sqlite3.IntegrityError:
                        conn.execute("ROLLBACK")  # an id collision: draw again
                    except BaseException:
                        if conn.in_transaction:
                            conn.execute("ROLLBACK")
                        raise
                raise StorageError("could not draw a free scenario id")
            finally:
                conn.close()

    def _read(self, sql: str, args=(), one=False):
        with self._errors(writing=False):
            conn = self._connect()
            try:
                cur = conn.execute(sql, args)
                return cur.fetchone() if one else cur.fetchall()
            finally:
                conn.close()

    def get(self, scenario_id: str) -> Scenario | None:
        r = self._read(f"SELECT {self._COLUMNS} FROM scenarios WHERE id = ?", (scenario_id,), one=True)
        if r is None:
            return None
        try:
            return record(r)
        except (ValueError, TypeError):
            self.mark_damaged(f"the record of scenario {r[0]!r} in {self.path} is damaged")

    #: where each kind of search finds its scenarios (rowids)
    _MATCHES = {
        "substring": "SELECT rowid FROM scenarios_search WHERE scenarios_search MATCH ?",
        "prefix": "SELECT scenario FROM scenario_prefixes WHERE prefix = ?",
        "scan": "SELECT rowid FROM scenarios_search WHERE text LIKE ? ESCAPE '\\'",
    }

    @staticmethod
    def _argument(search: Search) -> str:
        if search.kind == "substring":  # the text as a phrase of trigrams: any substring, % and _ literal
            return '"' + search.term.replace('"', '""') + '"'
        if search.kind == "prefix":
            return search.term
        return like_pattern(search.term)

    def _count(self, search: Search) -> tuple[int, bool]:
        if search.kind == "all":
            return self._read("SELECT n FROM scenario_count", one=True)[0], True
        sql = f"SELECT count(*) FROM ({self._MATCHES[search.kind]} LIMIT {self.count_limit + 1})"
        return self._capped(self._read(sql, (self._argument(search),), one=True)[0])

    #: the same, checked for one row of scenarios (a walk of the newest-first index)
    _HAS = {
        "substring": "instr((SELECT text FROM scenarios_search WHERE rowid = scenarios.rowid), ?) > 0",
        "prefix": "EXISTS (SELECT 1 FROM scenario_prefixes WHERE prefix = ? AND scenario = scenarios.rowid)",
        "scan": "instr((SELECT text FROM scenarios_search WHERE rowid = scenarios.rowid), ?) > 0",
    }

    def _filter(self, search: Search, walk: bool) -> tuple[str, tuple]:
        # Many matches: walk the newest-first index, check each row, stop after a page (matches
        # come every few rows). Fewer: look the matches up and sort them (walk_above).
        if search.kind == "all":
            return "", ()
        if walk:
            return self._HAS[search.kind], (search.term,)
        return f"rowid IN ({self._MATCHES[search.kind]})", (self._argument(search),)

    def _source(self, walk: bool) -> str:
        return "scenarios INDEXED BY scenarios_created" if walk else "scenarios"

    #: searches with up to this many matches look them up and sort them; more (up to
    #: count_limit) walk the newest-first index, checking each row against the matches found
    look_up_below = 2000

    def page(self, q: str, cursor: str | None, per_page: int) -> Page:
        """A search reads its matches once (up to count_limit + 1 rowids): their number is the
        count, and the page is found among them, by looking them up and sorting (few) or by
        walking the newest-first index and checking each row against them (many; the index
        holds the rowid, so no scenario row is read until it matches). Past count_limit, the
        walk checks each row's own search text or prefixes."""
        search = Search.of(q)
        if search.kind == "all":
            return super().page(q, cursor, per_page)
        at = Cursor.decode(cursor) if cursor else None
        found = [r[0] for r in self._read(f"{self._MATCHES[search.kind]} LIMIT {self.count_limit + 1}",
                                          (self._argument(search),))]
        total, exact = self._capped(len(found))
        if not exact:
            where, args = self._HAS[search.kind], (search.term,)
            source = self._source(walk=True)
        else:
            where, args = "rowid IN (SELECT value FROM json_each(?))", (json.dumps(found),)
            source = "scenarios"
            if total >= self.look_up_below:
                source, where = self._source(walk=True), "+" + where
        order = "DESC"
        if at is not None:
            op, order = ("<", "DESC") if at.direction == "older" else (">", "ASC")
            where = f"{where} AND (created, rowid) {op} (?, ?)"
            args = (*args, at.created, at.seq)
        rows = self._read(f"SELECT created, rowid, id, name, note, summary FROM {source} WHERE {where} "
                          f"ORDER BY created {order}, rowid {order} LIMIT ?", (*args, per_page + 1))
        return page_from_rows(rows, at, per_page, total, self._one_listed, exact)


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
