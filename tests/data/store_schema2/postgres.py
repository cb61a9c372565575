"""Saved scenarios in PostgreSQL: one database that several app instances share.

psycopg 3 with a connection pool (psycopg_pool); every statement commits on its own (a save
is one INSERT, so an acknowledged save is committed). The database is marked ours by the table
``presscycle_meta`` (application, schema version): a database with other tables and no marker
is refused, as is a newer schema; the schema is created and migrated at start-up under an
advisory lock, so instances starting together migrate once. Search: a trigram GIN index
(pg_trgm) over each scenario's search text, queried with LIKE like the SQLite store; where the
extension cannot be created the same LIKE scans the table (slower, same answers).
"""

import logging
from contextlib import contextmanager

import psycopg
from psycopg import errors as pg_errors
from psycopg.conninfo import conninfo_to_dict
from psycopg_pool import ConnectionPool, PoolTimeout

from .base import SCHEMA_VERSION, ListQueries, Scenario, StorageError, dumps, new_id, now_iso, pack, record, search_text

log = logging.getLogger("presscycle.store")

APPLICATION = "presscycle"
MIGRATION_LOCK = 0x50524359  # pg_advisory_xact_lock key: "PRCY"

#: Schema steps by version. PostgreSQL support starts at schema 2 (the compact one), so a
#: new database gets everything at once; later steps go under their own version.
_MIGRATIONS = {
    2: [
        "CREATE TABLE presscycle_meta (key text PRIMARY KEY, value text NOT NULL)",
        f"INSERT INTO presscycle_meta VALUES ('application', '{APPLICATION}'), ('schema_version', '0')",
        """CREATE TABLE scenarios (
            seq bigint GENERATED ALWAYS AS IDENTITY UNIQUE,
            id text PRIMARY KEY,
            name text NOT NULL,
            note text NOT NULL,
            created text NOT NULL,
            inputs text NOT NULL,
            results bytea NOT NULL,
            solver_version text NOT NULL,
            parent text REFERENCES scenarios(id),
            summary text NOT NULL,
            search text NOT NULL
        )""",
        "ALTER TABLE scenarios ALTER results SET STORAGE EXTERNAL",  # compressed already
        "CREATE INDEX scenarios_keyset ON scenarios (created, seq)",
    ],
}


