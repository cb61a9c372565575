"""Damaged and unwritable databases: a clear message for each, and the file left byte for byte
as it was. Root ignores file permissions, so as root the read-only cases run their probe in a
process without the capabilities that override them; a full disk is SQLite's own page limit (SQLITE_FULL), as where no small
filesystem can be mounted."""

import hashlib
import sqlite3
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from server.app import create_app
from server.settings import PROJECT_ROOT, Settings
from server.store import SqliteStore, StorageError
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


READ_ONLY_PROBE = """
import json, sys
from server.store import SqliteStore, StorageError
out = {}
try:
    store = SqliteStore(sys.argv[1])
    out["read_only"] = store.read_only
    out["name"] = store.get(sys.argv[2]).name
    try:
        store.create("new", "", {}, {}, "test", None, {})
        out["saved"] = True
    except StorageError as exc:
        out["refused"] = [exc.status, str(exc)]
except StorageError as exc:
    out["start_refused"] = str(exc)
print(json.dumps(out))
"""


def _without_permission_override():
    """Let this (child) process obey file permissions even as root: drop the capabilities that
    override them (CAP_DAC_OVERRIDE, CAP_DAC_READ_SEARCH, CAP_FOWNER) with capset(2)."""
    import ctypes
    import os

    if os.geteuid() != 0:
        return

    class Header(ctypes.Structure):
        _fields_ = [("version", ctypes.c_uint32), ("pid", ctypes.c_int)]

    class Data(ctypes.Structure):
        _fields_ = [("effective", ctypes.c_uint32), ("permitted", ctypes.c_uint32), ("inheritable", ctypes.c_uint32)]

    libc = ctypes.CDLL(None, use_errno=True)
    for cap in (1, 2, 3):  # from the bounding set too: root regains its set at exec otherwise
        if libc.prctl(24, cap, 0, 0, 0) != 0:  # PR_CAPBSET_DROP
            raise OSError(ctypes.get_errno(), "prctl(PR_CAPBSET_DROP)")
    header, data = Header(0x20080522, 0), (Data * 2)()  # _LINUX_CAPABILITY_VERSION_3
    if libc.capget(ctypes.byref(header), data) != 0:
        raise OSError(ctypes.get_errno(), "capget")
    override = (1 << 1) | (1 << 2) | (1 << 3)
    data[0].effective &= ~override
    data[0].permitted &= ~override
    data[0].inheritable &= ~override
    if libc.capset(ctypes.byref(header), data) != 0:
        raise OSError(ctypes.get_errno(), "capset")


def _as_other_user(code: str, *args) -> dict:
    """Run python code in a process that file permissions apply to (root's override dropped)."""
    import json
    import os
    import subprocess
    import sys

    env = {"PYTHONPATH": str(PROJECT_ROOT), "PATH": os.environ.get("PATH", ""), "HOME": "/tmp"}
    done = subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True, text=True,
                          timeout=120, env=env, preexec_fn=_without_permission_override, cwd="/")
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


@pytest.fixture
def shared_folder():
    """A folder outside pytest's private tree, so that the other user can reach it."""
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix="presscycle-ro-"))
    folder.chmod(0o777)
    yield folder
    for p in [folder, *folder.iterdir()]:
        p.chmod(0o777)
    shutil.rmtree(folder)


@pytest.mark.parametrize("what", ["file", "folder"])
def test_a_really_read_only_file_or_folder_serves_scenarios_and_refuses_saves_in_words(shared_folder, what):
    path = shared_folder / "ro.sqlite3"
    store = SqliteStore(path)
    sid = store.create("kept", "", {"a": 1}, {"best": {}}, "test", None, {"k": 1}).id
    del store
    for sidecar in shared_folder.glob("ro.sqlite3-*"):
        sidecar.unlink()  # a clean shutdown leaves none
    path.chmod(0o444)
    if what == "folder":
        path.chmod(0o666)
        shared_folder.chmod(0o555)
    before = digest(path)
    out = _as_other_user(READ_ONLY_PROBE, path, sid)
    assert out["name"] == "kept" and "read-only" in out["read_only"]
    assert out["refused"][0] == 503 and "nothing was saved" in out["refused"][1] and "read-only" in out["refused"][1]
    assert "saved" not in out and "corrupt" not in out["refused"][1]
    assert digest(path) == before


