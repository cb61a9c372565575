"""The store contract, run against both stores: SQLite (a temporary file) and PostgreSQL (a
fresh database on the session's throwaway server). Immutable records, unguessable unique ids,
keyset pages that visit every scenario once, substring search, the schema recorded, and
databases that are not ours or newer refused and left alone."""

import sqlite3

import psycopg
import pytest

from server.store import SCHEMA_VERSION, Cursor, SqliteStore, StorageError, open_store


class Sqlite:
    def __init__(self, tmp_path, request):
        self.db = tmp_path / "contract.sqlite3"

    def open(self):
        return SqliteStore(self.db)

    def execute(self, sql, args=()):
        conn = sqlite3.connect(self.db)
        try:
            rows = conn.execute(sql.replace("%s", "?"), args).fetchall()
            conn.commit()
            return rows
        finally:
            conn.close()

    def set_version(self, v):
        self.execute(f"PRAGMA user_version = {v}")

    def foreign(self):
        self.execute("CREATE TABLE invoices (n INTEGER)")
        self.execute("INSERT INTO invoices VALUES (42)")


class Postgres:
    def __init__(self, tmp_path, request):
        self.db = request.getfixturevalue("pg_url")

    def open(self):
        return open_store(self.db)

    def execute(self, sql, args=()):
        with psycopg.connect(self.db, autocommit=True) as conn:
            cur = conn.execute(sql, args)
            return cur.fetchall() if cur.description else []

    def set_version(self, v):
        self.execute("UPDATE presscycle_meta SET value = %s WHERE key = 'schema_version'", (str(v),))

    def foreign(self):
        self.execute("CREATE TABLE invoices (n integer)")
        self.execute("INSERT INTO invoices VALUES (42)")


@pytest.fixture(params=[Sqlite, pytest.param(Postgres, marks=pytest.mark.postgres)], ids=["sqlite", "postgresql"])
def backend(request, tmp_path):
    return request.param(tmp_path, request)


@pytest.fixture
def store(backend):
    s = backend.open()
    yield s
    s.close()


def make(store, name, note="", limited_by="optimum", mode="constant_pressure"):
    return store.create(name, note, {"feed": {"mode": mode, "pressure": "7 bar"}}, {"best": {"a": 1.5}}, "0.1.0",
                        None, {"cycle_time": 1800.0, "limited_by": limited_by})


def walk(store, q="", per_page=7):
    """Every page from the first by its next cursor: the ids in order and the pages seen."""
    pages, cursor = [], None
    while True:
        page = store.page(q, cursor, per_page)
        pages.append(page)
        if page.next is None:
            return [s.id for p in pages for s in p.items], pages
        cursor = page.next


def test_created_scenarios_come_back_intact(store):
    s = store.create("Press 3 ü", "for the night shift", {"feed": {"pressure": "7 bar"}},
                     {"best": {"a": 1.5, "b": [1.0, 2.5e-9]}}, "0.1.0", None, {"cycle_time": 1800.0})
    assert store.get(s.id) == s
    child = store.create("copy", "", {"x": 1}, {"best": {}}, "0.1.0", s.id, {"k": 1.0})
    assert store.get(child.id).parent == s.id
    assert len(s.id) == 12 and s.id.replace("-", "").replace("_", "").isalnum()
    assert store.get("nope") is None


def test_saving_never_overwrites_and_ids_are_unique(store):
    first = make(store, "same name", "same note")
    again = make(store, "same name", "same note")
    assert first.id != again.id and store.get(first.id) == first
    ids = {make(store, f"n{i}").id for i in range(150)}
    assert len(ids) == 150
    assert not hasattr(store, "update") and not hasattr(store, "delete")  # immutable: no way to change a record


def test_keyset_pages_visit_every_scenario_once_newest_first(store):
    ids = [make(store, f"case {i}").id for i in range(45)]  # many in the same millisecond
    seen, pages = walk(store)
    assert seen == ids[::-1]
    assert [len(p.items) for p in pages] == [7] * 6 + [3]
    assert pages[0].previous is None and pages[-1].next is None and all(p.total == 45 for p in pages)
    back = store.page("", pages[2].previous, 7)  # previous of page 3 is page 2
    assert [s.id for s in back.items] == [s.id for s in pages[1].items]
    assert back.next == pages[1].next and back.previous == pages[1].previous
    first = store.page("", pages[1].previous, 7)
    assert [s.id for s in first.items] == [s.id for s in pages[0].items] and first.previous is None


