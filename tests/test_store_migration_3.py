"""Schema 2 -> 3 at start-up, on both stores, on data written by the code that wrote schema 2
(server/store/ of commit 79bfc7e, kept verbatim in tests/data/store_schema2): every scenario
kept byte for byte, the count of scenarios and the word prefixes made for what was there, and
the lists and searches of the migrated store the same as of a store filled by today's code."""

import importlib
import importlib.util
import sys

import psycopg
import pytest

from server.settings import PROJECT_ROOT
from server.store import SCHEMA_VERSION, SqliteStore, open_store

OLD = PROJECT_ROOT / "tests/data/store_schema2"


def schema2():
    """The schema-2 store package, imported under its own name."""
    name = "store_schema2"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, OLD / "__init__.py", submodule_search_locations=[str(OLD)])
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


def fill(store):
    saved = []
    for i in range(30):
        mode = "pump_curve" if i % 3 else "constant_pressure"
        saved.append(store.create(f"Line A{i} press {i % 4}", f"trial {i // 7}", {"feed": {"mode": mode}},
                                  {"best": {"a": i * 1.5}}, "0.1.0", saved[0].id if saved else None,
                                  {"cycle_time": 1800.0 + i, "limited_by": "optimum"}))
    return saved


def old_sqlite(path):
    return schema2().SqliteStore(path, solver_version="0.1.0")


class Migrating:
    """A schema-2 database on one store: ``old`` (the schema-2 store on it), ``reopen()`` (today's
    store on it), ``fresh`` (today's store on another, empty database), ``version()``."""

    def __init__(self, request, tmp_path):
        if request.param == "sqlite":
            path = tmp_path / "schema2.sqlite3"
            self.old = schema2().SqliteStore(path, solver_version="0.1.0")
            self.reopen = lambda: SqliteStore(path)
            self.fresh = SqliteStore(tmp_path / "fresh.sqlite3")
            self.version = lambda: _sqlite_version(path)
        else:
            url = request.getfixturevalue("pg_url")
            fresh_url = request.getfixturevalue("pg_server").new_database(f"fresh_{tmp_path.name}"[:60])
            self.old = importlib.import_module("store_schema2.postgres").PostgresStore(url)
            self.reopen = lambda: open_store(url)
            self.fresh = open_store(fresh_url)
            self.version = lambda: _pg_version(url)


def _sqlite_version(path):
    import sqlite3

    conn = sqlite3.connect(path)
    try:
        return conn.execute("PRAGMA user_version").fetchone()[0]
    finally:
        conn.close()


def _pg_version(url):
    with psycopg.connect(url) as conn:
        return int(conn.execute("SELECT value FROM presscycle_meta WHERE key = 'schema_version'").fetchone()[0])


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def migrating(request, tmp_path):
    m = Migrating(request, tmp_path)
    yield m
    m.fresh.close()


def test_schema_2_migrates_to_3_keeping_every_scenario(migrating):
    old, reopen, fresh = migrating.old, migrating.reopen, migrating.fresh
    saved = fill(old)
    before = old.page("", None, 7)
    old.close()
    assert migrating.version() == 2
    store = reopen()
    assert migrating.version() == SCHEMA_VERSION
    for s in saved:
        assert vars(store.get(s.id)) == vars(s)  # the same record (of another module's class)
    for s in saved:
        fresh.create(s.name, s.note, s.inputs, s.results, s.solver_version, None, s.summary)
    for q in ("", "press 3", "a1", "A", "3", "trial 1", "pump", "zz", "%"):
        page, same = store.page(q, None, 50), fresh.page(q, None, 50)
        assert [(s.name, s.note) for s in page.items] == [(s.name, s.note) for s in same.items], q
        assert (page.total, page.exact) == (same.total, same.exact) == (len(page.items), True), q
    assert store.page("A1", None, 50).total == 11  # A1, A10 to A19
    # a cursor handed out by schema 2 still pages on (its place is not known)
    cont = store.page("", before.next, 7)
    assert [s.id for s in cont.items] == [s.id for s in saved[::-1][7:14]] and cont.start is None
    assert store.page("", cont.next, 7).start is None
    added = store.create("after the migration", "", {}, {"best": {}}, "0.1.0", None, {"k": 1.0})
    assert store.page("", None, 5).total == 31 and store.page("after", None, 5).items[0].id == added.id
    store.close()
    store = reopen()  # a second start changes nothing
    assert store.page("", None, 5).total == 31 and all(vars(store.get(s.id)) == vars(s) for s in saved)
    store.close()


def test_processes_starting_together_migrate_a_file_once(tmp_path):
    """Several workers opening a schema-2 file at once (uvicorn --workers): one takes each step,
    the others wait and find it taken; every one starts and sees every scenario once."""
    import multiprocessing
    import sqlite3

    path = tmp_path / "workers.sqlite3"
    old = schema2().SqliteStore(path, solver_version="0.1.0")
    saved = fill(old)
    # many more rows (copies, as schema 2 wrote them), so the step takes long enough for every
    # worker to have read the old version before the first one has finished it
    conn = sqlite3.connect(path)
    with conn:
        for i in range(20000):
            cur = conn.execute("INSERT INTO scenarios (id, name, note, created, inputs, results, solver_version, "
                               "parent, summary) SELECT ?, name, note, created, inputs, results, solver_version, "
                               "parent, summary FROM scenarios WHERE id = ?", (f"copy-{i:07d}", saved[1].id))
            conn.execute("INSERT INTO scenarios_search (rowid, text) VALUES (?, ?)",
                         (cur.lastrowid, f"copy {i} line a1"))
    conn.close()
    context = multiprocessing.get_context("spawn")
    start = context.Barrier(4)
    with context.Pool(4, initializer=_wait_for_all, initargs=(start,)) as pool:
        totals = pool.map(_open_and_count, [str(path)] * 4)
    assert totals == [(20030, True)] * 4
    assert _sqlite_version(path) == SCHEMA_VERSION
    conn = sqlite3.connect(path)
    try:  # counted and indexed once: the copies' "a1" and the first ones' A1, A10 to A19
        assert conn.execute("SELECT n FROM scenario_count").fetchone()[0] == 20030
        assert conn.execute("SELECT count(*) FROM scenario_keys WHERE term = 'a1'").fetchone()[0] == 20011
    finally:
        conn.close()


def _wait_for_all(barrier):
    barrier.wait()


def _open_and_count(path):
    store = SqliteStore(path)
    page = store.page("", None, 5)
    return page.total, page.exact