def test_read_only_with_saves_left_in_the_journal_refuses_the_start(shared_folder):
    import shutil

    path = shared_folder / "wal.sqlite3"
    store = SqliteStore(path)
    store.create("kept", "", {"a": 1}, {"best": {}}, "test", None, {"k": 1})
    # a writer that stopped without closing leaves its journal: copy the pair mid-transaction
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA wal_autocheckpoint = 0")
    conn.execute("INSERT INTO scenarios VALUES ('x', 'in the journal', '', '2026-01-01', '{}', '{}', 't', NULL, '{}')")
    copy_path = shared_folder / "copy.sqlite3"
    shutil.copy(path, copy_path)
    shutil.copy(path.with_name(path.name + "-wal"), copy_path.with_name(copy_path.name + "-wal"))
    conn.close()
    shared_folder.chmod(0o555)
    out = _as_other_user(READ_ONLY_PROBE, copy_path, "x")
    assert "not yet merged" in out["start_refused"]


def test_a_refused_start_leaves_the_file_and_its_journal_as_they_were(tmp_path):
    import shutil

    path = tmp_path / "j.sqlite3"
    filled_store(path, 200)
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA wal_autocheckpoint = 0")
    for i in range(20):
        conn.execute("INSERT INTO scenarios VALUES (?, 'n', '', '2026-01-01', '{}', '{}', 't', NULL, '{}')", (f"j{i}",))
    damaged, wal = tmp_path / "d.sqlite3", tmp_path / "d.sqlite3-wal"
    shutil.copy(path, damaged)
    shutil.copy(path.with_name(path.name + "-wal"), wal)
    conn.close()
    data = bytearray(damaged.read_bytes())
    middle = len(data) // 2
    data[middle:middle + 65536] = hashlib.sha512(b"noise").digest() * 1024
    damaged.write_bytes(bytes(data))
    before, wal_before = digest(damaged), digest(wal)
    with pytest.raises(StorageError, match="damaged|corrupted"):
        SqliteStore(damaged)
    assert digest(damaged) == before and wal.exists() and digest(wal) == wal_before


# The list reads only the columns it shows (id, name, note, created, summary: schema 2), so a
# record whose inputs or results are damaged no longer takes the whole list down with it.
@pytest.mark.parametrize("column,value,damaged_pages", [
    ("results", "{}", {"page", "api", "csv", "compare"}),           # valid JSON, not the results' shape
    ("inputs", "[]", {"page", "api", "csv", "compare"}),            # the row itself cannot be read
    ("summary", '{"a": 1}', {"list"}),                             # only the list shows the summary
    ("results", "{broken", {"page", "api", "csv", "compare"}),
    ("summary", "{broken", {"page", "api", "csv", "compare", "list"}),
])
def test_a_record_of_the_wrong_shape_is_damage_said_in_words(tmp_path, column, value, damaged_pages):
    path = tmp_path / "shape.sqlite3"
    with _client(path) as c:
        good = c.post("/api/v1/scenarios", json={"name": "good", "inputs": BASE_REQUEST}).json()["id"]
        bad = c.post("/api/v1/scenarios", json={"name": "bad", "inputs": BASE_REQUEST}).json()["id"]
        conn = sqlite3.connect(path)
        conn.execute(f"UPDATE scenarios SET {column} = ? WHERE id = ?", (value, bad))
        conn.commit()
        conn.close()
        urls = {"page": f"/s/{bad}", "api": f"/api/v1/scenarios/{bad}", "csv": f"/s/{bad}/curves.csv",
                "list": "/scenarios", "compare": f"/compare?ids={good},{bad}"}
        for name, url in urls.items():
            r = c.get(url)
            if name in damaged_pages:
                assert r.status_code == 503 and "damaged" in r.text and "internal error" not in r.text, url
            else:
                assert r.status_code == 200, url
        assert c.get(f"/api/v1/scenarios/{good}").status_code == 200  # the rest stays readable
        before = digest(path)
        refused = c.post("/api/v1/scenarios", json={"name": "after", "inputs": BASE_REQUEST})
        assert refused.status_code == 503 and "nothing was saved" in refused.json()["detail"]
        assert digest(path) == before  # no write goes into a file known to be damaged
