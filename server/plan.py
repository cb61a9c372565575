"""From a plan request to the plan: presses, chambers, shifts, seasons, cloth, energy, and
how sure the answer is (a seeded Monte Carlo and its sensitivity).

The chain, each step computing what the next needs: the scenario's system (solve.build_system)
-> its best cycle -> the requirement while cycling -> presses and utilisation -> whole cycles
in a shift -> chambers -> seasons -> cloth -> energy -> samples -> sensitivity -> chart data.
Every number comes from the solver (solver/planning.py); this module picks inputs and
arranges the answer. Throughputs are on the target's basis: dry solids [kg/s], slurry or
filtrate [m^3/s].
"""

import copy
import math
from contextlib import contextmanager
from dataclasses import dataclass, replace

import numpy as np
from pydantic import ValidationError

from . import solver
from .errors import InputError, clean
from .schemas.cycle import CycleRequest
from .schemas.plan import RANGE_KINDS, PlanRequest
from .solve import CAUTIONS, MAX_PRESSES, BuiltSystem, api_path, build_system, first_non_finite
from .solver import planning
from .units import KINDS, UnitError, parse_quantity

#: Most samples of a feed without a closed-form optimum (each solved on its own).
MAX_SLOW_SAMPLES = 400
#: The z of P10 and P90 of a normal distribution (the tornado's low and high).
Z90 = 1.2815515655446004
#: The most chambers a press of the scenario's plate size may have.
MAX_CHAMBERS = 1000
#: More presses of one kind than a plant plans for: a plan needing more is flagged (a likely
#: slip in the target or its unit), not refused.
PLAUSIBLE_PRESSES = 20
#: Inputs whose samples reach the closed form without rebuilding the system.
DIRECT = {"cake.resistance", "medium_resistance", "cake.compressibility", "feed.pressure", "cycle.downtime"}

LABELS = {
    "slurry.solids_mass_fraction": "slurry solids", "slurry.temperature": "slurry temperature",
    "slurry.viscosity": "filtrate viscosity", "cake.resistance": "cake resistance",
    "cake.compressibility": "cake compressibility", "cake.moisture": "cake moisture",
    "cake.wet_to_dry_ratio": "wet-to-dry ratio", "cake.porosity": "cake porosity",
    "medium_resistance": "cloth resistance", "feed.pressure": "feed pressure", "cycle.downtime": "downtime",
    "cycle.wash_ratio": "wash ratio",
}

PLAN_UNITS = {
    "required": "kg/s (dry_solids) or m^3/s (slurry, filtrate)", "throughput": "as required",
    "best_throughput": "as required", "utilisation": "1", "shift_length": "s", "cycle_time": "s",
    "filtrate_volume": "m^3", "cost": "1", "temperature": "K", "viscosity": "Pa*s",
    "resistance_growth_per_cycle": "1/m", "first_increase": "s", "per_cycle": "J", "per_dry_solids": "J/kg",
    "average_throughput": "as required", "probability_target_met": "1", "variance_share": "1",
}


@dataclass(frozen=True)
class Basis:
    """What the target counts and how to read it off a cycle."""

    name: str  # dry_solids, slurry or filtrate
    per_calendar_day: float  # the target as a rate [kg/s or m^3/s]

    def of(self, solids_throughput, filtrate_throughput, solids_per_slurry):
        if self.name == "filtrate":
            return filtrate_throughput
        return solids_throughput if self.name == "dry_solids" else solids_throughput / solids_per_slurry


def _slurry_solids(derived: dict) -> float:
    return planning.solids_per_slurry(derived["solids_mass_fraction"], derived["solids_density"],
                                      derived["liquid_density"])


def _build(inputs: CycleRequest) -> BuiltSystem:
    try:
        return build_system(inputs)
    except InputError as exc:
        raise exc.within(("body", "inputs")) from None



@contextmanager
def plan_errors():
    """Solver errors in the block become a 422: a plan's own fields (target, shift) where they
    are, a scenario's under "inputs"."""
    try:
        yield
    except solver.SolverInputError as exc:
        def loc(p):
            head = p.split(".")[0]
            if head in ("target", "shift", "ranges"):
                return ("body", *p.split("."))
            return ("body", "inputs", *api_path(p)[1:])
        raise InputError([(loc(p), exc.message) for p in exc.parameters]) from None


