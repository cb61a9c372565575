"""A tabulated feed's optimum worked out on its table is the one the global scan finds.

A pump or a flow-then-pressure feed on the cake basis is a table of operating points; with
the wash at the pressure filtration ended at (no wash pressure given: the pressure ratio is
1), every local peak of the throughput is found per table segment in closed form
(TabulatedCurve.peak_volumes) instead of by ``peak_scan``. The oracle here is the scan the
cycle ran before: a 4,001-point log grid with every table node, each local peak refined by a
bounded Brent search to 1e-12 of its bracket in V (so to about sqrt(machine epsilon) in V
for a flat peak).
"""

import numpy as np
import pytest

from server.solver import (
    ConstantRate,
    CycleSettings,
    Filtration,
    Press,
    PressSystem,
    PumpCurve,
    compare_thicknesses,
    cycle_family_for,
    solve_cycle,
)
from server.solver.cycle import ThroughputScan, peak_scan
from server.solver.expression import Squeeze

AREA = 68.0


def filtration(s=0.35, R_m=1.5e11, basis="cake"):
    return Filtration(150.0, 0.06, 2.6, 0.6e-3, 3e11, 5e5, s, R_m, porosity=0.5, pressure_basis=basis)


def pump(top=8e5, q_max=80.0 / 3600, n=2000):
    q = np.linspace(0.0, q_max, n)
    return PumpCurve(tuple(zip(q, top * (1.0 - (q / q_max) ** 2) + 0.5e5)))


def scanned(family):
    """The scan the family ran before the on-table optimum, on the same curve and objective."""
    curve = family.curve
    return peak_scan(family.objective, family.V_needed, getattr(curve, "knots", ()), getattr(curve, "held_from", 0.0))


FEEDS = {  # name: (feed, pressure basis)
    "pump, cake basis": (lambda: pump(), "cake"),
    "pump, total basis": (lambda: pump(), "total"),
    "pump, few points": (lambda: PumpCurve(((0.0, 8.5e5), (20 / 3600, 8e5), (40 / 3600, 6.8e5), (60 / 3600, 4.6e5),
                                            (80 / 3600, 1.5e5)), max_pressure=7e5), "total"),
    "flow then pressure, cake basis": (lambda: ConstantRate(30.0 / 3600, 7e5), "cake"),
}


@pytest.mark.parametrize("feed", sorted(FEEDS))
@pytest.mark.parametrize("downtime, wash, washing, fill", [
    (2400.0, 0.0, "through", 0.0), (600.0, 1.0, "through", 0.0), (7200.0, 2.5, "simple", 300.0),
    (1800.0, 0.5, "through", 120.0),
])
def test_a_tables_optimum_worked_out_on_it_is_the_scanned_one(feed, downtime, wash, washing, fill):
    make, basis = FEEDS[feed]
    system = PressSystem(filtration(basis=basis), Press(AREA, 0.025), make(),
                         CycleSettings(downtime, wash, washing=washing, fill_time=fill))
    family = cycle_family_for(system, [0.015, 0.04, 0.06])
    assert isinstance(family.scan, ThroughputScan) and family.scan.V.size < 50  # the peaks only: no scan
    old = scanned(family)
    Q = family.throughput
    # the same peak: the scan places a flat maximum to about sqrt(machine epsilon) in V (its
    # resolution there); the throughput agrees to round-off, never lower
    assert family.V_star == pytest.approx(old.V_best, rel=1e-6)
    assert Q(family.V_star) == pytest.approx(Q(old.V_best), rel=1e-12)
    assert Q(family.V_star) >= Q(old.V_best) * (1 - 1e-12)
    # the best cycle within any chambers: the same as the scan's look-up
    V_full = np.geomspace(family.V_star * 1e-3, family.V_star * 10, 200)
    assert np.allclose(Q(np.asarray(family.best_volume(V_full))), Q(np.asarray(old.best_within(V_full, Q))),
                       rtol=1e-12, atol=0.0)


