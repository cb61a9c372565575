"""The whole cycle: squeeze, wash to purity and blow in order, and the best cycle under specs.

Checks against brute force (a grid search over the end volume and each free stage's duration,
zoomed in twice, computing the moisture and removal straight from the stage models) and
against the stage models worked by hand. The constrained optimum must equal the brute-force
one to 1e-4 relative in throughput (issue 15).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from server.solver import CycleSettings, Filtration, Press, PressSystem, solve_cycle
from server.solver.blowing import Blow
from server.solver.cycle import CycleFamily
from server.solver.errors import SolverInputError
from server.solver.expression import Squeeze
from server.solver.feeds import ConstantPressure
from server.solver.stages import Specs
from server.solver.washquality import WashModel

AREA, L = 60.0, 0.04
EPS, M = 0.5, 1.4  # cake porosity, wet-to-dry ratio (moisture 1 - 1/1.4 = 28.6 %)
E0 = EPS / (1 - EPS)
LIQ_PER_VOID = (M - 1.0) / E0


def filtration():
    return Filtration(solids_per_filtrate=200.0, cake_volume_ratio=0.15, wet_to_dry_ratio=M, viscosity=1e-3,
                      resistance_ref=2e11, reference_pressure=6e5, compressibility=0.0, medium_resistance=5e10,
                      porosity=EPS)


def system(**cycle):
    cycle.setdefault("downtime", 1200.0)
    return PressSystem(filtration(), Press(AREA, L), ConstantPressure(6e5), CycleSettings(**cycle))


def moisture_of(e):
    X = e * LIQ_PER_VOID
    return X / (1 + X)


def omega_of(V):
    return (1 - EPS) * 0.15 * V / AREA


SQ = dict(pressure=1.5e6, consolidation_coefficient=2e-7, final_void_ratio=0.55)


def brute(objective, lo, hi, n=(401, 401), rounds=3):
    """Maximise objective(X, Y) (vectorised, -inf where infeasible) over a box by grid search,
    zooming in around the best point."""
    (x0, y0), (x1, y1) = lo, hi
    best = None
    for _ in range(rounds):
        X, Y = np.meshgrid(np.linspace(x0, x1, n[0]), np.linspace(y0, y1, n[1]), indexing="ij")
        Q = objective(X, Y)
        k = np.unravel_index(np.argmax(Q), Q.shape)
        best = (float(Q[k]), float(X[k]), float(Y[k]))
        dx, dy = 3 * (x1 - x0) / (n[0] - 1), 3 * (y1 - y0) / (n[1] - 1)
        x0, x1 = max(lo[0], best[1] - dx), best[1] + dx
        y0, y1 = max(lo[1], best[2] - dy), best[2] + dy
    return best


def test_free_squeeze_to_a_moisture_spec_equals_brute_force():
    spec = 0.25
    sol = solve_cycle(system(squeeze=Squeeze(**SQ), specs=Specs(max_moisture=spec)))
    fam = CycleFamily(filtration(), AREA, ConstantPressure(6e5), CycleSettings(1200.0), 1.0)
    sq = Squeeze(**SQ)

    def Q(V, t):  # dry solids throughput [kg/s] of filtration to V then a squeeze of t
        U = sq.ratio(t, omega_of(V))
        e = E0 - U * (E0 - 0.55)
        ok = (moisture_of(e) <= spec) & (0.15 * V <= AREA * L / 2 * (1 + 1e-12))
        return np.where(ok, 200.0 * V / (fam.curve.time(V) + t + 1200.0), -np.inf)

    V_full = AREA * L / 2 / 0.15
    q, V, t = brute(Q, (1e-3, 0.0), (V_full, 4000.0))
    assert sol.best.solids_throughput == pytest.approx(q, rel=1e-4)
    assert sol.best.moisture == pytest.approx(spec, rel=1e-9)
    assert sol.specs["max_moisture"]["binds"] and sol.specs["max_moisture"]["met"]
    assert sol.best.squeeze_time == pytest.approx(t, rel=2e-2)


def test_free_wash_to_a_removal_spec_equals_brute_force():
    model = WashModel("dispersion", dispersion_number=12.0)
    sol = solve_cycle(system(wash_model=model, specs=Specs(min_solute_removal=0.95)))
    fam = CycleFamily(filtration(), AREA, ConstantPressure(6e5), CycleSettings(1200.0), 1.0)
    Ws = np.linspace(0.0, 4.0, 1201)
    F = model.removal(Ws)  # the removal straight from the model, on a grid

    def Q(V, W):
        removal = np.interp(W, Ws, F)
        pores = EPS * 0.15 * V
        t_w = 4.0 * W * pores / fam.curve.rate(V)  # through washing at the filtration pressure
        ok = (removal >= 0.95) & (0.15 * V <= AREA * L / 2 * (1 + 1e-12))
        return np.where(ok, 200.0 * V / (fam.curve.time(V) + t_w + 1200.0), -np.inf)

    V_full = AREA * L / 2 / 0.15
    q, V, W = brute(Q, (1e-3, 0.0), (V_full, 4.0))
    assert sol.best.solids_throughput == pytest.approx(q, rel=1e-4)
    assert sol.best.solute_removal == pytest.approx(0.95, abs=1e-9)
    assert sol.specs["min_solute_removal"]["binds"]


def test_squeeze_and_blow_both_free_equal_brute_force():
    spec = 0.18
    blow = Blow((0.0, 30.0, 90.0, 240.0, 600.0), (0.24, 0.21, 0.185, 0.165, 0.15), 0.01)
    sol = solve_cycle(system(squeeze=Squeeze(**SQ), blow=blow, specs=Specs(max_moisture=spec)))
    fam = CycleFamily(filtration(), AREA, ConstantPressure(6e5), CycleSettings(1200.0), 1.0)
    sq = Squeeze(**SQ)
    V = sol.best.filtrate_volume  # at the best end volume, the split of squeeze and blow
    om = omega_of(V)

    least = _least_time(sq, blow, spec, om)
    assert sol.best.squeeze_time + sol.best.blow_time == pytest.approx(least, rel=1e-4)
    assert sol.best.moisture <= spec * (1 + 1e-9)
    # and the end volume: brute force over V with the stage split found at each V
    Vs = np.linspace(0.7 * V, min(1.3 * V, AREA * L / 2 / 0.15), 61)
    Qs = np.array([200.0 * v / (fam.curve.time(v) + 1200.0 + _least_time(sq, blow, spec, omega_of(v))) for v in Vs[::6]])
    assert sol.best.solids_throughput >= Qs.max() * (1 - 1e-4)


def blown(blow, t_b, thickness, entering):
    """The blow law written out: the lab curve's reduced liquid content (X - X_end)/(X_0 - X_end),
    X = m/(1-m), at the lab time t (L_lab/L)^2, applied from the cake's own X (constructed here)."""
    X = lambda m: m / (1 - m)  # noqa: E731
    m_lab = np.interp(t_b * (blow.lab_thickness / thickness) ** 2, blow.times, blow.moistures)
    X0, Xe = X(blow.moistures[0]), X(blow.moistures[-1])
    Xp = Xe + (X(entering) - Xe) * (X(m_lab) - Xe) / (X0 - Xe)
    return Xp / (1 + Xp)