def _with(model, path: str, value):
    """A copy of the inputs with one field (dotted path) changed, not validated again."""
    head, _, rest = path.partition(".")
    if not rest:
        return model.model_copy(update={head: value})
    return model.model_copy(update={head: _with(getattr(model, head), rest, value)})


def _basis(target) -> Basis:
    for name, field in (("dry_solids", "dry_solids_per_day"), ("slurry", "slurry_per_day"),
                        ("filtrate", "filtrate_per_day")):
        if getattr(target, field) is not None:
            return Basis(name, getattr(target, field))
    raise AssertionError("the schema asks for one target")


def _ranges(req: PlanRequest) -> dict:
    """Each range as (low, high, shape) in SI, each end checked as the inputs would check it."""
    out = {}
    raw = req.inputs.raw or req.inputs.model_dump()
    for path, given in req.ranges.items():
        loc = ("body", "ranges", path)
        if path not in RANGE_KINDS:
            raise InputError([(loc, f"no range can be given for {path!r}; allowed: {', '.join(RANGE_KINDS)}")])
        shape = "uniform"
        if len(given) == 3 and given[2] in ("uniform", "triangular"):
            shape, given = given[2], given[:2]
        if len(given) != 2:
            raise InputError([(loc, 'give [low, high] or [low, high, "triangular"] (or "uniform")')])
        ends = []
        for i, value in enumerate(given):
            try:
                si = parse_quantity(value, RANGE_KINDS[path])
            except UnitError as exc:
                raise InputError([((*loc, i), str(exc))]) from None
            _check_in_inputs(raw, path, value, (*loc, i))
            ends.append(si)
        if not ends[0] <= ends[1]:
            raise InputError([(loc, f"the low end must not be above the high end; got {given[0]} and {given[1]}")])
        out[path] = (ends[0], ends[1], shape)
    return out


def _check_in_inputs(raw: dict, path: str, value, loc: tuple) -> None:
    """The inputs with ``value`` at ``path`` must pass as inputs would (range, alternatives)."""
    data = copy.deepcopy(raw)
    node = data
    *parents, last = path.split(".")
    for key in parents:
        node = node.setdefault(key, {}) if isinstance(node, dict) else {}
    node[last] = value
    try:
        CycleRequest.model_validate(data)
    except ValidationError as exc:
        messages = [clean(e)["msg"] for e in exc.errors()]
        raise InputError([(loc, f"{path} at {value!r}: {messages[0]}")]) from None


class Samples:
    """The uncertain inputs: their samples and the low and high of each (the tornado's ends)."""

    def __init__(self, req: PlanRequest, built: BuiltSystem, n: int):
        self.values, self.ends, self.notes = {}, {}, []
        rng = np.random.default_rng(req.seed)
        ranges = _ranges(req)
        f, k = built.system.filtration, req.inputs.cake
        se_a = k.resistance_stderr or 0.0
        se_r = req.inputs.medium_resistance_stderr or 0.0
        se_s = k.compressibility_stderr or 0.0
        rho = req.inputs.resistance_medium_correlation or 0.0
        with plan_errors():
            z1, z2 = planning.correlated_normals(rng, n, rho)
        z3 = rng.standard_normal(n)
        sd_a = se_a / f.resistance_ref
        sd_r = se_r / f.medium_resistance if f.medium_resistance > 0.0 else 0.0
        if se_r > 0.0 and f.medium_resistance == 0.0:
            self.notes.append("the cloth resistance is 0: its standard error was left out")
        for path, nominal, sd, z in (("cake.resistance", f.resistance_ref, sd_a, z1),
                                     ("medium_resistance", f.medium_resistance, sd_r, z2)):
            if sd > 0.0 and path not in ranges:  # log-normal about the fitted value (its median)
                self.values[path] = nominal * np.exp(sd * z)
                self.ends[path] = (nominal * math.exp(-Z90 * sd), nominal * math.exp(Z90 * sd))
        if se_s > 0.0 and "cake.compressibility" not in ranges:
            s = k.compressibility + se_s * z3
            clipped = int(np.count_nonzero((s < 0.0) | (s > 0.99)))
            if clipped:
                self.notes.append(f"{clipped} compressibility samples fell outside 0 to 0.99 and were held there")
            self.values["cake.compressibility"] = np.clip(s, 0.0, 0.99)
            self.ends["cake.compressibility"] = tuple(
                float(np.clip(k.compressibility + d * Z90 * se_s, 0.0, 0.99)) for d in (-1, 1))
        for path in sorted(ranges):
            low, high, shape = ranges[path]
            self.values[path] = planning.sample_range(rng, n, low, high, shape)
            self.ends[path] = (low, high)


