"""Press-log import time: 1,000 cycles x 2,000 rows (an invented log from the exact model,
tests/synthetic_logs.py), read, split into cycles and fitted; in process and through the app.
Prints figures; never asserts on time (the machines are shared and noisy).

    .venv/bin/python bench/presslog.py        (also run by make bench)
"""

import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from fastapi.testclient import TestClient  # noqa: E402

from server.app import create_app  # noqa: E402
from server.presslog import analyse, read_log  # noqa: E402
from server.schemas.presslog import PressLogRequest  # noqa: E402
from server.solver import logfit  # noqa: E402
from server.units import warm_up  # noqa: E402
from tests.conftest import app_settings  # noqa: E402
from tests.synthetic_logs import synthetic_log, to_csv  # noqa: E402
from tests.test_api_presslog import SCENARIO  # noqa: E402

CYCLES, STEP, FILTRATION, DOWNTIME = 1000, 2.0, 3600.0, 400.0  # 1,801 + 3 + 200 = 2,004 rows a cycle


def main() -> None:
    t0 = time.perf_counter()
    log = synthetic_log(cycles=CYCLES, filtration_time=FILTRATION, downtime=DOWNTIME, step=STEP, grid=20_001,
                        noise=0.005, seed=1)
    csv = to_csv(log)
    made = time.perf_counter() - t0
    rows = log.time.size
    print(f"press log: {CYCLES:,} cycles, {rows:,} rows ({rows / CYCLES:,.0f} a cycle), {len(csv) / 1e6:.0f} MB of CSV "
          f"(made in {made:.1f} s, not counted)")

    warm_up()  # pint's registry, as the app does at start-up
    t0 = time.perf_counter()
    parsed = read_log(csv)
    t_read = time.perf_counter() - t0
    t0 = time.perf_counter()
    cycles = logfit.find_cycles(parsed.time, parsed.pressure)
    t_find = time.perf_counter() - t0
    t0 = time.perf_counter()
    logfit.fit_cycles(parsed.time, parsed.pressure, parsed.volume, cycles, 100.0, 1e-3, 200.0)
    t_fit = time.perf_counter() - t0
    print(f"  read the CSV {t_read:.2f} s; find {cycles.count:,} cycles {t_find:.2f} s; fit them {t_fit:.2f} s")

    request = PressLogRequest(csv=csv, inputs=SCENARIO, cloth_wash_time=7200.0)
    t0 = time.perf_counter()
    out = analyse(request)
    t_all = time.perf_counter() - t0
    print(f"  the whole analysis in process (read, fit, trends, washes, wash interval, model): {t_all:.2f} s; "
          f"washes found {len(out['cloth']['washes'])}")

    with tempfile.TemporaryDirectory() as folder, TestClient(create_app(app_settings(Path(folder)))) as client:
        body = {"csv": csv, "inputs": SCENARIO, "cloth_wash_time": 7200.0}
        t0 = time.perf_counter()
        r = client.post("/api/v1/press-log", json=body)
        t_http = time.perf_counter() - t0
    print(f"  POST /api/v1/press-log through the app (JSON in and out, {len(r.content) / 1e6:.1f} MB answered): "
          f"{t_http:.2f} s, status {r.status_code} (issue 17: a few seconds)")


if __name__ == "__main__":
    main()
