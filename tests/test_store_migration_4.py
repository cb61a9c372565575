"""Schema 3 -> 4 at start-up, on both stores, on data written by the code that wrote schema 3
(server/store/ of commit e190550, kept verbatim in tests/data/store_schema3): every scenario and
its search text kept byte for byte, the keys of every scenario recomputed (word prefixes and
short pieces), short searches of other characters the same as on a store filled by today's
code and as reading the text, an instance still on schema 3 refusing saves in words, and
processes starting together migrating once."""

import importlib
import importlib.util
import multiprocessing
import sqlite3
import sys
import threading

import psycopg
import pytest

from server.settings import PROJECT_ROOT
from server.store import SCHEMA_VERSION, SqliteStore, open_store
from server.store.base import search_keys, search_text

OLD = PROJECT_ROOT / "tests/data/store_schema3"
#: short searches through the keys (pieces and prefixes), and ones that read the text
QUERIES = ("%", "0%", "-", "b-", "-2", "_", "r_", ",", "4,", "ß-", "-ö", "#", "a", "a1", "7", "trial", "7 ", "")


def schema3():
    """The schema-3 store package, imported under its own name."""
    name = "store_schema3"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, OLD / "__init__.py", submodule_search_locations=[str(OLD)])
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


NAMES = ["Line A{i}, 100% fill", "press B-{i}", "under_score {i}", "ß-Öl #{i}", "plain {i}"]


def fill(store):
    saved = []
    for i in range(30):
        mode = "pump_curve" if i % 3 else "constant_pressure"
        saved.append(store.create(NAMES[i % 5].format(i=i), f"trial {i // 7}; {i % 4}, 7 bar",
                                  {"feed": {"mode": mode}}, {"best": {"a": i * 1.5}}, "0.1.0",
                                  saved[0].id if saved else None, {"cycle_time": 1800.0 + i, "limited_by": "optimum"}))
    return saved


class Migrating:
    """A schema-3 database on one store: ``old`` (the schema-3 store on it), ``reopen()`` (today's
    store on it), ``fresh`` (today's store on another, empty database), ``version()``,
    ``rows()`` (the scenarios and their search texts as stored), ``keys()`` ({seq: keys})."""

    def __init__(self, request, tmp_path):
        if request.param == "sqlite":
            path = tmp_path / "schema3.sqlite3"
            self.old = schema3().SqliteStore(path, solver_version="0.1.0")
            self.reopen = lambda: SqliteStore(path)
            self.fresh = SqliteStore(tmp_path / "fresh.sqlite3")
            self.version = lambda: _sqlite(path, "PRAGMA user_version")[0][0]
            self.rows = lambda: (_sqlite(path, "SELECT rowid, * FROM scenarios ORDER BY rowid"),
                                 _sqlite(path, "SELECT rowid, text FROM scenarios_search ORDER BY rowid"))
            self.keys = lambda: _grouped(_sqlite(path, "SELECT scenario, term FROM scenario_keys"))
        else:
            url = request.getfixturevalue("pg_url")
            fresh_url = request.getfixturevalue("pg_server").new_database(f"fresh_{tmp_path.name}"[:60])
            self.old = importlib.import_module("store_schema3.postgres").PostgresStore(url)
            self.reopen = lambda: open_store(url)
            self.fresh = open_store(fresh_url)
            self.version = lambda: int(_pg(url, "SELECT value FROM presscycle_meta WHERE key = 'schema_version'")[0][0])
            self.rows = lambda: (_pg(url, "SELECT * FROM scenarios ORDER BY seq"),
                                 _pg(url, "SELECT seq, created, search FROM scenario_search ORDER BY seq"))
            self.keys = lambda: {seq: set(keys) for seq, keys in _pg(url, "SELECT seq, keys FROM scenario_search")}


def _sqlite(path, sql):
    conn = sqlite3.connect(path)
    try:
        return conn.execute(sql).fetchall()
    finally:
        conn.close()


def _pg(url, sql):
    with psycopg.connect(url) as conn:
        return conn.execute(sql).fetchall()


def _grouped(pairs):
    out = {}
    for seq, term in pairs:
        out.setdefault(seq, set()).add(term)
    return out


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def migrating(request, tmp_path):
    schema3()
    m = Migrating(request, tmp_path)
    yield m
    m.fresh.close()