def _closed_form(system) -> bool:
    """The samples' best cycles have the closed form: a constant-pressure feed, a cycle of
    filtration, a plain wash and downtime (no squeeze, blow, wash model, specs or filling)."""
    c = system.cycle
    return (system.feed.mode == "constant_pressure" and not c.has_stages and c.fill_time == 0.0
            and c.fill_flow is None)


def _evaluate(req: PlanRequest, built: BuiltSystem, family, basis: Basis, values: dict, n: int) -> np.ndarray:
    """Best throughput [target basis] of n samples of the inputs in ``values`` (others nominal)."""
    system = built.system
    if _closed_form(system) and set(values) <= DIRECT:
        arrays = _arrays_direct(req, system, family, values)
        c_s = _slurry_solids(built.derived)
    elif _closed_form(system):
        arrays, c_s = _arrays_rebuilt(_fixed_wash_interval(req.inputs, built), values, n)
    else:
        out = np.empty(n)
        inputs = _fixed_wash_interval(req.inputs, built)
        for i in range(n):
            b = _build(_sample_inputs(inputs, values, i))
            with plan_errors():
                best = solver.solve_cycle(b.system, solver.EndCriterion(), with_curves=False).best
            out[i] = basis.of(best.solids_throughput, best.filtrate_throughput, _slurry_solids(b.derived))
        return out
    r = planning.best_cycles_constant_pressure(arrays)
    return np.broadcast_to(basis.of(r["solids_throughput"], r["filtrate_throughput"], c_s), (n,)).astype(float)


def _fixed_wash_interval(inputs: CycleRequest, built: BuiltSystem) -> CycleRequest:
    """The inputs with a "best" cloth-wash interval fixed at the one found for them (samples
    then share it rather than each searching again)."""
    parts = inputs.cycle.downtime_parts
    if parts is None or parts.cloth_wash is None or parts.cloth_wash.every_cycles != "best":
        return inputs
    return _with(inputs, "cycle.downtime_parts.cloth_wash.every_cycles", built.derived["cloth_wash_every_cycles"])


def _sample_inputs(inputs: CycleRequest, values: dict, i: int) -> CycleRequest:
    for path, samples in values.items():
        inputs = _with(inputs, path, float(samples[i]))
    return inputs


def _arrays_direct(req, system, family, values) -> planning.SampledSystems:
    f, c, press = system.filtration, system.cycle, system.press
    p = values.get("feed.pressure", system.feed.pressure)
    p_ref = f.reference_pressure if req.inputs.cake.reference_pressure is not None else p
    return planning.SampledSystems(
        viscosity=f.viscosity, resistance_ref=values.get("cake.resistance", f.resistance_ref),
        reference_pressure=p_ref, compressibility=values.get("cake.compressibility", f.compressibility),
        medium_resistance=values.get("medium_resistance", f.medium_resistance),
        solids_per_filtrate=f.solids_per_filtrate, cake_volume_ratio=f.cake_volume_ratio,
        wash_per_filtrate=family.wash_per_filtrate, pressure=p, downtime=values.get("cycle.downtime", c.downtime),
        filter_area=press.filter_area, chamber_thickness=press.chamber_thickness, fill_fraction=press.fill_fraction,
        washing=c.washing, wash_pressure=c.wash_pressure, wash_viscosity=c.wash_viscosity,
    )


def _arrays_rebuilt(inputs, values, n):
    """Each sample's system built from its inputs (slurry balance, water), then one closed form."""
    cols = {name: np.empty(n) for name in ("viscosity", "resistance_ref", "reference_pressure", "compressibility",
                                           "medium_resistance", "solids_per_filtrate", "cake_volume_ratio",
                                           "wash_per_filtrate", "pressure", "downtime", "c_s")}
    first = None
    for i in range(n):
        b = _build(_sample_inputs(inputs, values, i))
        s, f = b.system, b.system.filtration
        with plan_errors():
            wpf = solver.cycle.wash_per_filtrate(s.cycle, f)
        for name in ("viscosity", "resistance_ref", "reference_pressure", "compressibility", "medium_resistance",
                     "solids_per_filtrate", "cake_volume_ratio"):
            cols[name][i] = getattr(f, name)
        cols["wash_per_filtrate"][i], cols["pressure"][i] = wpf, s.feed.pressure
        cols["downtime"][i], cols["c_s"][i] = s.cycle.downtime, _slurry_solids(b.derived)
        first = first or s
    c, press = first.cycle, first.press
    c_s = cols.pop("c_s")
    return planning.SampledSystems(
        **cols, filter_area=press.filter_area, chamber_thickness=press.chamber_thickness,
        fill_fraction=press.fill_fraction, washing=c.washing, wash_pressure=c.wash_pressure,
        wash_viscosity=c.wash_viscosity), c_s


