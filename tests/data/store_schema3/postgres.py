"""Saved scenarios in PostgreSQL: one database that several app instances share.

psycopg 3 with a connection pool (psycopg_pool); every statement commits on its own (a save
is one INSERT, so an acknowledged save is committed). The database is marked ours by the table
``presscycle_meta`` (application, schema version): a database with other tables and no marker
is refused, as is a newer schema; the schema is created and migrated at start-up under an
advisory lock, so instances starting together migrate once.

Lists (schema 3): the count of scenarios is kept in ``scenario_counts`` by statement triggers
in the saving transaction (sixteen slots, one per connection's process id modulo 16, so
concurrent saves from several instances rarely wait on one row); a list sums sixteen rows
instead of counting 100,000. Search: each scenario's search text, and the first one and two
characters of its words, sit in the narrow table ``scenario_search`` (a few dozen bytes a
row, so a search reads little): a trigram GIN index (pg_trgm) serves substrings of three
characters or more, a GIN index on the prefixes the shorter searches. A search counts its
matches up to COUNT_LIMIT; up to there it pages through the matches themselves (index, then
sort), beyond it it walks the newest-first index and stops after a page. Without pg_trgm the
same queries scan the narrow table (slower, same answers).
"""

import logging
from contextlib import contextmanager

import psycopg
from psycopg import errors as pg_errors
from psycopg.conninfo import conninfo_to_dict
from psycopg_pool import ConnectionPool, PoolTimeout

