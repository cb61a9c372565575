"""The SQLite store: immutable records, search and paging, schema and refusal of foreign files."""

import sqlite3

import pytest

from server.store import APPLICATION_ID, SCHEMA_VERSION, SqliteStore, StorageError


def make(store, name, note=""):
    return store.create(name, note, {"x": name}, {"best": {}}, "test", None, {"k": 1.0})


def test_created_scenarios_come_back_intact(tmp_path):
    store = SqliteStore(tmp_path / "s.sqlite3")
    s = store.create("Press 3", "for the night shift", {"feed": {"pressure": "7 bar"}}, {"best": {"a": 1.5}},
                     "0.1.0", None, {"cycle_time": 1800.0})
    again = store.get(s.id)
    assert again == s
    assert len(s.id) == 12 and s.id.replace("-", "").replace("_", "").isalnum()


def test_unknown_id_is_none(tmp_path):
    assert SqliteStore(tmp_path / "s.sqlite3").get("nope") is None


def test_search_and_paging_newest_first(tmp_path):
    store = SqliteStore(tmp_path / "s.sqlite3")
    ids = [make(store, f"case {i}", "filter aid" if i % 2 else "").id for i in range(25)]
    page1 = store.search("", 1, 10)
    assert page1.total == 25 and [s.id for s in page1.items] == ids[::-1][:10]
    page3 = store.search("", 3, 10)
    assert [s.id for s in page3.items] == ids[::-1][20:]
    hits = store.search("filter aid", 1, 50)
    assert hits.total == 12 and all(s.note == "filter aid" for s in hits.items)
    assert store.search("case 7", 1, 10).total == 1
    assert store.search("100%", 1, 10).total == 0  # % is a literal, not a wildcard


def test_schema_version_and_wal_are_recorded(tmp_path):
    path = tmp_path / "s.sqlite3"
    SqliteStore(path)
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert conn.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


def test_reopening_keeps_every_scenario(tmp_path):
    path = tmp_path / "s.sqlite3"
    ids = [make(SqliteStore(path), f"n{i}").id for i in range(5)]
    store = SqliteStore(path)
    assert all(store.get(i) is not None for i in ids)


def test_a_foreign_sqlite_file_is_refused_and_left_alone(tmp_path):
    path = tmp_path / "other.sqlite3"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE invoices (n INTEGER)")
    conn.execute("INSERT INTO invoices VALUES (42)")
    conn.commit()
    conn.close()
    before = path.read_bytes()
    with pytest.raises(StorageError, match="not a presscycle database"):
        SqliteStore(path)
    assert path.read_bytes() == before


def test_a_corrupted_file_is_refused_and_left_alone(tmp_path):
    path = tmp_path / "broken.sqlite3"
    path.write_bytes(b"this is not a database at all" * 100)
    before = path.read_bytes()
    with pytest.raises(StorageError, match="corrupted"):
        SqliteStore(path)
    assert path.read_bytes() == before


def test_a_newer_schema_is_refused(tmp_path):
    path = tmp_path / "s.sqlite3"
    SqliteStore(path)
    conn = sqlite3.connect(path)
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    conn.close()
    with pytest.raises(StorageError, match="newer"):
        SqliteStore(path)
