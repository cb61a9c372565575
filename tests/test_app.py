"""The app factory: settings reach every route through the app, never from a global."""

import json
import os
import subprocess
import sys

from fastapi.testclient import TestClient

from server.app import create_app
from server.settings import PROJECT_ROOT, Settings
from tests.conftest import BASE_REQUEST, app_settings


def test_the_demo_folder_comes_from_the_apps_settings(tmp_path):
    demos = tmp_path / "demos"
    demos.mkdir()
    copper = json.loads((PROJECT_ROOT / "demo_cases" / "copper_concentrate.json").read_text())
    (demos / "only_one.json").write_text(json.dumps({**copper, "name": "Only this one"}))
    with TestClient(create_app(Settings(db=tmp_path / "x.sqlite3", demo_dir=demos))) as c:
        home = c.get("/").text
        assert "/demo/only_one" in home and "/demo/copper_concentrate" not in home
        assert c.get("/demo/only_one").status_code == 200
        assert c.get("/demo/copper_concentrate").status_code == 404


def test_an_exported_database_never_receives_test_rows(tmp_path, monkeypatch):
    exported = tmp_path / "plant.sqlite3"
    monkeypatch.setenv("PRESSCYCLE_DB", str(exported))
    (tmp_path / "tests").mkdir()
    with TestClient(create_app(app_settings(tmp_path / "tests"))) as c:
        assert c.post("/api/v1/scenarios", json={"name": "t", "inputs": BASE_REQUEST}).status_code == 201
    assert not exported.exists()
    assert (tmp_path / "tests" / "test.sqlite3").exists()


def test_settings_from_the_environment_do_not_reach_an_app_built_for_tests(tmp_path, monkeypatch):
    monkeypatch.setenv("PRESSCYCLE_MAX_BODY_BYTES", "10")
    monkeypatch.setenv("PRESSCYCLE_DEMO_DIR", str(tmp_path / "nowhere"))
    with TestClient(create_app(app_settings(tmp_path))) as c:
        assert c.post("/api/v1/cycle", json=BASE_REQUEST).status_code == 200
        assert "/demo/copper_concentrate" in c.get("/").text


def _python(code: str, cwd, db) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if not k.startswith("PRESSCYCLE_")}
    env["PRESSCYCLE_DB"] = str(db)
    env["PYTHONPATH"] = str(PROJECT_ROOT)
    return subprocess.run([sys.executable, "-c", code], cwd=cwd, env=env, capture_output=True, text=True,
                          timeout=120)


def test_importing_the_app_module_opens_no_database_until_app_is_asked_for(tmp_path):
    db = tmp_path / "lazy.sqlite3"
    done = _python("import server.app", tmp_path, db)
    assert done.returncode == 0, done.stderr
    assert not db.exists()
    done = _python("import server.app as m; print(type(m.app).__name__)", tmp_path, db)
    assert done.returncode == 0 and done.stdout.strip() == "FastAPI", done.stderr
    assert db.exists()


def test_healthz_answers_status_and_version_without_the_database(tmp_path):
    from server.solver import SOLVER_VERSION

    with TestClient(create_app(app_settings(tmp_path))) as c:
        c.app.state.store = None  # no database behind it: a liveness answer must not need one
        r = c.get("/healthz")
        assert r.status_code == 200 and r.json() == {"status": "ok", "version": SOLVER_VERSION}


def test_a_changed_demo_file_shows_its_new_results(tmp_path):
    import os

    demos = tmp_path / "demos"
    demos.mkdir()
    copper = json.loads((PROJECT_ROOT / "demo_cases" / "copper_concentrate.json").read_text())
    path = demos / "one.json"
    path.write_text(json.dumps(copper))
    with TestClient(create_app(Settings(db=tmp_path / "x.sqlite3", demo_dir=demos))) as c:
        first = c.get("/demo/one").text
        assert c.get("/demo/one").text == first  # rendered once, then from the page cache
        copper["inputs"]["cycle"]["downtime"] = "90 min"
        path.write_text(json.dumps(copper))
        os.utime(path, ns=(path.stat().st_atime_ns, path.stat().st_mtime_ns + 10**9))
        again = c.get("/demo/one").text
        assert again != first and 'value="90"' in again


def test_the_start_up_warm_up_requests_are_answered(tmp_path, caplog):
    # the app solves a few invented requests once at start-up so that the first engineer's
    # request pays no first-use costs (issue 12): each must still be answered 200, else the
    # warm-up warns (it would silently warm nothing)
    import logging

    from fastapi.testclient import TestClient

    from server.app import create_app
    from tests.conftest import app_settings

    with caplog.at_level(logging.WARNING, logger="presscycle"), TestClient(create_app(app_settings(tmp_path))):
        pass
    assert not [r for r in caplog.records if "warm-up" in r.getMessage()]