MEASURE_NEXT = {
    "cake.resistance": "Repeating the lab test at {p}",
    "medium_resistance": "Repeating the lab test at {p} with the plant's cloth, with readings from the very start,",
    "cake.compressibility": "Lab tests at more pressures around {p}",
    "slurry.solids_mass_fraction": "Measuring the slurry's solids content over a few weeks",
    "slurry.temperature": "Knowing the slurry temperature through the year",
    "slurry.viscosity": "Measuring the filtrate viscosity",
    "cake.moisture": "Measuring the cake moisture on press cakes",
    "cake.wet_to_dry_ratio": "Weighing press cakes wet and dry",
    "cake.porosity": "Measuring the cake porosity",
    "feed.pressure": "Logging the feed pressure the pump actually holds",
    "cycle.downtime": "Timing the press's downtime over some cycles",
    "cycle.wash_ratio": "Settling the wash ratio",
}


def _measure_next(shares: dict, tornado: list, pressure: float) -> str:
    if not tornado:
        return ("No input is uncertain: give the lab fit's standard errors or ranges of the inputs "
                "to see how sure the answer is.")
    if shares and max(shares.values()) > 0.0:
        path = max(shares, key=shares.get)
        why = f"the {LABELS[path]} gives {100 * shares[path]:.0f} % of the spread of presses needed"
    else:
        path = tornado[0]["input"]
        why = f"the {LABELS[path]} moves the best throughput most"
    return f"{MEASURE_NEXT[path].format(p=f'{pressure / 1e5:.3g} bar')} would narrow the answer most: {why}."


def make_plan(req: PlanRequest) -> dict:
    """The whole /api/v1/plan answer as plain SI data."""
    built = _build(req.inputs)
    system, derived = built.system, built.derived
    with plan_errors():
        family = solver.cycle_family_for(system)
        sol = solver.solve_cycle(system, solver.EndCriterion(), family, with_curves=False)
    basis = _basis(req.target)
    c_s = _slurry_solids(derived)
    best = sol.best
    Q_best = basis.of(best.solids_throughput, best.filtrate_throughput, c_s)
    per_filtrate = Q_best / best.filtrate_throughput  # target basis per m^3 of filtrate
    t = req.target
    required = planning.required_rate(basis.per_calendar_day, t.hours_per_day, t.days_per_week,
                                      t.availability, t.margin)
    schedule, Q_plan = None, Q_best
    if req.shift is not None:
        with plan_errors():
            sched = planning.whole_cycle_schedule(family, sol.chambers_full_volume, best.filtrate_volume,
                                                  req.shift.length)
        Q_sched = sched.filtrate_throughput * per_filtrate
        schedule = {"shift_length": req.shift.length, "cycles_per_shift": sched.cycles_per_shift,
                    "cycle_time": sched.cycle_time, "filtrate_volume": sched.filtrate_volume,
                    "throughput": Q_sched, "cost": 1.0 - Q_sched / Q_best, "cycles_at_best": sched.cycles_at_best}
        if req.shift.whole_cycles:
            Q_plan = Q_sched
    if not required / Q_plan < MAX_PRESSES:
        raise InputError([(("body", "target"), f"this target would need more than {MAX_PRESSES:,} presses like "
                           "this one: check the target, its units and the press")])
    shift_factor = Q_plan / Q_best
    presses = planning.presses_needed(required, Q_plan)
    seasons = [_season(req, basis, T, i, required, shift_factor, presses) for i, T in enumerate(req.temperatures)]
    with plan_errors():
        energy = planning.feed_energy(family, best.filtrate_volume, t.pump_efficiency)
    warnings = []
    if presses > PLAUSIBLE_PRESSES:
        warnings.append(f"{presses:,} presses like this one are needed: far more than a plant installs of one kind "
                        f"(usually at most {PLAUSIBLE_PRESSES}). Check the target and its unit (a number without a "
                        "unit is in kg/s of dry solids or m³/s of slurry or filtrate), or plan with a larger press.")
    plan = {
        "basis": basis.name,
        # what the figures above the seasons are worked out at: the scenario's own slurry
        # temperature (None when it gives the filtrate viscosity instead) and its viscosity
        "temperature": req.inputs.slurry.temperature, "viscosity": derived["viscosity"],
        "required": required, "throughput": Q_plan, "best_throughput": Q_best,
        "presses_needed": presses, "presses_with_spare": presses + req.spares,
        "utilisation": required / (presses * Q_plan),
        "needed_per_press": required / (presses * shift_factor),
        "chambers_needed": _chambers_needed(req, built, basis, required),
        "schedule": schedule, "seasons": seasons,
        "cloth": _cloth(req, built, best, per_filtrate, warnings),
        "energy": {"per_cycle": energy, "per_dry_solids": energy / best.dry_cake_mass,
                   "pump_efficiency": t.pump_efficiency},
        "warnings": warnings, "cautions": CAUTIONS, "units": PLAN_UNITS,
    }
    plan.update(_uncertainty(req, built, family, basis, required, Q_best, shift_factor, presses))
    bad = first_non_finite(plan)
    if bad is not None:
        raise InputError([(("body",), f"these inputs give a plan out of numeric range ({bad}); check the magnitudes")])
    return plan