def test_schema_3_migrates_to_4_keeping_every_scenario(migrating):
    old, fresh = migrating.old, migrating.fresh
    saved = fill(old)
    before = migrating.rows()
    assert migrating.version() == 3 and SCHEMA_VERSION == 4
    assert old.page("%", None, 50).total == 6  # schema 3 finds it by reading every text
    store = migrating.reopen()
    assert migrating.version() == SCHEMA_VERSION
    assert migrating.rows() == before  # nothing saved changed: scenarios and search texts byte for byte
    for s in saved:
        assert vars(store.get(s.id)) == vars(s)
    texts = {row[0]: row[-1] for row in before[1]}
    assert migrating.keys() == {seq: set(search_keys(text)) for seq, text in texts.items()}  # every one recomputed
    for s in saved:
        fresh.create(s.name, s.note, s.inputs, s.results, s.solver_version, None, s.summary)
    for q in QUERIES:
        page, same = store.page(q, None, 50), fresh.page(q, None, 50)
        assert [(s.name, s.note) for s in page.items] == [(s.name, s.note) for s in same.items], q
        assert (page.total, page.exact) == (same.total, same.exact) == (len(page.items), True), q
        if q and not q.isalnum():  # what reading the text found
            wanted = [s.id for s in saved[::-1] if q.lower() in search_text(s.name, s.note, s.inputs, s.summary)]
            assert [s.id for s in page.items] == wanted, q
    assert store.page("%", None, 50).total == 6 and store.page("-ö", None, 50).total == 6
    # an instance still on schema 3 refuses saves in words (it would save no pieces), and saves nothing
    with pytest.raises(schema3().base.StorageError, match="could not be used .*prefixes.*; try again"):
        old.create("from an old instance", "", {}, {"best": {}}, "0.1.0", None, {"k": 1.0})
    old.close()
    added = store.create("after the migration: 5%", "", {}, {"best": {}}, "0.1.0", None, {"k": 1.0})
    assert store.page("", None, 5).total == 31 and store.page("5%", None, 5).items[0].id == added.id
    store.close()
    store = migrating.reopen()  # a second start changes nothing
    assert store.page("%", None, 50).total == 7 and all(vars(store.get(s.id)) == vars(s) for s in saved)
    store.close()


def test_processes_starting_together_migrate_a_file_once(tmp_path):
    """Several workers opening a schema-3 file at once (uvicorn --workers): one takes the step,
    the others wait and find it taken; every one starts and every scenario has its keys once."""
    path = tmp_path / "workers.sqlite3"
    saved = fill(schema3().SqliteStore(path, solver_version="0.1.0"))
    conn = sqlite3.connect(path)
    with conn:  # many more rows, so every worker has read the old version before the step is done
        for i in range(20000):
            cur = conn.execute("INSERT INTO scenarios (id, name, note, created, inputs, results, solver_version, "
                               "parent, summary) SELECT ?, name, note, created, inputs, results, solver_version, "
                               "parent, summary FROM scenarios WHERE id = ?", (f"copy-{i:07d}", saved[1].id))
            conn.execute("INSERT INTO scenarios_search (rowid, text) VALUES (?, ?)", (cur.lastrowid, f"copy {i}: 1%"))
            conn.executemany("INSERT INTO scenario_prefixes VALUES (?, ?)",
                             [(p, cur.lastrowid) for p in {"c", "co", str(i)[:1], str(i)[:2]}])
    conn.close()
    context = multiprocessing.get_context("spawn")
    start = context.Barrier(4)
    with context.Pool(4, initializer=_wait_for_all, initargs=(start,)) as pool:
        totals = pool.map(_open_and_count, [str(path)] * 4)
    assert totals == [((20030, True), (5000, False))] * 4  # every "1%" copy and the six "100%"
    assert _sqlite(path, "PRAGMA user_version")[0][0] == SCHEMA_VERSION
    assert _sqlite(path, "SELECT count(*) FROM scenario_keys WHERE term = '%'") == [(20006,)]
    assert _sqlite(path, "SELECT count(*) FROM scenario_keys WHERE term = ':'") == [(20000,)]
    assert _sqlite(path, "SELECT count(*) FROM scenario_keys WHERE term = 'co'") == [(20010,)]  # and "constant pressure"


def _wait_for_all(barrier):
    barrier.wait()


def _open_and_count(path):
    store = SqliteStore(path)
    everything, pct = store.page("", None, 5), store.page("%", None, 5)
    return (everything.total, everything.exact), (pct.total, pct.exact)


@pytest.mark.postgres
def test_instances_starting_together_migrate_a_database_once(pg_url):
    """Several instances opening a schema-3 database at once: one migrates under the advisory
    lock, the others wait and find it done; the keys are there once."""
    schema3()
    old = importlib.import_module("store_schema3.postgres").PostgresStore(pg_url)
    saved = fill(old)
    old.close()
    opened, failed = [], []

    def start():
        try:
            opened.append(open_store(pg_url))
        except Exception as exc:  # noqa: BLE001 - reported below
            failed.append(exc)

    threads = [threading.Thread(target=start) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not failed and len(opened) == 4
    assert {(s.page("%", None, 50).total, s.page("", None, 5).total) for s in opened} == {(6, 30)}
    assert _pg(pg_url, "SELECT count(*) FROM scenario_search WHERE keys @> ARRAY['%']") == [(6,)]
    assert {s.id for s in saved} == {r[0] for r in _pg(pg_url, "SELECT id FROM scenarios")}
    for s in opened:
        s.close()
