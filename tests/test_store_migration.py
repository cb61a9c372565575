"""Schema 1 -> 2 at start-up, on a file made by the code that wrote schema 1 (the storage module
of commit fffa6fc, kept verbatim in tests/data/storage_schema1.py, fed the results that
version's save stored: solve_inputs with chart series, summary_of)."""

import importlib.util
import json
import sqlite3

import pytest
from fastapi.testclient import TestClient

from server import solver
from server.app import create_app
from server.scenarios import redraw, solve_inputs, summary_of
from server.settings import PROJECT_ROOT
from server.store import SCHEMA_VERSION, SERIES_KEYS, SqliteStore
from tests.conftest import app_settings

DEMOS = sorted((PROJECT_ROOT / "demo_cases").glob("*.json"))


def schema1_module():
    spec = importlib.util.spec_from_file_location("storage_schema1", PROJECT_ROOT / "tests/data/storage_schema1.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture
def schema1_file(tmp_path):
    """A schema-1 file with the demo cases saved by today's solver, and one saved by an older
    solver version (its series can no longer be recomputed)."""
    old = schema1_module()
    path = tmp_path / "schema1.sqlite3"
    store = old.SqliteStore(path)
    saved = []
    for f in DEMOS:
        demo = json.loads(f.read_text())
        results = solve_inputs(demo["inputs"])
        saved.append(store.create(demo["name"], "as saved by schema 1", demo["inputs"], results,
                                  solver.SOLVER_VERSION, None, summary_of(results)))
    older = json.loads(json.dumps(saved[0].results))
    older["best"]["filtrate_throughput"] *= 1.02  # what an older solver gave
    older["chart_series"]["throughput_time"]["filtrate_throughput"][0] *= 1.02
    saved.append(store.create("by an older solver", "", saved[0].inputs, older, "0.0.9", saved[0].id,
                              saved[0].summary))
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == 1
    conn.close()
    return path, saved


def test_schema_1_migrates_to_2_keeping_every_scenario(schema1_file):
    path, saved = schema1_file
    size_before = path.stat().st_size
    store = SqliteStore(path)
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == 4
    conn.close()
    for old in saved[:-1]:
        now = store.get(old.id)
        assert (now.name, now.note, now.created, now.inputs, now.summary, now.solver_version, now.parent) == \
            (old.name, old.note, old.created, old.inputs, old.summary, old.solver_version, old.parent)
        assert now.results == {k: v for k, v in old.results.items() if k not in SERIES_KEYS}
        # the dropped series come back identical: the same inputs under the same solver version
        drawn = redraw(now)
        assert drawn.series_from == "saved" and not drawn.changed
        for key in SERIES_KEYS:
            assert drawn.results[key] == old.results[key]
    kept = store.get(saved[-1].id)
    assert kept.results == saved[-1].results  # another solver's series cannot be recomputed: kept
    assert redraw(kept).series_from == "saved" and redraw(kept).changed
    assert path.stat().st_size < size_before / 4
    assert [s.id for s in store.page("schema 1", None, 20).items] == [s.id for s in saved[:-1]][::-1]
    assert SqliteStore(path).get(saved[0].id) == store.get(saved[0].id)  # a second start changes nothing


def test_a_migrated_scenario_by_an_older_solver_shows_its_saved_charts(schema1_file, tmp_path):
    path, saved = schema1_file
    settings = app_settings(tmp_path).model_copy(update={"db": path})
    with TestClient(create_app(settings)) as c:
        html = c.get(f"/s/{saved[-1].id}").text
        assert "solver-changed" in html and "drawn by the current solver" not in html
        figures = json.loads(html.split('id="initial-figures">')[1].split("</script>")[0])
        line = figures["throughput_time"]["data"][0]["y"][0]
        first = saved[-1].results["chart_series"]["throughput_time"]["filtrate_throughput"][0]
        # m³/s saved, m³/h drawn, 3 figures on the page; the current solver's point is 2 % lower
        assert line == pytest.approx(first * 3600, rel=2e-3) != pytest.approx(first / 1.02 * 3600, rel=2e-3)
        html = c.get(f"/s/{saved[0].id}").text
        assert "solver-changed" not in html
        assert c.get("/api/v1/scenarios").json()["total"] == len(saved)
