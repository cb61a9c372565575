"""Saved scenarios at company scale: 100,000 of them on SQLite and on a throwaway PostgreSQL.

    make bench-store            (N=20000 python bench/store_scale.py for a quicker look)

The demo cases are solved once and saved over and over (names and notes varied) straight into
each store in batches, with the store's own statements; then, in process (fastapi TestClient,
so each figure includes about 1 ms of test-client overhead): the list page, the API list, a
search (many, few and no matches; one and two characters), the first and the last page, one
save through the store and through the API. Prints figures (medians); asserts nothing about time.

    MIGRATION=1 python bench/store_scale.py

instead fills a schema-3 file and database (the statements of tests/data/store_schema3) and
times today's store opening them: the step to schema 4 (the keys of every scenario recomputed).
"""

import importlib.util
import json
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from fastapi.testclient import TestClient  # noqa: E402

from server.app import create_app  # noqa: E402
from server.scenarios import solve_inputs, summary_of  # noqa: E402
from server.settings import Settings  # noqa: E402
from server.solver import SOLVER_VERSION  # noqa: E402
from server.store import SCHEMA_VERSION, compact, open_store  # noqa: E402
from server.store.base import OLDEST, Cursor, dumps, pack, search_keys, search_text, word_prefixes  # noqa: E402

N = int(os.environ.get("N", "100000"))
BATCH = 2000
PLANTS = ["Kemi", "Tornio", "Boliden", "Garpenberg", "Aitik", "Pyhäsalmi", "Kittilä", "Sotkamo"]


def payloads():
    out = []
    for f in sorted((ROOT / "demo_cases").glob("*.json")):
        demo = json.loads(f.read_text())
        results = solve_inputs(demo["inputs"])
        out.append((demo["name"], demo["inputs"], compact(results), summary_of(results)))
    return out


def rows(demos, n):
    """(id, name, note, created, inputs, results, solver_version, parent, summary, search) of n scenarios,
    one millisecond apart, the oldest first."""
    import secrets
    from datetime import UTC, datetime, timedelta

    start = datetime(2020, 1, 1, tzinfo=UTC)
    packed = [(name, dumps(inputs), pack(results), dumps(summary), inputs, summary)
              for name, inputs, results, summary in demos]
    for i in range(n):
        name, inputs_json, results_blob, summary_json, inputs, summary = packed[i % len(packed)]
        title = f"{name} {i}"
        note = f"{PLANTS[i % len(PLANTS)]} press {i % 12 + 1}, trial {i // 97}"
        if i % 60 == 0:
            note += ", 10% solids"  # one in sixty: short searches of other characters ("%", "0%")
        created = (start + timedelta(milliseconds=37 * i)).isoformat(timespec="milliseconds")
        yield (secrets.token_urlsafe(9), title, note, created, inputs_json, results_blob, SOLVER_VERSION, None,
               summary_json, search_text(title, note, inputs, summary))


def fill_sqlite(store, demos, keys=("scenario_keys", search_keys)):
    """``keys``: the table of keys and what goes in it (schema 3: scenario_prefixes, word_prefixes)."""
    conn = store._connect()
    try:
        it = rows(demos, N)
        while True:
            batch = [next(it, None) for _ in range(BATCH)]
            batch = [r for r in batch if r]
            if not batch:
                break
            conn.execute("BEGIN")
            for r in batch:
                cur = conn.execute(f"INSERT INTO scenarios ({store._COLUMNS}) VALUES ({store._MARKS})", r[:9])
                conn.execute("INSERT INTO scenarios_search (rowid, text) VALUES (?, ?)", (cur.lastrowid, r[9]))
                conn.executemany(f"INSERT INTO {keys[0]} VALUES (?, ?)",
                                 [(term, cur.lastrowid) for term in keys[1](r[9])])
            conn.execute("COMMIT")
        conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        conn.execute("ANALYZE")
    finally:
        conn.close()


