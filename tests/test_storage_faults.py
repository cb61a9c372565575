"""Damaged and unwritable databases: a clear message for each, and the file left byte for byte
as it was. Permissions cannot be taken from root (CI runs as root), so read-only files and
folders are simulated at the permission check or by opening SQLite read-only; a full disk by
SQLite's own page limit (SQLITE_FULL), as where no small filesystem can be mounted."""

import copy
import hashlib
import sqlite3

import pytest
from fastapi.testclient import TestClient

from server import storage
from server.app import create_app
from server.settings import PROJECT_ROOT, Settings
from server.storage import SqliteStore, StorageError
from tests.conftest import BASE_REQUEST


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def filled_store(path, n=300) -> SqliteStore:
    store = SqliteStore(path)
    for i in range(n):
        store.create(f"s{i}", "x" * 500, {"i": i, "pad": "y" * 1500}, {"best": {}}, "test", None, {"k": i})
    return store


def test_random_bytes_in_the_middle_refuse_the_start_and_change_nothing(tmp_path):
    path = tmp_path / "d.sqlite3"
    filled_store(path)
    data = bytearray(path.read_bytes())
    assert len(data) > 300_000
    middle = len(data) // 2
    data[middle:middle + 65536] = hashlib.sha512(b"noise").digest() * 1024
    path.write_bytes(bytes(data))
    before = digest(path)
    with pytest.raises(StorageError, match="damaged|corrupted"):
        SqliteStore(path)
    assert digest(path) == before


def test_a_truncated_file_refuses_the_start_and_changes_nothing(tmp_path):
    path = tmp_path / "t.sqlite3"
    filled_store(path)
    path.write_bytes(path.read_bytes()[: path.stat().st_size // 2])
    before = digest(path)
    with pytest.raises(StorageError, match="damaged|corrupted"):
        SqliteStore(path)
    assert digest(path) == before


def _client(path) -> TestClient:
    return TestClient(create_app(Settings(db=path, demo_dir=PROJECT_ROOT / "demo_cases")))


@pytest.mark.parametrize("what", ["file", "folder"])
def test_a_read_only_file_or_folder_serves_scenarios_and_refuses_saves_in_words(tmp_path, monkeypatch, what):
    path = tmp_path / "ro.sqlite3"
    with _client(path) as c:
        sid = c.post("/api/v1/scenarios", json={"name": "kept", "inputs": BASE_REQUEST}).json()["id"]
    before = digest(path)
    real_access = storage.os.access
    target = path if what == "file" else tmp_path
    monkeypatch.setattr(storage.os, "access", lambda p, mode: False if str(p) == str(target) else real_access(p, mode))
    with _client(path) as c:
        assert c.get(f"/api/v1/scenarios/{sid}").json()["name"] == "kept"
        assert c.get(f"/s/{sid}").status_code == 200
        r = c.post("/api/v1/scenarios", json={"name": "new", "inputs": BASE_REQUEST})
        assert r.status_code == 503
        assert "nothing was saved" in r.json()["detail"] and "read-only" in r.json()["detail"]
        assert "corrupt" not in r.json()["detail"]
    assert digest(path) == before


def test_a_new_database_in_a_read_only_folder_is_refused_at_start(tmp_path, monkeypatch):
    real_access = storage.os.access
    monkeypatch.setattr(storage.os, "access", lambda p, mode: False if str(p) == str(tmp_path) else real_access(p, mode))
    with pytest.raises(StorageError, match="read-only"):
        SqliteStore(tmp_path / "new.sqlite3")
    assert not (tmp_path / "new.sqlite3").exists()


def test_a_file_that_turns_read_only_while_running_gives_a_503(tmp_path, monkeypatch):
    path = tmp_path / "later.sqlite3"
    with _client(path) as c:
        store = c.app.state.store
        monkeypatch.setattr(store, "_connect", lambda: sqlite3.connect(f"file:{path}?mode=ro", uri=True,
                                                                       isolation_level=None))
        r = c.post("/api/v1/scenarios", json={"name": "new", "inputs": BASE_REQUEST})
        assert r.status_code == 503 and "read-only" in r.json()["detail"]


def test_a_full_disk_is_a_507_and_the_file_is_unchanged(tmp_path, monkeypatch):
    path = tmp_path / "full.sqlite3"
    with _client(path) as c:
        c.post("/api/v1/scenarios", json={"name": "first", "inputs": BASE_REQUEST})
        store = c.app.state.store
        pages = sqlite3.connect(path).execute("PRAGMA page_count").fetchone()[0]
        before = digest(path)
        connect = store._connect

        def full():
            conn = connect()
            conn.execute(f"PRAGMA max_page_count = {pages}")  # no page more: SQLITE_FULL
            return conn

        monkeypatch.setattr(store, "_connect", full)
        r = c.post("/api/v1/scenarios", json={"name": "second", "inputs": BASE_REQUEST})
        assert r.status_code == 507 and "disk" in r.json()["detail"] and "full" in r.json()["detail"]
        page = c.post("/api/v1/scenarios", json={"name": "again", "inputs": BASE_REQUEST},
                      headers={"accept": "text/html"})
        assert page.status_code == 507
    assert digest(path) == before


def test_a_damaged_record_gives_a_clear_page_and_stops_all_writes(tmp_path):
    path = tmp_path / "row.sqlite3"
    with _client(path) as c:
        good = c.post("/api/v1/scenarios", json={"name": "good", "inputs": BASE_REQUEST}).json()["id"]
        bad = c.post("/api/v1/scenarios", json={"name": "bad", "inputs": BASE_REQUEST}).json()["id"]
        conn = sqlite3.connect(path)
        conn.execute("UPDATE scenarios SET results = '{broken' WHERE id = ?", (bad,))
        conn.commit()
        conn.close()
        before = digest(path)
        page = c.get(f"/s/{bad}")
        assert page.status_code == 503 and "damaged" in page.text and "internal error" not in page.text
        assert c.get(f"/api/v1/scenarios/{bad}").status_code == 503
        assert c.get(f"/api/v1/scenarios/{good}").status_code == 200  # the rest stays readable
        body = copy.deepcopy({"name": "after", "inputs": BASE_REQUEST})
        refused = c.post("/api/v1/scenarios", json=body)
        detail = refused.json()["detail"]
        assert refused.status_code == 503 and "nothing was saved" in detail and "damaged" in detail
    assert digest(path) == before