def _season(req, basis, T, index, required, shift_factor, presses) -> dict:
    """The best cycle at a season's slurry temperature (viscosity and density of water there).
    A refusal there is the season's temperature's (the ``index``-th of the plan's list), not the
    scenario's own temperature, which solved (a review)."""
    slurry = req.inputs.slurry.model_copy(update={"temperature": T, "viscosity": None})
    try:
        b = _build(req.inputs.model_copy(update={"slurry": slurry}))
        with plan_errors():
            best = solver.solve_cycle(b.system, solver.EndCriterion(), with_curves=False).best
    except InputError as exc:
        raise InputError([(("body", "temperatures", index), f"at this slurry temperature: {msg}")
                          for _, msg in exc.errors]) from None
    Q = basis.of(best.solids_throughput, best.filtrate_throughput, _slurry_solids(b.derived))
    n = planning.presses_needed(required, Q * shift_factor)
    return {"temperature": T, "viscosity": b.derived["viscosity"], "throughput": Q, "presses_needed": n,
            "target_met": n <= presses}


def _chambers_needed(req: PlanRequest, built: BuiltSystem, basis: Basis, required: float) -> int | None:
    """The fewest chambers of the scenario's plate size with which one press meets the target
    (downtime from its parts grows with them), or None: plates not given, or 1,000 too few."""
    p = req.inputs.press
    if p.chambers is None:
        return None
    parts = req.inputs.cycle.downtime_parts
    dp = parts.to_solver() if parts is not None else None
    every = built.derived.get("cloth_wash_every_cycles")
    c_s = _slurry_solids(built.derived)
    system = built.system

    def meets(n: int) -> bool:
        with plan_errors():
            press = solver.Press(solver.filter_area_from_plates(p.plate_face_area, n), p.chamber_thickness,
                                 p.fill_fraction)
            downtime = dp.per_cycle(n, every) if dp is not None else system.cycle.downtime
            variant = solver.PressSystem(system.filtration, press, system.feed,
                                         replace(system.cycle, downtime=downtime))
            family = solver.cycle_family_for(variant)
            s = solver.solve_cycle(variant, solver.EndCriterion(), family, with_curves=False)
        Q = basis.of(s.best.solids_throughput, s.best.filtrate_throughput, c_s)
        if req.shift is not None and req.shift.whole_cycles:
            try:
                sched = planning.whole_cycle_schedule(family, s.chambers_full_volume, s.best.filtrate_volume,
                                                      req.shift.length)
            except solver.SolverInputError:  # no cycle of so many chambers fits the shift
                return False
            Q = sched.filtrate_throughput * Q / s.best.filtrate_throughput
        return Q >= required * (1.0 - 1e-12)

    if not meets(MAX_CHAMBERS):
        return None
    lo, hi = 0, MAX_CHAMBERS  # lo fails (no chambers), hi meets
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (lo, mid) if meets(mid) else (mid, hi)
    while hi > 1 and meets(hi - 1):  # throughput need not rise with every chamber (pump-fed presses)
        hi -= 1
    return hi


