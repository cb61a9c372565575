"""Server CPU per request, as a ratio to GET /healthz measured the same way, in one run.

One uvicorn worker is pinned to one core and the requests come from another (when the
machine has two); the server's own CPU time (user + system, from /proc) is read before and
after each batch, which is steadier than requests per second on a shared machine. Prints a
table; never asserts on time.

    make bench        (or: .venv/bin/python bench/server_cpu.py [word ...]: only the requests
                       whose names hold one of the words, e.g. "cycle", "demo"; no memory run)
"""

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from tests.liveserver import free_port  # noqa: E402

TARGETS = {"cycle": 2.5, "pump": 6.0, "page": 8.0}  # issue 12: times /healthz
#: short batches of each request, each between two of /healthz (see per_request)
ROUNDS = 9
FLOOR_BATCH = 150


def server_cpu(pid: int) -> float:
    """CPU seconds a process has used so far (user + system, all its threads): its CPU clock
    read to the nanosecond where Linux lets another process read it (a process clock id is
    ((~pid) << 3) | 2, see clock_getcpuclockid(3)); else the clock ticks in /proc (10 ms)."""
    try:
        return time.clock_gettime(((~pid) << 3) | 2)
    except (OSError, OverflowError):
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def cpu_clock_text(pid: int) -> str:
    """How server_cpu reads the server's CPU time (printed under the table)."""
    try:
        time.clock_gettime(((~pid) << 3) | 2)
        return "the server's CPU clock, read to the nanosecond"
    except (OSError, OverflowError):
        return f"clock ticks of {1e3 / os.sysconf('SC_CLK_TCK'):.0f} ms over each batch"