def test_a_pump_cycle_and_its_comparison_keep_their_numbers():
    system = PressSystem(filtration(), Press(AREA, 0.025), pump(), CycleSettings(2400.0, 1.0))
    thicknesses = [0.015, 0.02, 0.025, 0.032, 0.04, 0.05]
    family = cycle_family_for(system, thicknesses)
    new = solve_cycle(system, family=family)
    rows = compare_thicknesses(system, thicknesses, family=family)
    family.scan = scanned(family)  # the old path, on the same family
    family.V_star = family.scan.V_best
    old = solve_cycle(system, family=family)
    old_rows = compare_thicknesses(system, thicknesses, family=family)
    for a, b in [(new, old), *[(x[1], y[1]) for x, y in zip(rows, old_rows)]]:
        for name in ("best", "chambers_full", "unconstrained_optimum"):
            assert getattr(a, name).filtrate_throughput == pytest.approx(getattr(b, name).filtrate_throughput,
                                                                         rel=1e-12)
            assert getattr(a, name).limited_by == getattr(b, name).limited_by
        assert a.best.filtrate_volume == pytest.approx(b.best.filtrate_volume, rel=1e-6)


@pytest.mark.parametrize("cycle", [
    CycleSettings(2400.0, 1.0, wash_pressure=4e5),  # the pressure ratio varies along the curve
    CycleSettings(2400.0, 0.0, squeeze=Squeeze(pressure=1.5e6, consolidation_coefficient=2e-7,
                                               final_void_ratio=0.55, time=600.0)),
])
def test_a_table_is_still_scanned_where_the_wash_is_not_at_the_end_pressure_or_stages_follow(cycle):
    system = PressSystem(filtration(), Press(AREA, 0.025), pump(), cycle)
    family = cycle_family_for(system)
    assert family.scan.V.size > 4000


@pytest.mark.parametrize("feed", ["pump, cake basis", "pump, few points", "flow then pressure, cake basis",
                                  "held pressure, cake basis"])
def test_a_tables_flow_and_pressure_ends_are_the_grid_searchs(feed):
    # The end of filtration at a flow or a pressure is now solved on the table's segments (1/Q
    # and the pressure are linear in V there); the old search of 4,097 volumes, narrowed four
    # times over 1,025 points, lands within about 4e-16 of the span above the same crossing.
    from server.solver import ConstantPressure, EndCriterion

    make, basis = FEEDS.get(feed, (lambda: ConstantPressure(6e5), "cake"))
    system = PressSystem(filtration(basis=basis), Press(AREA, 0.025), make(), CycleSettings(1800.0, 0.5))
    family = cycle_family_for(system, [0.06])
    curve = family.curve
    span = family.V_needed
    q0 = float(curve.rate(0.0))
    ends = [EndCriterion("flow", flow=q0 * x) for x in (0.9, 0.5, 0.2, 0.05, 0.01, 1e-4)]
    p_start, p_top = float(curve.pressure_at(0.0)), float(system.feed.pressure_cap)
    if p_top > p_start:
        ends += [EndCriterion("pressure", pressure=p_start + x * (p_top - p_start)) for x in (0.1, 0.5, 0.9, 1.0)]
    crossed = 0
    for end in ends:
        V, reason = family._flow_end(end, span) if end.criterion == "flow" else family._pressure_end(end, span)
        if end.criterion == "flow":
            g = lambda x, t=end.flow: t - curve.rate(x)  # noqa: E731
        else:
            g = lambda x, p=end.pressure: curve.pressure_at(x) - p  # noqa: E731
        V_grid, reason_grid = family._first_crossing(g, span, end.criterion)
        assert reason == reason_grid, end
        assert V == pytest.approx(V_grid, rel=0, abs=1e-14 * span), end
        assert V <= V_grid * (1 + 1e-15)  # the grid's point lies at or just past the crossing
        crossed += reason == end.criterion
    assert crossed >= 3
