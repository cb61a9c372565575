"""Benchmarks: print figures, never assert on time (the machines are shared and noisy).

    make bench
"""

import json
import statistics
import time
from pathlib import Path

import numpy as np

from server.plan import make_plan
from server.schemas.cycle import CycleRequest
from server.schemas.plan import PlanRequest
from server.solve import solve_results
from server.solver import (
    ConstantPressure,
    CycleSettings,
    Filtration,
    Press,
    PressSystem,
    PressureSteps,
    PumpCurve,
    compare_thicknesses,
    cycle_family_for,
    solve_cycle,
)
from server.solver.labfit import choose_region

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
    med, best = timed(lambda: solve_results(request))
    n = len(request.compare_thicknesses)
    basis = "closed form" if request.solves_in_closed_form else "cake pressure basis: tabulated"
    print(f"pigment demo, constant pressure + {n}-thickness comparison ({basis}): "
          f"median {med * 1e3:.3f} ms, best {best * 1e3:.3f} ms")
    med_v, _ = timed(lambda: solve_results(CycleRequest.model_validate(demo)))
    print(f"  with request parsing and unit conversion: median {med_v * 1e3:.3f} ms")

    # Issue 3 target: a 2,000-point pump curve with a 6-thickness comparison under 20 ms (one core).
    system, thicknesses = pump_system()
    cp_system = PressSystem(system.filtration, system.press, ConstantPressure(system.feed.pressure_cap), system.cycle)

    def solve_both(c):  # as the API does: one curve for the system and its comparison
        family = cycle_family_for(c, thicknesses)
        solve_cycle(c, family=family)
        compare_thicknesses(c, thicknesses, family=family)

    def pump_solve():
        solve_both(system)

    def cp_solve():
        solve_both(cp_system)

    med_p, best_p = timed(pump_solve, 50)
    med_c, best_c = timed(cp_solve, 200)
    print(f"pump curve (2,000 points) cycle + 6-thickness comparison: median {med_p * 1e3:.2f} ms, "
          f"best {best_p * 1e3:.2f} ms (issue 12 target <= 1.5 ms)")
    fifty = list(np.linspace(0.012, 0.06, 50))
    med_50, _ = timed(lambda: (solve_cycle(system, family=(f := cycle_family_for(system, fifty))),
                               compare_thicknesses(system, fifty, family=f)), 30)
    print(f"  the same with 50 thicknesses: median {med_50 * 1e3:.2f} ms (issue 12 target <= 6 ms)")
    print(f"  same at constant pressure (closed form): median {med_c * 1e3:.3f} ms; "
          f"ratio pump / closed form = {med_p / med_c:.1f}")

    # Issue 11: the global optimum of a pressure schedule (every peak found, then refined)
    steps = PressureSteps(((0.3e5, 3600.0), (3e5, 1800.0), (12e5, 36000.0)))
    step_system = PressSystem(system.filtration, system.press, steps, system.cycle)
    med_s, _ = timed(lambda: solve_both(step_system), 50)
    print(f"pressure steps (3 steps) cycle + 6-thickness comparison, global scan: median {med_s * 1e3:.2f} ms; "
          f"ratio to closed form = {med_s / med_c:.1f}")

    # Issue 12: a 200 x 200 throughput map against the numpy closed-form floor on the same grid
    from server.solver.sweeps import thickness_grid, throughput_map

    cp = PressSystem(system.filtration, system.press, ConstantPressure(6e5), system.cycle)
    family = cycle_family_for(cp)
    sol = solve_cycle(cp, family=family)
    L = thickness_grid(cp.press.chamber_thickness, sol.matched_chamber_thickness, 198)
    med_map, _ = timed(lambda: throughput_map(family, cp, sol, L, 200), 20)
    t = np.linspace(1.0, 2.0 * sol.chambers_full.filtration_time, 200)
    K, B, td = family.curve.K_p, family.curve.B, cp.cycle.downtime
    a = 4.0 * cp.cycle.wash_ratio  # through-washing at a quarter of the final rate

    def floor():
        V = (-B + np.sqrt(B * B + 2.0 * K * t)) / K
        Vm = np.minimum(V[None, :], (cp.press.filter_area * L / (2 * cp.filtration.cake_volume_ratio))[:, None])
        tf = 0.5 * K * Vm * Vm + B * Vm
        return (Vm / (tf + a * Vm * (K * Vm + B) + td)).tolist()

    med_floor, _ = timed(floor, 20)
    print(f"200 x 200 throughput map: {med_map * 1e3:.2f} ms; numpy closed-form floor {med_floor * 1e3:.2f} ms; "
          f"ratio {med_map / med_floor:.1f} (target <= 3)")

    # Issue 11: the lab evaluation's automatic region is linear in the number of readings
    rng = np.random.default_rng(7)
    times = {}
    for n in (2_000, 20_000):
        V = np.linspace(1e-5, 5e-3, n)
        t = (3e6 * V + 1e9 * V * V) * (1 + rng.normal(0, 1e-4, n))
        x, y = V, t / V
        times[n], _ = timed(lambda x=x, y=y: choose_region(x, y), 20)
    print(f"lab region search: 2,000 readings {times[2_000] * 1e3:.2f} ms, 20,000 readings "
          f"{times[20_000] * 1e3:.2f} ms; ratio {times[20_000] / times[2_000]:.1f} for 10x the readings")
    plan_monte_carlo(demo)


def plan_monte_carlo(demo: dict) -> None:
    """Issue 16: 10,000 Monte Carlo samples of a constant-pressure scenario in well under a second."""
    inputs = dict(demo, cake=dict(demo["cake"], resistance_stderr="3e10 m/kg"),
                  medium_resistance_stderr="1e10 1/m", resistance_medium_correlation=-0.9)
    body = {"inputs": inputs, "target": {"dry_solids_per_day": "100 t/day"}, "samples": 10_000}
    lab_only = PlanRequest.model_validate(body)
    with_range = PlanRequest.model_validate({**body, "ranges": {"slurry.solids_mass_fraction": ["10 %", "14 %"]}})
    none = PlanRequest.model_validate({**body, "samples": 0})
    med_none, _ = timed(lambda: make_plan(none), 10)
    med_lab, _ = timed(lambda: make_plan(lab_only), 10)
    med_range, _ = timed(lambda: make_plan(with_range), 3)
    print(f"plan, 10,000 Monte Carlo samples (constant pressure): lab-fit errors only {med_lab * 1e3:.1f} ms; "
          f"with a slurry range (each sample's balance rebuilt) {med_range * 1e3:.0f} ms; "
          f"the plan without samples {med_none * 1e3:.1f} ms")


def pump_system():
    """An invented centrifugal pump curve of 2,000 points on the pigment demo's cake."""
    q = np.linspace(0.0, 80.0 / 3600, 2000)
    p = 8e5 * (1.0 - (q / q[-1]) ** 2) + 0.5e5
    f = Filtration(150.0, 0.06, 2.6, 0.6e-3, 3e11, 5e5, 0.35, 1.5e11)
    system = PressSystem(f, Press(68.0, 0.025), PumpCurve(tuple(zip(q, p))), CycleSettings(2400.0, 1.0))
    return system, [0.015, 0.02, 0.025, 0.032, 0.04, 0.05]


if __name__ == "__main__":
    main()