def main() -> None:
    cores = sorted(os.sched_getaffinity(0))
    server_core, client_core = cores[0], cores[-1]
    port = free_port()
    folder = Path(tempfile.mkdtemp(prefix="presscycle-bench-"))
    env = {k: v for k, v in os.environ.items() if not k.startswith("PRESSCYCLE_")}
    env.update(PRESSCYCLE_DB=str(folder / "bench.sqlite3"), PRESSCYCLE_DEMO_DIR=str(ROOT / "demo_cases"))
    server = subprocess.Popen(
        ["taskset", "-c", str(server_core), sys.executable, "-m", "uvicorn", "--factory", "server.app:create_app",
         "--host", "127.0.0.1", "--port", str(port), "--log-level", "warning"], cwd=ROOT, env=env)
    os.sched_setaffinity(0, {client_core})
    base = f"http://127.0.0.1:{port}"
    try:
        started = time.perf_counter()
        for _ in range(300):
            try:
                httpx.get(base + "/healthz")
                break
            except httpx.HTTPError:
                time.sleep(0.05)
        demos = {p.stem: json.loads(p.read_text())["inputs"] for p in sorted((ROOT / "demo_cases").glob("*.json"))}
        with httpx.Client(base_url=base, timeout=120) as http:
            http.get("/healthz")  # the client's connection made first: the server's first use is measured
            first = _timed(lambda: http.post("/api/v1/cycle", json=demos["copper_concentrate"]))
            second = _timed(lambda: http.post("/api/v1/cycle", json=demos["copper_concentrate"]))
            print(f"server start to first answer {time.perf_counter() - started:.2f} s; first cycle request "
                  f"{first * 1e3:.1f} ms, second {second * 1e3:.1f} ms (ratio {first / second:.1f}, target <= 2; "
                  "wall clock of one request each, on an open connection)")
            ids = [http.post("/api/v1/scenarios", json={"name": n, "inputs": i}).json()["id"] for n, i in demos.items()]

            def batch(fn, n):
                before = server_cpu(server.pid)
                for _ in range(n):
                    fn()
                return server_cpu(server.pid) - before

            def healthz():
                return http.get("/healthz")

            floors = []  # every /healthz batch: (CPU seconds, requests)

            def per_request(fn, n, rounds=ROUNDS):
                """Server CPU per request of ``fn`` in ``rounds`` short batches, each between two
                batches of /healthz (the floor of the same moments: a shared machine's speed
                drifts over a run); returns (median seconds per request, the median of the
                rounds' ratios to their floor, its lower and upper quartile). A median keeps a
                round that a busy neighbour slowed from moving the figure."""
                for _ in range(5):
                    fn()
                each = max(1, n // rounds)
                around = [batch(healthz, FLOOR_BATCH)]
                seconds, ratios = [], []
                for _ in range(rounds):
                    t = batch(fn, each) / each
                    around.append(batch(healthz, FLOOR_BATCH))
                    floor_here = (around[-2] + around[-1]) / (2 * FLOOR_BATCH)
                    seconds.append(t)
                    ratios.append(t / floor_here)
                floors.append((sum(around), FLOOR_BATCH * len(around)))
                q1, _, q3 = statistics.quantiles(ratios, n=4)
                return statistics.median(seconds), statistics.median(ratios), q1, q3

            for _ in range(50):
                healthz()
            floor = batch(healthz, 3000) / 3000
            rows = [("GET /healthz", (floor, 1.0, 1.0, 1.0), None)]
            todo = []  # (name, request, how many, target kind)
            for name, inputs in demos.items():
                kind = "pump" if inputs["feed"]["mode"] != "constant_pressure" else "cycle"
                stages = any(k in inputs["cycle"] for k in ("squeeze", "blow", "wash_model", "wash_target", "specs"))
                if stages:  # free stage durations searched (issue 15): issue 12's targets do not apply
                    kind = None
                todo.append((f"POST /api/v1/cycle, {name}" + (" (stages searched)" if stages else ""),
                             lambda i=inputs: http.post("/api/v1/cycle", json=i), 30 if stages else 900, kind))
            pump = dict(demos["kaolin_pump_fed"], compare_thicknesses=["20 mm", "25 mm", "32 mm", "40 mm", "50 mm",
                                                                     "60 mm"])
            todo.append(("POST /api/v1/cycle, pump-fed + 6 thicknesses",
                         lambda: http.post("/api/v1/cycle", json=pump), 600, "pump"))
            for name in demos:
                todo.append((f"GET /demo/{name}", lambda n=name: http.get(f"/demo/{n}"), 300, "page"))
            todo.append(("GET /s/<id> (saved page)", lambda: http.get(f"/s/{ids[0]}"), 200, "page"))
            todo.append(("GET /compare (two saved)", lambda: http.get(f"/compare?ids={ids[0]},{ids[1]}"), 200, "page"))
            todo.append(("POST /ui/results (Calculate), pump-fed",
                         lambda: http.post("/ui/results", json=demos["kaolin_pump_fed"]), 100, None))
            only = sys.argv[1:]  # words: only the requests whose names hold one of them
            for name, fn, n, kind in todo:
                if not only or any(word in name for word in only):
                    rows.append((name, per_request(fn, n), kind))

            # memory: resident size over 10,000 mixed requests after the warm-up above
            mixed = [lambda: http.get("/healthz"), lambda: http.post("/api/v1/cycle", json=demos["copper_concentrate"]),
                     lambda: http.get("/demo/hydroxide_sludge"), lambda: http.get(f"/s/{ids[1]}"),
                     lambda: http.post("/api/v1/cycle", json=pump), lambda: http.get("/scenarios")]
            rss = [resident_kb(server.pid)]
            for k in range(0 if sys.argv[1:] else 10_000):
                mixed[k % len(mixed)]()
                if (k + 1) % 2_500 == 0:
                    rss.append(resident_kb(server.pid))
        spent, n = map(sum, zip(*floors))
        print(f"{'request':60s} {'server CPU':>11s} {'x /healthz':>11s} {'(quartiles)':>13s}  target")
        for name, (seconds, ratio, q1, q3), kind in rows:
            target = f"<= {TARGETS[kind]:g}x" if kind else ""
            spread = f"({q1:.2f}-{q3:.2f})" if kind or q1 != q3 else ""
            print(f"{name:60s} {seconds * 1e3:8.3f} ms {ratio:10.2f}x {spread:>13s}  {target}")
        print(f"(each ratio: the median over {ROUNDS} rounds, each against the /healthz batches just before and "
              f"after it; /healthz over the whole run "
              f"{spent / n * 1e3:.3f} ms, at the start {floor * 1e3:.3f} ms)")
        print(f"({cpu_clock_text(server.pid)}; server on core {server_core}, client on core {client_core})")
        print("server resident memory over 10,000 mixed requests: "
              + " -> ".join(f"{kb / 1024:.1f} MB" for kb in rss)
              + f" ({100 * (rss[-1] - rss[0]) / rss[0]:+.1f} %, target within 5 %)")
    finally:
        server.terminate()
        server.wait(10)


def resident_kb(pid: int) -> int:
    """Resident set size of a process [kB]."""
    line = next(x for x in Path(f"/proc/{pid}/status").read_text().splitlines() if x.startswith("VmRSS:"))
    return int(line.split()[1])


def _timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


if __name__ == "__main__":
    main()