def _least_time(sq, blow, spec, om):
    """The least squeeze + blow time that meets the spec, by brute force: a grid of squeeze
    times (zoomed in around the best, four times), each with the shortest blow found by
    bisection on the blow law written out above."""
    def blow_needed(t_s):
        U = sq.ratio(t_s, om)
        e = E0 - U * (E0 - 0.55)
        lo, hi = np.zeros_like(t_s), np.full_like(t_s, 1e6)
        ok_hi = blown(blow, hi, om * (1 + e), moisture_of(e)) <= spec
        for _ in range(80):
            mid = 0.5 * (lo + hi)
            ok = blown(blow, mid, om * (1 + e), moisture_of(e)) <= spec
            lo, hi = np.where(ok, lo, mid), np.where(ok, mid, hi)
        dry = moisture_of(e) <= spec
        return np.where(dry, 0.0, np.where(ok_hi, hi, np.inf))

    lo, hi = 0.0, 5000.0
    for _ in range(5):
        t_s = np.linspace(lo, hi, 2001)
        total = t_s + blow_needed(t_s)
        k = int(np.argmin(total))
        step = (hi - lo) / 2000
        lo, hi = max(0.0, t_s[k] - 3 * step), t_s[k] + 3 * step
    return float(total[k])


def test_loose_specs_bind_nothing_and_the_optimum_is_todays():
    today = solve_cycle(system(wash_ratio=0.5))
    loose = solve_cycle(system(wash_ratio=0.5, squeeze=Squeeze(**SQ), wash_model=WashModel("efficiency", efficiency=0.6),
                               specs=Specs(max_moisture=0.4, min_solute_removal=0.01)))
    assert loose.best.squeeze_time == 0.0
    assert loose.best.filtrate_volume == pytest.approx(today.best.filtrate_volume, rel=1e-6)
    assert loose.best.solids_throughput == pytest.approx(today.best.solids_throughput, rel=1e-9)
    assert not loose.specs["max_moisture"]["binds"] and not loose.specs["min_solute_removal"]["binds"]


