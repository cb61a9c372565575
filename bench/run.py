"""Benchmarks: print figures, never assert on time (the machines are shared and noisy).

    make bench
"""

import json
import statistics
import time
from pathlib import Path

from server.cases import solve_request
from server.schemas.cycle import CycleRequest

ROOT = Path(__file__).resolve().parent.parent


def timed(fn, repeat: int = 200) -> tuple[float, float]:
    """Median and best wall time of fn() over ``repeat`` runs [s]."""
    fn()  # warm up
    samples = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        samples.append(time.perf_counter() - t0)
    return statistics.median(samples), min(samples)


def main() -> None:
    demo = json.loads((ROOT / "demo_cases" / "iron_oxide_pigment.json").read_text())["inputs"]
    request = CycleRequest.model_validate(demo)
    med, best = timed(lambda: solve_request(request))
    n = len(request.compare_thicknesses)
    print(f"constant-pressure cycle + {n}-thickness comparison (closed form): "
          f"median {med * 1e3:.3f} ms, best {best * 1e3:.3f} ms")
    med_v, _ = timed(lambda: solve_request(CycleRequest.model_validate(demo)))
    print(f"  with request parsing and unit conversion: median {med_v * 1e3:.3f} ms")


if __name__ == "__main__":
    main()
