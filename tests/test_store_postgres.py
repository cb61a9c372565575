"""The PostgreSQL store's own cases: start-up errors said in words (unreachable, wrong password,
no such database), a read-only role, instances migrating together, and the whole app on it."""

import json
import threading

import psycopg
import pytest
from fastapi.testclient import TestClient

from server.app import create_app
from server.settings import PROJECT_ROOT
from server.store import SCHEMA_VERSION, StorageError, open_store
from tests.conftest import app_settings
from tests.pgserver import PASSWORD, PASSWORD_ROLE

pytestmark = pytest.mark.postgres

COPPER = json.loads((PROJECT_ROOT / "demo_cases" / "copper_concentrate.json").read_text())["inputs"]


def test_an_unreachable_server_is_said_in_words(pg_server):
    url = f"postgresql://postgres@/presscycle?host={pg_server.folder}&port={pg_server.port + 1}"
    with pytest.raises(StorageError, match="cannot be reached") as refused:
        open_store(url)
    assert "is it running" in str(refused.value)


def test_a_wrong_password_is_said_without_echoing_it(pg_server, pg_url):
    dbname = pg_url.split("@/")[1].split("?")[0]
    pg_server.admin(f"GRANT ALL ON DATABASE {dbname} TO {PASSWORD_ROLE}")
    with pytest.raises(StorageError, match="refused the password") as refused:
        open_store(pg_server.url(dbname, PASSWORD_ROLE, "not-the-password"))
    assert "not-the-password" not in str(refused.value)
    pg_server.admin(f"ALTER DATABASE {dbname} OWNER TO {PASSWORD_ROLE}")
    open_store(pg_server.url(dbname, PASSWORD_ROLE, PASSWORD)).close()  # the right one gets in


def test_a_missing_database_is_said_in_words(pg_server):
    with pytest.raises(StorageError, match="has no database 'nosuchdb'"):
        open_store(pg_server.url("nosuchdb"))


def test_the_app_refuses_to_start_with_a_sentence_not_a_traceback(pg_server, tmp_path):
    settings = app_settings(tmp_path).model_copy(update={"db": pg_server.url("nosuchdb")})
    with pytest.raises(SystemExit) as stopped:
        create_app(settings)
    assert str(stopped.value).startswith("presscycle cannot start: the PostgreSQL server has no database")


def test_a_read_only_role_reads_and_refuses_saves_in_words(pg_server, pg_url):
    store = open_store(pg_url)
    sid = store.create("kept", "", {"a": 1}, {"best": {}}, "t", None, {"k": 1.0}).id
    store.close()
    dbname = pg_url.split("@/")[1].split("?")[0]
    pg_server.admin(f"CREATE ROLE reader_{dbname} LOGIN")
    pg_server.admin(f"GRANT SELECT ON ALL TABLES IN SCHEMA public TO reader_{dbname}", dbname)
    reader = open_store(pg_server.url(dbname, f"reader_{dbname}"))
    assert reader.get(sid).name == "kept" and "may not write" in reader.read_only
    with pytest.raises(StorageError, match="nothing was saved") as refused:
        reader.create("new", "", {}, {}, "t", None, {})
    assert refused.value.status == 503
    reader.close()


def test_instances_starting_together_migrate_once(pg_url):
    stores, errors = [], []

    def start():
        try:
            stores.append(open_store(pg_url))
        except Exception as exc:  # noqa: BLE001 - collected and asserted below
            errors.append(exc)

    threads = [threading.Thread(target=start) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors and len(stores) == 4
    with psycopg.connect(pg_url) as conn:
        assert conn.execute("SELECT value FROM presscycle_meta WHERE key = 'schema_version'").fetchone() == (str(SCHEMA_VERSION),)
    ids = {s.create(f"from {i}", "", {}, {"best": {}}, "t", None, {"k": 1.0}).id for i, s in enumerate(stores)}
    assert all(stores[0].get(i) is not None for i in ids)
    for s in stores:
        s.close()


def test_the_app_saves_lists_searches_and_draws_on_postgresql(pg_url, tmp_path):
    settings = app_settings(tmp_path).model_copy(update={"db": pg_url})
    with TestClient(create_app(settings)) as c:
        ids = [c.post("/api/v1/scenarios", json={"name": f"press {i}", "note": "capex" if i == 3 else "",
                                                 "inputs": COPPER}).json()["id"] for i in range(23)]
        first = c.get("/api/v1/scenarios").json()
        assert first["total"] == 23 and [i["id"] for i in first["items"]] == ids[::-1][:20]
        second = c.get("/api/v1/scenarios", params={"cursor": first["next"]}).json()
        assert [i["id"] for i in second["items"]] == ids[::-1][20:] and second["next"] is None
        assert [i["id"] for i in c.get("/api/v1/scenarios", params={"q": "CAPEX"}).json()["items"]] == [ids[3]]
        page = c.get(f"/s/{ids[0]}")
        assert page.status_code == 200 and "solver-changed" not in page.text
        got = c.get(f"/api/v1/scenarios/{ids[0]}").json()
        assert got["inputs"] == COPPER and len(got["results"]["curves"]["time"]) == 241
        assert c.get(f"/compare?ids={ids[0]},{ids[1]}").status_code == 200