def test_a_spec_no_cycle_meets_is_said_and_the_closest_shown():
    sol = solve_cycle(system(squeeze=Squeeze(**SQ), specs=Specs(max_moisture=0.10)))
    assert sol.best.meets_specs is False
    assert not sol.specs["max_moisture"]["met"]
    assert sol.best.consolidation == pytest.approx(0.999)
    assert sol.best.moisture == pytest.approx(moisture_of(E0 - 0.999 * (E0 - 0.55)), rel=1e-9)
    assert any("No cycle meets the moisture specification" in w for w in sol.warnings)


def test_wash_then_squeeze_and_squeeze_then_wash():
    """The same wash of 2 pore volumes: before the squeeze it fills the filtration cake's pores
    at the end-of-filtration rate; after, the squeezed cake's fewer pores, its resistance raised
    by Kozeny–Carman (alpha ∝ (1+e)^2/e^3; Coulson & Richardson Vol. 2, 5th ed., 4.2)."""
    sq = Squeeze(**SQ, time=600.0)
    first = solve_cycle(system(wash_ratio=2.0, wash_basis="cake_pores", squeeze=sq, order=("wash", "squeeze")))
    later = solve_cycle(system(wash_ratio=2.0, wash_basis="cake_pores", squeeze=sq, order=("squeeze", "wash")))
    V = 20.0
    fam_w = CycleFamily(filtration(), AREA, ConstantPressure(6e5), first.best and system(
        wash_ratio=2.0, wash_basis="cake_pores", squeeze=sq, order=("wash", "squeeze")).cycle, 1.0)
    fam_s = CycleFamily(filtration(), AREA, ConstantPressure(6e5), system(
        wash_ratio=2.0, wash_basis="cake_pores", squeeze=sq, order=("squeeze", "wash")).cycle, 1.0)
    q = float(fam_w.curve.rate(V))
    t_before = 4.0 * 2.0 * EPS * 0.15 * V / q
    U = float(sq.ratio(600.0, omega_of(V)))
    e = E0 - U * (E0 - 0.55)
    cake = 6e5 * AREA / (1e-3 * q) - 5e10
    kozeny = ((1 + e) ** 2 / e ** 3) / ((1 + E0) ** 2 / E0 ** 3)
    t_after = 4.0 * 2.0 * AREA * omega_of(V) * e / q * (cake * kozeny + 5e10) / (cake + 5e10)
    times_w = fam_w.stage_times(np.array([V]))
    times_s = fam_s.stage_times(np.array([V]))
    assert float(times_w["wash"][0]) == pytest.approx(t_before, rel=1e-12)
    assert float(times_s["wash"][0]) == pytest.approx(t_after, rel=1e-12)
    assert list(times_w) == ["fill", "filtration", "wash", "squeeze", "downtime"]
    assert list(times_s) == ["fill", "filtration", "squeeze", "wash", "downtime"]
    assert first.best.cycle_time != pytest.approx(later.best.cycle_time, rel=1e-3)
    # the squeeze itself does not care which came first
    assert float(times_w["squeeze"][0]) == float(times_s["squeeze"][0]) == 600.0


def test_the_blow_must_come_last_and_a_free_stage_needs_a_spec():
    with pytest.raises(SolverInputError, match="blow must be the last"):
        solve_cycle(system(blow=Blow((0.0, 60.0), (0.3, 0.2), 0.01, time=60.0), squeeze=Squeeze(**SQ, time=60.0),
                           order=("blow", "squeeze")))
    with pytest.raises(SolverInputError) as exc:
        solve_cycle(system(squeeze=Squeeze(**SQ)))
    assert exc.value.parameter == "cycle.squeeze.time"


def test_squeeze_results_follow_the_void_ratio():
    sq = Squeeze(**SQ, consolidation=0.6)
    sol = solve_cycle(system(squeeze=sq))
    b = sol.best
    om = omega_of(b.filtrate_volume)
    e = E0 - 0.6 * (E0 - 0.55)
    assert b.consolidation == pytest.approx(0.6)
    assert b.squeeze_time == pytest.approx(float(sq.time_for(0.6, om)), rel=1e-12)
    assert b.squeeze_filtrate_volume == pytest.approx(AREA * om * (E0 - e), rel=1e-12)
    assert b.cake_thickness_final == pytest.approx(om * (1 + e), rel=1e-12)
    assert b.moisture == pytest.approx(moisture_of(e), rel=1e-12)
    assert b.wet_cake_mass == pytest.approx(b.dry_cake_mass / (1 - moisture_of(e)), rel=1e-12)