def fill_postgres(store, demos, keys=("keys", search_keys)):
    """COPY into the scenarios (the count trigger fires per statement), then their search rows.
    ``keys``: the column of keys and what goes in it (schema 3: prefixes, word_prefixes)."""
    search = {}
    with store.pool.connection() as conn:
        with conn.cursor() as cur, cur.copy(f"COPY scenarios ({store._COLUMNS}) FROM STDIN") as copy:
            for r in rows(demos, N):
                copy.write_row(r[:9])
                search[r[0]] = (r[3], r[9])
        seqs = conn.execute("SELECT id, seq FROM scenarios").fetchall()
        copy_search = f"COPY scenario_search (seq, created, search, {keys[0]}) FROM STDIN"
        with conn.cursor() as cur, cur.copy(copy_search) as copy:
            copy.set_types(["int8", "text", "text", "text[]"])
            for sid, seq in seqs:
                created, text = search[sid]
                copy.write_row((seq, created, text, keys[1](text)))
        conn.execute("VACUUM ANALYZE scenarios")
        conn.execute("VACUUM ANALYZE scenario_search")


def median_ms(fn, repeat=30):
    fn()  # first use: caches, plans
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times) * 1000


def get_ok(client, url, **params):
    def fn():
        r = client.get(url, params=params)
        assert r.status_code == 200, r.text[:300]
    return fn


def measure(label, db, size_of, demos):
    settings = Settings(db=db, demo_dir=ROOT / "demo_cases")
    with TestClient(create_app(settings)) as c:
        store = c.app.state.store
        oldest = store._read(f"SELECT created, {store._SEQ} FROM scenarios ORDER BY created, {store._SEQ} "
                             f"LIMIT 1 OFFSET 20", ())[0]
        last = Cursor("older", oldest[0], oldest[1]).encode()
        first_page = c.get("/api/v1/scenarios").json()
        assert first_page["total"] == N and first_page["total_exact"] and first_page["first"] == 1
        oldest = c.get("/api/v1/scenarios", params={"cursor": "oldest"}).json()
        assert oldest["first"] == N - 19 and oldest["next"] is None
        tail = c.get("/api/v1/scenarios", params={"cursor": last}).json()
        assert len(tail["items"]) == 20 and tail["next"] is None
        figures = {
            "size per scenario": f"{size_of() / N / 1024:.2f} kB",
            "list page /scenarios": median_ms(get_ok(c, "/scenarios")),
            "API list, first page": median_ms(get_ok(c, "/api/v1/scenarios")),
            "API list, last page (cursor)": median_ms(get_ok(c, "/api/v1/scenarios", cursor=last)),
            "API list, oldest page (cursor=oldest)": median_ms(get_ok(c, "/api/v1/scenarios", cursor="oldest")),
            "list page /scenarios, oldest page": median_ms(get_ok(c, "/scenarios", cursor=OLDEST.encode())),
            "API list, page 2,500 by number (offset)": median_ms(get_ok(c, "/api/v1/scenarios", page=2500), 5),
            "store.page, first": median_ms(lambda: store.page("", None, 20)),
            "store.page, last": median_ms(lambda: store.page("", last, 20)),
        }
        for q in ("copper", "kemi press 1,", "trial 150", "zz no such", "press", "ü", "k", "17", "%", "0%", "1,"):
            found = c.get("/api/v1/scenarios", params={"q": q}).json()
            hits = f"{found['total']:,}" if found["total_exact"] else f"more than {found['total']:,}"
            figures[f"search {q!r} ({hits} hits)"] = median_ms(get_ok(c, "/api/v1/scenarios", q=q))
        deep = c.get("/api/v1/scenarios", params={"q": "copper"}).json()
        for _ in range(20):
            deep = c.get("/api/v1/scenarios", params={"q": "copper", "cursor": deep["next"]}).json()
        figures["search 'copper', page 22 (cursor)"] = median_ms(
            get_ok(c, "/api/v1/scenarios", q="copper", cursor=deep["next"]))
        figures["search 'copper', page 22 of the list page"] = median_ms(
            get_ok(c, "/scenarios", q="copper", cursor=deep["next"]))
        name, inputs, results, summary = demos[0]
        figures["save, store.create"] = median_ms(
            lambda: store.create("bench", "", inputs, results, SOLVER_VERSION, None, summary), 50)
        body = {"name": "bench through the API", "inputs": inputs}
        figures["save, POST /api/v1/scenarios (solve included)"] = median_ms(
            lambda: c.post("/api/v1/scenarios", json=body), 20)
    print(f"\n{label}: {N:,} scenarios")
    for k, v in figures.items():
        print(f"  {k:48s} {v if isinstance(v, str) else f'{v:8.2f} ms'}")