def _cloth(req, built, best, per_filtrate, warnings) -> dict | None:
    cloth, parts = req.inputs.cloth, req.inputs.cycle.downtime_parts
    growth = cloth.resistance_growth_per_cycle if cloth else 0.0
    wash = parts.cloth_wash if parts is not None else None
    if not growth > 0.0:
        return None
    if wash is None:
        warnings.append("The cloth's resistance grows but no cloth wash is given "
                        "(cycle.downtime_parts.cloth_wash): no wash interval was worked out.")
        return None
    used = built.derived.get("cloth_wash_every_cycles")
    with plan_errors():
        wear = planning.cloth_wear(built.system, best.filtrate_volume, growth, wash.time, wash.time / used)
    shown = int(min(wear.cycle_times.size, max(30, 3 * wear.best_interval, 2 * (used or 0))))
    return {
        "resistance_growth_per_cycle": growth, "first_increase": wear.first_increase,
        "best_interval": wear.best_interval, "classic_interval": wear.classic_interval, "interval_used": used,
        "cycle_number": list(range(1, shown + 1)), "cycle_time": wear.cycle_times[:shown].tolist(),
        "interval": list(range(1, shown + 1)),
        "average_throughput": (wear.average_throughput[:shown] * per_filtrate).tolist(),
    }


def _uncertainty(req, built, family, basis, required, nominal, shift_factor, presses) -> dict:
    """The Monte Carlo (percentiles, probability of meeting the target) and the sensitivity."""
    n = req.samples
    notes = []
    if n and not _closed_form(built.system) and n > MAX_SLOW_SAMPLES:
        notes.append(f"{n:,} samples asked for; {MAX_SLOW_SAMPLES:,} were run: this scenario's best cycle has no "
                     "closed form (its feed or its squeeze, wash or blow stages), so each sample is solved on its own")
        n = MAX_SLOW_SAMPLES
    drawn = Samples(req, built, max(n, 1))
    notes += drawn.notes
    tornado = []
    for path, (low, high) in drawn.ends.items():
        Q = _evaluate(req, built, family, basis, {path: np.array([low, high])}, 2)
        tornado.append({"input": path, "label": LABELS[path], "unit": KINDS[RANGE_KINDS[path]].label,
                        "low": low, "high": high,
                        "throughput_low": float(Q[0]), "throughput_high": float(Q[1]), "variance_share": None})
    tornado.sort(key=lambda r: -abs(r["throughput_high"] - r["throughput_low"]))
    shares, uncertainty = {}, None
    if n:
        Q = _evaluate(req, built, family, basis, drawn.values, n) if drawn.values else np.full(n, nominal)
        y = required / (Q * shift_factor)  # presses needed before rounding up
        needed = planning.presses_needed(required, Q * shift_factor)
        shares = planning.variance_shares(drawn.values, y) if n >= 200 else {}
        for row in tornado:
            row["variance_share"] = shares.get(row["input"])
        span = np.ptp(Q)
        edges = np.linspace(Q.min(), Q.max(), 41) if span > 0 else np.linspace(0.99 * Q[0], 1.01 * Q[0], 41)
        counts, edges = np.histogram(Q, bins=edges)
        pct = np.percentile(Q, [10, 50, 90])
        pn = np.percentile(needed, [10, 50, 90], method="higher")
        uncertainty = {
            "samples": n, "seed": req.seed,
            "throughput": dict(zip(("p10", "p50", "p90"), map(float, pct))),
            "presses_needed": dict(zip(("p10", "p50", "p90"), map(float, pn))),
            "probability_target_met": float(np.mean(presses * Q * shift_factor >= required * (1 - 1e-12))),
            "probability_target_met_with_spare": float(
                np.mean((presses + req.spares) * Q * shift_factor >= required * (1 - 1e-12))),
            "histogram_edges": edges.tolist(), "histogram_counts": counts.astype(int).tolist(), "notes": notes,
        }
    pressure = built.system.feed.pressure_cap
    return {"uncertainty": uncertainty,
            "sensitivity": {"tornado": tornado, "measure_next": _measure_next(shares, tornado, pressure)}}