def test_offset_pages_and_recent_agree_with_keyset_pages(store):
    ids = [make(store, f"case {i}", "filter aid" if i % 2 else "").id for i in range(25)]
    page1, total = store.search("", 1, 10)
    assert total == 25 and [s.id for s in page1] == ids[::-1][:10]
    page3, _ = store.search("", 3, 10)
    assert [s.id for s in page3] == ids[::-1][20:]
    assert [s.id for s in store.recent(4)] == ids[::-1][:4]
    assert store.search("", 9, 10) == ([], 25)


def test_search_finds_substrings_of_name_note_and_summary_words(store):
    a = make(store, "Copper concentrate, press 3", "for the CAPEX review")
    b = make(store, "Gypsum", "chambers limit it", limited_by="chambers_full")
    c = make(store, "Kaolin", "pump", mode="pump_curve")
    d = make(store, "100% filter aid", "under_score")
    make(store, "case 17")
    e = make(store, "case 7")

    def found(q):
        page = store.page(q, None, 50)
        assert page.total == len(page.items)
        return {s.id for s in page.items}

    assert found("copper") == {a.id} and found("PER CONC") == {a.id}  # case and word breaks do not matter
    assert found("capex") == {a.id}
    assert found("chambers full") == {b.id}  # what limits the cycle, in words
    assert found("pump curve") == {c.id}  # the feed mode, in words
    assert found("case 7") == {e.id}  # the text as typed, not any of its words
    assert found("100%") == {d.id} and found("0%f") == set() and found("r_s") == {d.id}  # % and _ are literal
    assert found("er") >= {a.id, d.id}  # two letters: shorter than the index's trigrams, still found
    assert found("no such words") == set()
    assert store.search("copper", 1, 10) == ([store.page("copper", None, 10).items[0]], 1)


@pytest.mark.parametrize("many", [False, True], ids=["few matches", "many matches"])
def test_search_pages_by_keyset_too(store, many):
    if many and isinstance(store, SqliteStore):
        store.walk_above = 3  # the plan for many matches: walk the newest-first index
    ids = [make(store, f"thickness study {i}" if i % 3 == 0 else f"other {i}").id for i in range(40)]
    seen, pages = walk(store, "study", 4)
    assert seen == [i for k, i in enumerate(ids) if k % 3 == 0][::-1]
    assert pages[0].total == 14


def test_a_bad_cursor_is_refused_in_words():
    for token in ("", "garbage!", Cursor("older", "x", 1).encode()[:-3] + "$$$", "eHx5fHo"):
        with pytest.raises(ValueError, match="not a cursor"):
            Cursor.decode(token)
    assert Cursor.decode(Cursor("newer", "2026-01-01T00:00:00.000+00:00", 7).encode()) == \
        Cursor("newer", "2026-01-01T00:00:00.000+00:00", 7)


def test_reopening_keeps_every_scenario(backend):
    first = backend.open()
    ids = [make(first, f"n{i}").id for i in range(5)]
    first.close()
    again = backend.open()
    assert all(again.get(i) is not None for i in ids)
    assert [s.id for s in again.recent(5)] == ids[::-1]
    again.close()


def test_a_newer_schema_is_refused(backend):
    backend.open().close()
    backend.set_version(SCHEMA_VERSION + 1)
    with pytest.raises(StorageError, match="newer"):
        backend.open()


def test_a_database_that_is_not_ours_is_refused_and_left_alone(backend):
    backend.foreign()
    with pytest.raises(StorageError, match="not a presscycle database"):
        backend.open()
    assert backend.execute("SELECT n FROM invoices") == [(42,)]


def test_a_damaged_summary_is_said_in_words_and_stops_writes(store, backend):
    good = make(store, "good")
    bad = make(store, "bad")
    backend.execute("UPDATE scenarios SET summary = %s WHERE id = %s", ("{broken", bad.id))
    with pytest.raises(StorageError, match="damaged"):
        store.page("", None, 20)
    assert store.get(good.id) == good
    with pytest.raises(StorageError, match="nothing was saved") as refused:
        make(store, "after")
    assert refused.value.status == 503
