"""The store contract, run against both stores: SQLite (a temporary file) and PostgreSQL (a
fresh database on the session's throwaway server). Immutable records, unguessable unique ids,
keyset pages that visit every scenario once, substring search, the schema recorded, and
databases that are not ours or newer refused and left alone."""

import sqlite3

import psycopg
import pytest

from server.store import SCHEMA_VERSION, Cursor, SqliteStore, StorageError, open_store
from server.store.base import OLDEST


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

    def blank_search_texts(self):
        self.execute("UPDATE scenarios_search SET text = ''")

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

    def blank_search_texts(self):
        self.execute("UPDATE scenario_search SET search = ''")

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
    page1 = store.search("", 1, 10)
    assert page1.total == 25 and [s.id for s in page1.items] == ids[::-1][:10] and page1.start == 1
    page3 = store.search("", 3, 10)
    assert [s.id for s in page3.items] == ids[::-1][20:] and page3.start == 21
    assert [s.id for s in store.recent(4)] == ids[::-1][:4]
    beyond = store.search("", 9, 10)
    assert beyond.items == [] and beyond.total == 25


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
    assert found("no such words") == set()
    assert store.search("copper", 1, 10).items == [store.page("copper", None, 10).items[0]]


def test_one_or_two_characters_find_words_that_begin_with_them(store):
    a1 = make(store, "Line A1, press 3", "")
    a12 = make(store, "filter A12b", "")
    xa1 = make(store, "XA1 trial", "")
    k = make(store, "Kemi", "ß-Öl 7")
    pct = make(store, "100% filter aid", "")

    def found(q):
        page = store.page(q, None, 50)
        assert page.total == len(page.items) and page.exact
        return {s.id for s in page.items}

    assert found("A1") == {a1.id, a12.id}  # a word that begins with it, case aside; not inside XA1
    assert found("a") == {a1.id, a12.id, pct.id}  # "A1", "A12b", "aid"
    assert found("x") == {xa1.id}
    assert found("3") == {a1.id} and found("7") == {k.id}
    assert found("öl") == {k.id} and found("ß") == {k.id}  # letters beyond ASCII are letters
    assert found("er") == set()  # inside "filter": not the start of a word
    assert found("xa1") == {xa1.id}  # three characters: anywhere, as before
    assert found("%") == {pct.id} and found("0%") == {pct.id}  # not only letters or digits: found anywhere
    assert found("ß-") == {k.id} and found("-ö") == {k.id} and found("%f") == set()  # "% f" has a space
    assert store.search("A1", 1, 10).total == 2


@pytest.mark.parametrize("many", [False, True], ids=["few matches", "many matches"])
def test_short_searches_of_other_characters_go_through_the_keys(store, backend, many):
    """One or two characters that are not all letters or digits are found anywhere in the search
    text through the keys (schema 4), not by reading the text: with every search text blanked by
    hand they are found as before, while searches that read the text (three characters or more,
    or a short one with a space, which the app never sends: it strips what is typed) find nothing."""
    if many:  # the plans for many matches: walk the newest-first index, checking each row
        store.walk_above, store.count_limit = 1, 2
    pct = make(store, "100% filter aid", "under_score")
    dash = make(store, "Line B-2", "ß-Öl; 7 bar")
    make(store, "Kemi 3", "plain")
    copies = [make(store, f"copy {i}: 100%", "").id for i in range(3)]

    def found(q, how="page"):
        if how == "offset":
            return {s.id for s in store.search(q, 1, 50).items}
        seen, pages = walk(store, q, 2)
        assert len(seen) == len(set(seen)) and pages[0].exact == (not many or len(seen) <= 2), q
        return set(seen)

    expected = {"%": {pct.id, *copies}, "0%": {pct.id, *copies}, "r_": {pct.id}, "_": {pct.id}, "_s": {pct.id},
                "-": {dash.id}, "B-": {dash.id}, "-2": {dash.id}, "ß-": {dash.id}, "-Ö": {dash.id},
                ";": {dash.id}, "l;": {dash.id}, ":": set(copies), "%f": set(), ",": set(), "0 ": set()}
    for q, ids in expected.items():
        assert found(q) == found(q, "offset") == ids, q
    assert found("7 ") == {dash.id} and found("filter") == {pct.id}
    backend.blank_search_texts()
    assert found("7 ") == set() and found("filter") == set()  # these read the text: gone
    for q, ids in expected.items():
        assert found(q) == found(q, "offset") == ids, q  # the keys: found as before


