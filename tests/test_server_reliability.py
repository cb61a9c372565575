"""Saved scenarios under a real uvicorn server: concurrency, restarts, bad database files."""

import json
import sqlite3
import threading
import time

import httpx
import pytest

from server.settings import PROJECT_ROOT
from tests.liveserver import LiveServer

# a real uvicorn per test: minutes, not seconds ("pytest -m 'not slow'" leaves them out)
pytestmark = pytest.mark.slow

COPPER = json.loads((PROJECT_ROOT / "demo_cases" / "copper_concentrate.json").read_text())["inputs"]


def body(i: int) -> dict:
    inputs = json.loads(json.dumps(COPPER))
    inputs["cycle"]["downtime"] = f"{10 + i % 50} min"  # each save differs
    return {"name": f"load {i}", "note": f"thread save {i}", "inputs": inputs}


def save_many(url: str, indices, acknowledged: dict, failures: list, stop: threading.Event | None = None):
    with httpx.Client(base_url=url, timeout=60) as http:
        for i in indices:
            if stop is not None and stop.is_set():
                return
            try:
                r = http.post("/api/v1/scenarios", json=body(i))
            except httpx.HTTPError as exc:
                failures.append((i, type(exc).__name__))
                continue
            if r.status_code == 201:
                acknowledged[i] = r.json()["id"]
            else:
                failures.append((i, r.status_code))


def test_200_concurrent_saves_come_back_intact_and_distinct(tmp_path):
    server = LiveServer(tmp_path / "load.sqlite3").start()
    try:
        acknowledged, failures = {}, []
        threads = [threading.Thread(target=save_many, args=(server.url, range(k, 200, 8), acknowledged, failures))
                   for k in range(8)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        assert failures == []
        assert len(acknowledged) == 200 and len(set(acknowledged.values())) == 200
        with httpx.Client(base_url=server.url, timeout=30) as http:
            for i, sid in acknowledged.items():
                got = http.get(f"/api/v1/scenarios/{sid}").json()
                assert got["name"] == f"load {i}" and got["inputs"] == body(i)["inputs"]
            assert http.get("/api/v1/scenarios").json()["total"] == 200
    finally:
        server.stop()


def test_stopping_the_server_mid_load_loses_no_saved_scenario(tmp_path):
    db = tmp_path / "restart.sqlite3"
    server = LiveServer(db).start()
    acknowledged, failures = {}, []
    stop = threading.Event()
    threads = [threading.Thread(target=save_many, args=(server.url, range(k, 400, 4), acknowledged, failures, stop))
               for k in range(4)]
    for t in threads:
        t.start()
    deadline = time.time() + 30
    while len(acknowledged) < 40 and time.time() < deadline:
        time.sleep(0.05)
    server.kill()  # no clean shutdown: as if the machine lost power to the process
    stop.set()
    for t in threads:
        t.join()
    assert len(acknowledged) >= 40
    again = LiveServer(db, port=server.port).start()
    try:
        with httpx.Client(base_url=again.url, timeout=30) as http:
            for i, sid in acknowledged.items():
                r = http.get(f"/api/v1/scenarios/{sid}")
                assert r.status_code == 200, (i, sid)
                assert r.json()["inputs"] == body(i)["inputs"]
    finally:
        again.stop()


@pytest.mark.parametrize("kind", ["corrupted", "foreign"])
def test_a_bad_database_file_gives_a_clear_start_up_error(tmp_path, kind):
    db = tmp_path / f"{kind}.sqlite3"
    if kind == "corrupted":
        db.write_bytes(b"\x00garbage, not SQLite\x00" * 500)
    else:
        conn = sqlite3.connect(db)
        conn.execute("CREATE TABLE orders (id INTEGER PRIMARY KEY, item TEXT)")
        conn.execute("INSERT INTO orders (item) VALUES ('pump seal')")
        conn.commit()
        conn.close()
    before = db.read_bytes()
    server = LiveServer(db).start(wait=False)
    try:
        code = server.proc.wait(30)
    finally:
        server.kill()
    out = server.output()
    assert code != 0
    assert "presscycle cannot start" in out
    assert ("corrupted" in out) if kind == "corrupted" else ("not a presscycle database" in out)
    assert "Traceback" not in out
    assert db.read_bytes() == before  # nothing written over