def test_a_blow_starts_from_the_cakes_own_moisture():
    """No drying for nothing: a cake wetter than the lab cake's start is not at the curve's first
    moisture at t = 0 (found by a plant engineer trying the page)."""
    blow = Blow((0.0, 60.0, 120.0, 240.0, 480.0), (0.34, 0.30, 0.27, 0.24, 0.22), 0.01)
    sol = solve_cycle(system(blow=blow, specs=Specs(max_moisture=0.26)))
    b = sol.best
    assert b.blow_time > 0.0
    assert b.moisture == pytest.approx(0.26, rel=1e-9)
    om = omega_of(b.filtrate_volume)
    assert float(blown(blow, b.blow_time, om * (1 + E0), moisture_of(E0))) == pytest.approx(0.26, rel=1e-9)
    assert float(blow.moisture_after(0.0, 0.02, moisture_of(E0))) == pytest.approx(moisture_of(E0), rel=1e-12)


def test_pump_filling_counts_the_chambers_and_manifold():
    cycle = CycleSettings(1200.0, fill_flow=0.01, manifold_volume=0.2)
    sys = PressSystem(filtration(), Press(AREA, L), ConstantPressure(6e5), cycle)
    sol = solve_cycle(sys)
    assert sol.best.fill_time == pytest.approx((AREA * L / 2 + 0.2) / 0.01)
    assert sol.best.cycle_time == pytest.approx(sol.best.fill_time + sol.best.filtration_time + 1200.0)


def test_a_free_squeeze_before_a_blow_to_its_target_takes_the_shortest_total():
    """A reviewer's case: the blow runs to its own target moisture, which takes less time the
    more the cake is squeezed; the least squeeze is then not the shortest cycle. Brute force
    over squeeze times, the blow's time found by bisection on the blow law written out here."""
    blow = Blow((0.0, 60.0, 120.0, 300.0, 600.0), (0.34, 0.30, 0.29, 0.25, 0.24), 0.02, target_moisture=0.27)
    spec = 0.27
    sol = solve_cycle(system(squeeze=Squeeze(**SQ), blow=blow, specs=Specs(max_moisture=spec)))
    b = sol.best
    om = omega_of(b.filtrate_volume)
    sq = Squeeze(**SQ)

    def blow_to_target(t_s):
        U = sq.ratio(t_s, om)
        e = E0 - U * (E0 - 0.55)
        lo, hi = np.zeros_like(t_s), np.full_like(t_s, 1e6)
        for _ in range(80):
            mid = 0.5 * (lo + hi)
            ok = blown(blow, mid, om * (1 + e), moisture_of(e)) <= 0.27
            lo, hi = np.where(ok, lo, mid), np.where(ok, mid, hi)
        return np.where(moisture_of(e) <= 0.27, 0.0, hi)

    lo_t, hi_t = 0.0, 5000.0
    for _ in range(5):
        t_s = np.linspace(lo_t, hi_t, 2001)
        total = t_s + blow_to_target(t_s)
        k = int(np.argmin(total))
        step = (hi_t - lo_t) / 2000
        lo_t, hi_t = max(0.0, t_s[k] - 3 * step), t_s[k] + 3 * step
    assert b.squeeze_time + b.blow_time == pytest.approx(float(total[k]), rel=1e-4)
    assert b.squeeze_time > 0.0 and b.moisture <= spec * (1 + 1e-9)


# ---- the best cycle stays the global optimum with stages (property test) ---------------------

@settings(max_examples=25, deadline=None)
@given(Ce=st.floats(1e-9, 1e-5), spec=st.floats(0.2, 0.3), downtime=st.floats(300.0, 5000.0),
       wash=st.floats(0.0, 3.0), order=st.sampled_from([("wash", "squeeze", "blow"), ("squeeze", "wash", "blow")]),
       blow=st.booleans(), L=st.floats(0.015, 0.06))
def test_the_best_cycle_with_stages_beats_a_dense_grid(Ce, spec, downtime, wash, order, blow, L):
    """No end volume within the chambers, on a grid of 20,001, gives a better cycle (throughput,
    specifications first) than the best cycle found, each volume with its own free stage times."""
    kw = dict(downtime=downtime, wash_ratio=wash, wash_basis="cake_pores", order=order,
              squeeze=Squeeze(1.5e6, Ce, 0.55), specs=Specs(max_moisture=spec))
    if blow:
        kw["blow"] = Blow((0.0, 60.0, 240.0, 900.0), (0.30, 0.26, 0.23, 0.21), 0.01)
    sys = PressSystem(filtration(), Press(AREA, L), ConstantPressure(6e5), CycleSettings(**kw))
    sol = solve_cycle(sys)
    fam = CycleFamily(filtration(), AREA, ConstantPressure(6e5), sys.cycle, sol.chambers_full_volume)
    V = np.linspace(sol.chambers_full_volume * 1e-4, sol.chambers_full_volume, 20001)
    grid_best = float(np.max(fam.objective(V)))
    found = float(fam.objective(np.array([sol.best.filtrate_volume]))[0])
    assert found >= grid_best * (1 - 1e-9)
    assert sol.best.filtrate_volume <= sol.chambers_full_volume * (1 + 1e-12)