from .base import (
    SCHEMA_VERSION,
    Cursor,
    ListQueries,
    Page,
    Scenario,
    Search,
    StorageError,
    dumps,
    like_pattern,
    new_id,
    now_iso,
    pack,
    page_from_rows,
    record,
    search_text,
    word_prefixes,
)

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
    3: [
        # no save between the count and its triggers (an older instance's save waits here)
        "LOCK TABLE scenarios IN SHARE ROW EXCLUSIVE MODE",
        """CREATE TABLE scenario_search (
            seq bigint PRIMARY KEY REFERENCES scenarios(seq),
            created text NOT NULL,
            search text NOT NULL,
            prefixes text[] NOT NULL
        )""",
        "FILL scenario_search",  # rows from scenarios.search (see _fill_search)
        "CREATE UNIQUE INDEX scenario_search_keyset ON scenario_search (created, seq)",
        "CREATE INDEX scenario_search_prefixes ON scenario_search USING gin (prefixes)",
        "TRIGRAM INDEX",  # when pg_trgm can be had (see _search_index)
        "ALTER TABLE scenarios DROP COLUMN search",
        "CREATE TABLE scenario_counts (slot integer PRIMARY KEY, n bigint NOT NULL)",
        "INSERT INTO scenario_counts SELECT g, 0 FROM generate_series(0, 15) g",
        "UPDATE scenario_counts SET n = (SELECT count(*) FROM scenarios) WHERE slot = 0",
        """CREATE FUNCTION presscycle_count_scenarios() RETURNS trigger LANGUAGE plpgsql AS $$
        BEGIN
            IF TG_OP = 'TRUNCATE' THEN
                UPDATE scenario_counts SET n = 0;
            ELSIF TG_OP = 'INSERT' THEN
                UPDATE scenario_counts SET n = n + (SELECT count(*) FROM changed) WHERE slot = pg_backend_pid() % 16;
            ELSE
                UPDATE scenario_counts SET n = n - (SELECT count(*) FROM changed) WHERE slot = pg_backend_pid() % 16;
            END IF;
            RETURN NULL;
        END $$""",
        "CREATE TRIGGER scenario_count_insert AFTER INSERT ON scenarios REFERENCING NEW TABLE AS changed "
        "FOR EACH STATEMENT EXECUTE FUNCTION presscycle_count_scenarios()",
        "CREATE TRIGGER scenario_count_delete AFTER DELETE ON scenarios REFERENCING OLD TABLE AS changed "
        "FOR EACH STATEMENT EXECUTE FUNCTION presscycle_count_scenarios()",
        "CREATE TRIGGER scenario_count_truncate AFTER TRUNCATE ON scenarios "
        "FOR EACH STATEMENT EXECUTE FUNCTION presscycle_count_scenarios()",
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
                    if statement == "FILL scenario_search":
                        self._fill_search(conn)
                    elif statement == "TRIGRAM INDEX":
                        self._search_index(conn)
                    else:
                        conn.execute(statement)
                conn.execute("UPDATE presscycle_meta SET value = %s WHERE key = 'schema_version'", (str(v),))

    @staticmethod
    def _fill_search(conn) -> None:
        """The search table from the search text schema 2 kept in the scenarios table."""
        rows = conn.execute("SELECT seq, created, search FROM scenarios").fetchall()
        with conn.cursor() as cur, cur.copy("COPY scenario_search (seq, created, search, prefixes) FROM STDIN") as copy:
            copy.set_types(["int8", "text", "text", "text[]"])
            for seq, created, text in rows:
                copy.write_row((seq, created, text, word_prefixes(text)))

    def _search_index(self, conn) -> None:
        try:
            with conn.transaction():  # a savepoint: without the extension the rest still goes in
                conn.execute("CREATE EXTENSION IF NOT EXISTS pg_trgm")
                conn.execute("CREATE INDEX scenario_search_text ON scenario_search USING gin (search gin_trgm_ops)")
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
        payload = (name, note, created, dumps(inputs), pack(results), solver_version, parent, dumps(summary))
        text = search_text(name, note, inputs, summary)
        # one statement: the scenario, its search row and (by trigger) the count go in together
        sql = (f"WITH saved AS (INSERT INTO scenarios ({self._COLUMNS}) VALUES ({', '.join(['%s'] * 9)}) "
               f"ON CONFLICT (id) DO NOTHING RETURNING seq, created) "
               f"INSERT INTO scenario_search (seq, created, search, prefixes) "
               f"SELECT seq, created, %s, %s FROM saved RETURNING seq")
        with self._errors(writing=True), self.pool.connection() as conn:
            for _ in range(10):
                sid = new_id()
                row = conn.execute(sql, (sid, *payload, text, word_prefixes(text))).fetchone()
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

    _TOTAL = "SELECT coalesce(sum(n), 0)::bigint FROM scenario_counts"

    @staticmethod
    def _match(search: Search) -> tuple[str, str]:
        """The condition on scenario_search that finds a search's rows through its index, and its argument."""
        if search.kind == "prefix":
            return "prefixes @> ARRAY[%s]::text[]", search.term
        return "search LIKE %s", like_pattern(search.term)  # "%" and "_" literal; "\\" escapes

    @staticmethod
    def _walk(search: Search) -> tuple[str, str]:
        """The same condition in a form no index serves (the planner then walks the newest-first
        index, which finds a page quickly when matches are many)."""
        if search.kind == "prefix":
            return "array_position(prefixes, %s) IS NOT NULL", search.term
        return "strpos(search, %s) > 0", search.term

    def _count(self, search: Search) -> tuple[int, bool]:
        if search.kind == "all":
            return self._read(self._TOTAL, one=True)[0], True
        cond, arg = self._match(search)
        n = self._read(f"SELECT count(*) FROM (SELECT 1 FROM scenario_search WHERE {cond} "
                       f"LIMIT {self.count_limit + 1}) m", (arg,), one=True)[0]
        return self._capped(n)

    def _filter(self, search: Search, walk: bool) -> tuple[str, tuple]:  # the offset pages (page=N)
        if search.kind == "all":
            return "", ()
        cond, arg = self._match(search)
        return f"seq IN (SELECT seq FROM scenario_search WHERE {cond})", (arg,)

    def page(self, q: str, cursor: str | None, per_page: int) -> Page:
        """A page by keyset, and the count, in one or two statements on one connection: the count
        of all from the count table; a search's matches (up to count_limit + 1) read once through
        its index, counted and paged; past count_limit the page from a walk of the keyset index."""
        at = Cursor.decode(cursor) if cursor else None
        search = Search.of(q)
        order, keyset, kargs = "DESC", "true", ()
        if at is not None:
            op, order = ("<", "DESC") if at.direction == "older" else (">", "ASC")
            keyset, kargs = f"(created, seq) {op} (%s, %s)", (at.created, at.seq)
        by = f"ORDER BY created {order}, seq {order} LIMIT %s"
        shown = "x.created, x.seq, s.id, s.name, s.note, s.summary"
        joined = f"JOIN scenarios s ON s.seq = x.seq ORDER BY x.created {order}, x.seq {order}"
        with self._errors(writing=False), self.pool.connection() as conn:
            if search.kind == "all":
                total = conn.execute(self._TOTAL).fetchone()[0]
                rows = conn.execute(f"SELECT created, seq, id, name, note, summary FROM scenarios WHERE {keyset} {by}",
                                    (*kargs, per_page + 1)).fetchall()
                return page_from_rows(rows, at, per_page, total, self._one_listed)
            cond, arg = self._match(search)
            found = conn.execute(
                f"WITH m AS MATERIALIZED (SELECT seq, created FROM scenario_search WHERE {cond} "
                f"LIMIT {self.count_limit + 1}) "
                f"SELECT (SELECT count(*) FROM m), {shown} FROM (SELECT 1) one "
                f"LEFT JOIN (SELECT seq, created FROM m WHERE {keyset} {by}) x ON true "
                f"LEFT {joined}", (arg, *kargs, per_page + 1)).fetchall()
            total, exact = self._capped(found[0][0])
            if exact:
                rows = [r[1:] for r in found if r[1] is not None]
            else:  # the matches read were only the first count_limit + 1 found, not the newest
                cond, arg = self._walk(search)
                rows = conn.execute(f"SELECT {shown} FROM (SELECT seq, created FROM scenario_search "
                                    f"WHERE {cond} AND {keyset} {by}) x {joined}",
                                    (arg, *kargs, per_page + 1)).fetchall()
        return page_from_rows(rows, at, per_page, total, self._one_listed, exact)


def _first_line(exc: Exception) -> str:
    lines = [line.strip() for line in str(exc).splitlines() if line.strip()]
    return lines[0][:300] if lines else exc.__class__.__name__