def test_counts_are_exact_up_to_the_limit_and_said_as_more_beyond(store):
    store.count_limit = 5
    ids = [make(store, f"study {i}").id for i in range(8)]
    make(store, "other")
    everything = store.page("", None, 3)
    assert (everything.total, everything.exact, everything.start) == (9, True, 1)  # the whole list: always exact
    page = store.page("study", None, 3)
    assert (page.total, page.exact, page.start) == (5, False, None)  # more than 5 match
    seen, pages = walk(store, "study", 3)
    assert seen == ids[::-1]  # every match still visited once, newest first
    assert all(not p.exact for p in pages)
    few = store.page("other", None, 3)
    assert (few.total, few.exact, few.start) == (1, True, 1)
    short = store.page("s", None, 3)
    assert (short.total, short.exact) == (5, False)


def test_every_page_knows_its_place_and_keeps_it_while_saves_come_in(store):
    ids = [make(store, f"case {i}").id for i in range(23)]
    newest = ids[::-1]
    first = store.page("", None, 5)
    assert first.start == 1 and first.total == 23
    second = store.page("", first.next, 5)
    assert second.start == 6 and [s.id for s in second.items] == newest[5:10]
    later = [make(store, f"new {i}").id for i in range(3)]  # three saves while the reader pages
    third = store.page("", second.next, 5)
    assert third.total == 26 and third.start == 14  # its rows are now 14th to 18th newest
    assert [s.id for s in third.items] == newest[10:15]
    back = store.page("", third.previous, 5)
    assert back.start == 9 and [s.id for s in back.items] == newest[5:10]
    oldest = store.page("", OLDEST.encode(), 5)
    assert [s.id for s in oldest.items] == newest[-5:] and oldest.start == 22 and oldest.next is None
    before = store.page("", oldest.previous, 5)
    assert before.start == 17 and [s.id for s in before.items] == newest[-10:-5]
    assert [s.id for s in store.page("", None, 3).items] == later[::-1]
    searched = store.page("case 1", None, 4)  # case 1 and case 10 to 19: eleven matches
    assert searched.total == 11 and searched.start == 1
    assert store.page("case 1", searched.next, 4).start == 5
    stale = Cursor.decode(second.next)  # a cursor that claims a place the list cannot have
    assert store.page("", Cursor(stale.direction, stale.created, stale.seq, 10**6).encode(), 5).start is None
    assert store.page("", Cursor(stale.direction, stale.created, stale.seq).encode(), 5).start is None  # schema 2


def test_the_count_follows_saves_from_every_connection(backend):
    a, b = backend.open(), backend.open()
    for i in range(7):
        make(a if i % 2 else b, f"n{i}")
    backend.execute("INSERT INTO scenarios (id, name, note, created, inputs, results, solver_version, summary) "
                    "SELECT 'by-hand-0001', name, note, created, inputs, results, solver_version, summary "
                    "FROM scenarios LIMIT 1")  # a row put in by hand is counted too
    assert a.page("", None, 5).total == b.page("", None, 5).total == 8
    assert backend.execute("SELECT count(*) FROM scenarios") == [(8,)]
    a.close()
    b.close()


@pytest.mark.parametrize("many", [False, True], ids=["few matches", "many matches"])
def test_search_pages_by_keyset_too(store, many):
    if many:  # the plans for many matches: walk the newest-first index, checking each row
        store.walk_above, store.count_limit = 3, 5
    elif isinstance(store, SqliteStore):  # the matches found, checked during a walk of the index
        store.look_up_below = 3
    ids = [make(store, f"thickness study #{i}" if i % 3 == 0 else f"other {i}").id for i in range(40)]
    wanted = [i for k, i in enumerate(ids) if k % 3 == 0][::-1]
    for q in ("study", "th", "t", "#"):  # a substring; words that begin with one or two characters; a piece
        seen, pages = walk(store, q, 4)
        assert seen == wanted, q
        assert (pages[0].total, pages[0].exact) == ((5, False) if many else (14, True)), q
    seen, _ = walk(store, "o", 4)  # "other" and the summary's "optimum": every scenario
    assert seen == ids[::-1]


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