class PostgresStore(ListQueries):
    _SEQ = "seq"
    _P = "%s"

    def __init__(self, url: str, pool_size: int = 10, timeout: float = 10.0):
        self.read_only: str | None = None
        self.damaged: str | None = None
        try:
            info = conninfo_to_dict(url)
        except psycopg.ProgrammingError as exc:
            raise StorageError(f"PRESSCYCLE_DB is not a usable PostgreSQL URL ({_first_line(exc)})") from None
        #: where the database is, for messages (never the password)
        self.where = (f"database {info.get('dbname', '?')!r} as {info.get('user', '?')!r} on "
                      f"{info.get('host', 'localhost')}:{info.get('port', 5432)}")
        try:
            with psycopg.connect(url, autocommit=True, connect_timeout=timeout) as conn:
                self._migrate(conn)
                self.read_only = self._writable(conn)
        except psycopg.OperationalError as exc:
            raise self._unreachable(exc) from None
        except psycopg.Error as exc:
            raise StorageError(f"the PostgreSQL {self.where} could not be prepared ({_first_line(exc)}); "
                               f"nothing was changed") from None
        self.pool = ConnectionPool(url, min_size=1, max_size=pool_size, timeout=30.0, open=False,
                                   kwargs={"autocommit": True, "connect_timeout": timeout},
                                   check=ConnectionPool.check_connection, name="presscycle")
        self.pool.open(wait=False)

    def __repr__(self):
        return f"the PostgreSQL {self.where}"

    def close(self) -> None:
        self.pool.close()

    def _unreachable(self, exc: psycopg.OperationalError) -> StorageError:
        text = str(exc)
        if "password authentication failed" in text or "no password supplied" in text:
            return StorageError(f"the PostgreSQL server refused the password for {self.where}: check the user "
                                f"and password in PRESSCYCLE_DB")
        if "authentication failed" in text or "pg_hba.conf" in text:
            return StorageError(f"the PostgreSQL server does not let in {self.where} ({_first_line(exc)})")
        if "does not exist" in text and "database" in text:
            return StorageError(f"the PostgreSQL server has no {self.where.split(' as ')[0]}: create it "
                                f"(createdb), or correct PRESSCYCLE_DB")
        return StorageError(f"the PostgreSQL server for {self.where} cannot be reached ({_first_line(exc)}): "
                            f"is it running, and are the host and port in PRESSCYCLE_DB right?")

    def _version(self, conn) -> int:
        """Our schema version, 0 for an empty database; refuses one that is not ours or newer."""
        tables = {r[0] for r in conn.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_schema = current_schema()")}
        if "presscycle_meta" not in tables:
            if tables:
                shown = ", ".join(sorted(tables)[:5])
                raise StorageError(f"the PostgreSQL {self.where} is not a presscycle database (it has other tables: "
                                   f"{shown}); refusing to use it. Point PRESSCYCLE_DB at an empty database.")
            return 0
        meta = dict(conn.execute("SELECT key, value FROM presscycle_meta").fetchall())
        if meta.get("application") != APPLICATION or not meta.get("schema_version", "").isdigit():
            raise StorageError(f"the PostgreSQL {self.where} is not a presscycle database (its presscycle_meta "
                               f"table is not ours); refusing to use it.")
        version = int(meta["schema_version"])
        if version > SCHEMA_VERSION:
            raise StorageError(f"the PostgreSQL {self.where} has schema version {version}, newer than this "
                               f"presscycle ({SCHEMA_VERSION}); upgrade presscycle instead.")
        return version

    def _migrate(self, conn) -> None:
        if self._version(conn) == SCHEMA_VERSION:
            return
        with conn.transaction():
            conn.execute("SELECT pg_advisory_xact_lock(%s)", (MIGRATION_LOCK,))
            version = self._version(conn)  # another instance may have migrated while we waited
            for v in range(version + 1, SCHEMA_VERSION + 1):
                if v not in _MIGRATIONS:
                    continue  # a step of the SQLite schema from before PostgreSQL was supported
                for statement in _MIGRATIONS[v]:
                    conn.execute(statement)
                if v == 2:
                    self._search_index(conn)
                conn.execute("UPDATE presscycle_meta SET value = %s WHERE key = 'schema_version'", (str(v),))

    def _search_index(self, conn) -> None:
        try:
            with conn.transaction():  # a savepoint: without the extension the rest still goes in
                conn.execute("CREATE EXTENSION IF NOT EXISTS pg_trgm")
                conn.execute("CREATE INDEX scenarios_search ON scenarios USING gin (search gin_trgm_ops)")
        except psycopg.Error as exc:
            log.warning("no trigram index for searches (%s): searches scan the table", _first_line(exc))

    def _writable(self, conn) -> str | None:
        if conn.execute("SHOW transaction_read_only").fetchone()[0] == "on":
            return f"the PostgreSQL {self.where} is read-only (a standby, or default_transaction_read_only)"
        if not conn.execute("SELECT has_table_privilege('scenarios', 'INSERT')").fetchone()[0]:
            return f"the user may not write to the PostgreSQL {self.where}"
        return None

    @contextmanager
    def _errors(self, writing: bool):
        """psycopg failures in the block as StorageError with a plain message and status."""
        if writing and (self.read_only or self.damaged):
            raise StorageError(f"nothing was saved: {self.read_only or self.damaged}; saved scenarios can "
                               f"still be read. Ask whoever runs presscycle to fix the database.")
        done = "nothing was saved" if writing else "the scenarios could not be read"
        try:
            yield
        except pg_errors.DiskFull:
            raise StorageError(f"{done}: the disk of the PostgreSQL server is full", 507) from None
        except (pg_errors.ReadOnlySqlTransaction, pg_errors.InsufficientPrivilege) as exc:
            raise StorageError(f"{done}: {self.where} refuses it ({_first_line(exc)})") from None
        except (pg_errors.DataCorrupted, pg_errors.IndexCorrupted) as exc:
            self.damaged = f"the PostgreSQL {self.where} reports damage ({_first_line(exc)})"
            raise StorageError(f"{self.damaged}: no more writes go into it; restore it from a backup") from None
        except (psycopg.OperationalError, PoolTimeout) as exc:
            raise StorageError(f"{done}: the PostgreSQL server for {self.where} cannot be reached now "
                               f"({_first_line(exc)}); try again") from None
        except psycopg.Error as exc:
            raise StorageError(f"{done}: the PostgreSQL {self.where} could not be used ({_first_line(exc)}); "
                               f"try again") from None

    def mark_damaged(self, what: str):
        """Stop this instance's writes into a database found damaged, and say so (raises StorageError)."""
        self.damaged = what
        raise StorageError(f"{what}: no more writes go into the database; restore it from a backup and restart "
                           f"presscycle")

    _COLUMNS = "id, name, note, created, inputs, results, solver_version, parent, summary"

    def create(self, name, note, inputs, results, solver_version, parent, summary) -> Scenario:
        created = now_iso()
        payload = (name, note, created, dumps(inputs), pack(results), solver_version, parent, dumps(summary),
                   search_text(name, note, inputs, summary))
        with self._errors(writing=True), self.pool.connection() as conn:
            for _ in range(10):
                sid = new_id()
                row = conn.execute(f"INSERT INTO scenarios ({self._COLUMNS}, search) VALUES ({', '.join(['%s'] * 10)}) "
                                   f"ON CONFLICT (id) DO NOTHING RETURNING seq", (sid, *payload)).fetchone()
                if row is not None:
                    return Scenario(sid, name, note, created, inputs, results, solver_version, parent, summary)
            raise StorageError("could not draw a free scenario id")

    def _read(self, sql: str, args=(), one=False):
        with self._errors(writing=False), self.pool.connection() as conn:
            cur = conn.execute(sql, args)
            return cur.fetchone() if one else cur.fetchall()

    def get(self, scenario_id: str) -> Scenario | None:
        r = self._read(f"SELECT {self._COLUMNS} FROM scenarios WHERE id = %s", (scenario_id,), one=True)
        if r is None:
            return None
        try:
            return record(r)
        except (ValueError, TypeError):
            self.mark_damaged(f"the record of scenario {r[0]!r} in {self} is damaged")

    def _match(self, n: int) -> str:
        return " AND ".join(["search LIKE %s"] * n)


def _first_line(exc: Exception) -> str:
    lines = [line.strip() for line in str(exc).splitlines() if line.strip()]
    return lines[0][:300] if lines else exc.__class__.__name__
