"""Two app instances on one PostgreSQL database, 400 concurrent saves spread over both, one
instance killed (SIGKILL) mid-load and restarted: every acknowledged save is readable from the
other instance, ids are unique, nothing is saved twice."""

import threading
from concurrent.futures import ThreadPoolExecutor

import httpx
import psycopg
import pytest

from tests.conftest import BASE_REQUEST
from tests.liveserver import LiveServer

pytestmark = [pytest.mark.slow, pytest.mark.postgres]

SAVES = 400


def test_saves_survive_an_instance_killed_mid_load(pg_url, tmp_path):
    servers = [LiveServer(pg_url, log_dir=tmp_path).start(timeout=60), LiveServer(pg_url, log_dir=tmp_path).start(timeout=60)]
    # one client per instance (keep-alive; the same port after the restart)
    clients = [httpx.Client(base_url=s.url, timeout=30) for s in servers]
    acknowledged, lost_in_flight, lock = {}, [], threading.Lock()
    killed, restarted = threading.Event(), threading.Event()

    def save(k: int) -> None:
        target = k % 2
        body = {"name": f"save {k}", "note": f"instance {target}", "inputs": BASE_REQUEST}
        for _ in range(200):  # a refused connection sent nothing: try again (the instance restarts)
            was_restarted = restarted.is_set()
            try:
                r = clients[target].post("/api/v1/scenarios", json=body)
            except httpx.ConnectError:
                threading.Event().wait(0.1)
                continue
            except httpx.TransportError:  # sent, no answer (killed meanwhile): not acknowledged, not retried
                with lock:
                    lost_in_flight.append(k)
                return
            assert r.status_code == 201, r.text
            with lock:
                acknowledged[k] = (r.json()["id"], target, was_restarted and target == 0)
            return
        raise AssertionError(f"save {k}: instance {target} did not come back")

    def killer():
        while len(acknowledged) < SAVES // 4:
            threading.Event().wait(0.01)
        servers[0].kill()  # SIGKILL: no shutdown, connections cut
        killed.set()
        servers[0] = LiveServer(pg_url, port=servers[0].port, log_dir=tmp_path).start(timeout=60)
        restarted.set()

    chaos = threading.Thread(target=killer)
    chaos.start()
    try:
        with ThreadPoolExecutor(16) as pool:
            list(pool.map(save, range(SAVES)))
        chaos.join(90)
        assert killed.is_set() and restarted.is_set()
        assert any(after for _, _, after in acknowledged.values()), "no save reached the restarted instance"
        assert len(acknowledged) + len(lost_in_flight) == SAVES

        ids = [sid for sid, _, _ in acknowledged.values()]
        assert len(set(ids)) == len(ids)
        with httpx.Client(base_url=servers[1].url, timeout=30) as other:  # the instance never killed
            for k, (sid, _, _) in acknowledged.items():
                got = other.get(f"/api/v1/scenarios/{sid}")
                assert got.status_code == 200 and got.json()["name"] == f"save {k}"
            total = other.get("/api/v1/scenarios").json()["total"]
        with psycopg.connect(pg_url) as conn:
            names = conn.execute("SELECT name, count(*) FROM scenarios GROUP BY name").fetchall()
        assert all(n == 1 for _, n in names), "a save stored twice"
        stored = {name for name, _ in names}
        assert {f"save {k}" for k in acknowledged} <= stored
        assert stored <= {f"save {k}" for k in range(SAVES)} and total == len(stored)
    finally:
        chaos.join(90)
        for c in clients:
            c.close()
        for s in servers:
            s.stop()