def schema3():
    """The schema-3 store package (tests/data/store_schema3), imported under its own name."""
    folder = ROOT / "tests/data/store_schema3"
    spec = importlib.util.spec_from_file_location("store_schema3", folder / "__init__.py",
                                                  submodule_search_locations=[str(folder)])
    module = importlib.util.module_from_spec(spec)
    sys.modules["store_schema3"] = module
    spec.loader.exec_module(module)
    return module


def migration(demos):
    """The step from schema 3 to 4 at N scenarios, on SQLite and PostgreSQL."""
    old = schema3()
    path = Path(tempfile.mkdtemp(prefix="presscycle-bench-")) / "schema3.sqlite3"
    fill_sqlite(old.SqliteStore(path, solver_version=SOLVER_VERSION), demos, ("scenario_prefixes", word_prefixes))
    t = time.perf_counter()
    open_store(path).close()
    print(f"SQLite, {N:,} scenarios: schema 3 -> {SCHEMA_VERSION} at start-up in {time.perf_counter() - t:.1f} s")
    t = time.perf_counter()
    open_store(path).close()
    print(f"  a start without a step (integrity check included): {time.perf_counter() - t:.1f} s")
    from tests.pgserver import PgServer, binaries

    if binaries() is None:
        print("PostgreSQL: not installed (Debian package postgresql), skipped")
        return
    server = PgServer()
    try:
        url = server.new_database("bench")
        import store_schema3.postgres

        store = store_schema3.postgres.PostgresStore(url)
        fill_postgres(store, demos, ("prefixes", word_prefixes))
        store.close()
        t = time.perf_counter()
        open_store(url).close()
        print(f"PostgreSQL, {N:,} scenarios: schema 3 -> {SCHEMA_VERSION} at start-up in "
              f"{time.perf_counter() - t:.1f} s")
        t = time.perf_counter()
        open_store(url).close()
        print(f"  a start without a step: {time.perf_counter() - t:.1f} s")
    finally:
        server.stop()


def main():
    demos = payloads()
    if os.environ.get("MIGRATION"):
        return migration(demos)
    folder = Path(tempfile.mkdtemp(prefix="presscycle-bench-"))
    path = folder / "scale.sqlite3"
    store = open_store(path)
    t = time.perf_counter()
    fill_sqlite(store, demos)
    print(f"SQLite filled in {time.perf_counter() - t:.1f} s")
    measure("SQLite", path, lambda: path.stat().st_size, demos)

    from tests.pgserver import PgServer, binaries

    if binaries() is None:
        print("\nPostgreSQL: not installed (Debian package postgresql), skipped")
        return
    server = PgServer()
    try:
        url = server.new_database("bench")
        store = open_store(url)
        t = time.perf_counter()
        fill_postgres(store, demos)
        store.close()
        print(f"\nPostgreSQL filled in {time.perf_counter() - t:.1f} s")
        size = lambda: server.admin("SELECT pg_database_size('bench') - pg_database_size('postgres')")[0][0]  # noqa: E731
        measure("PostgreSQL (database size less an empty one's)", url, size, demos)
    finally:
        server.stop()


if __name__ == "__main__":
    main()
