"""From a validated API request to a solver case, and from solver results to the API.

This is the only place that knows both the API's field paths and the solver's names.
"""

import math
from dataclasses import replace

from . import solver
from .errors import InputError
from .schemas.cycle import CycleRequest
from .solver import slurry as sb
from .solver import water

DEFAULT_LIQUID_DENSITY = 998.0  # kg/m^3, water near 20 degC

#: Where each solver parameter lives in the request body.
FIELD_PATHS = {
    "solids_mass_fraction": ("body", "slurry", "solids_mass_fraction"),
    "solids_concentration": ("body", "slurry", "solids_concentration"),
    "temperature": ("body", "slurry", "temperature"),
    "viscosity": ("body", "slurry", "viscosity"),
    "moisture": ("body", "cake", "moisture"),
    "wet_to_dry_ratio": ("body", "cake", "wet_to_dry_ratio"),
    "porosity": ("body", "cake", "porosity"),
    "resistance": ("body", "cake", "resistance"),
    "reference_pressure": ("body", "cake", "reference_pressure"),
    "compressibility": ("body", "cake", "compressibility"),
    "medium_resistance": ("body", "medium_resistance"),
    "resistance_stderr": ("body", "cake", "resistance_stderr"),
    "medium_resistance_stderr": ("body", "medium_resistance_stderr"),
    "filter_area": ("body", "press", "filter_area"),
    "plate_face_area": ("body", "press", "plate_face_area"),
    "chambers": ("body", "press", "chambers"),
    "chamber_thickness": ("body", "press", "chamber_thickness"),
    "fill_fraction": ("body", "press", "fill_fraction"),
    "pressure": ("body", "feed", "pressure"),
    "flow": ("body", "feed", "flow"),
    "max_pressure": ("body", "feed", "max_pressure"),
    "points": ("body", "feed", "points"),
    "steps": ("body", "feed", "steps"),
    "end.criterion": ("body", "cycle", "end", "criterion"),
    "end.time": ("body", "cycle", "end", "time"),
    "end.flow": ("body", "cycle", "end", "flow"),
    "end.flow_per_area": ("body", "cycle", "end", "flow_per_area"),
    "end.flow_fraction": ("body", "cycle", "end", "flow_fraction"),
    "end.pressure": ("body", "cycle", "end", "pressure"),
    "downtime": ("body", "cycle", "downtime"),
    "wash_ratio": ("body", "cycle", "wash_ratio"),
    "wash_basis": ("body", "cycle", "wash_basis"),
    "washing": ("body", "cycle", "washing"),
    "wash_pressure": ("body", "cycle", "wash_pressure"),
    "wash_viscosity": ("body", "cycle", "wash_viscosity"),
}

CAUTIONS = [
    "Results are estimates from filtration test data, not a guarantee of press performance.",
    "The press and plate pressure ratings set by their maker, guards, lockout before opening, "
    "clamping pressure and the site's procedures always govern.",
    "Defer to local codes and licensed engineering practice.",
]

RESULT_UNITS = {
    "filtrate_volume": "m^3", "filtration_time": "s", "wash_volume": "m^3", "wash_time": "s",
    "downtime": "s", "cycle_time": "s", "filtrate_throughput": "m^3/s",
    "solids_throughput": "kg/s", "cake_thickness": "m", "chamber_fill": "1",
    "dry_cake_mass": "kg", "wet_cake_mass": "kg", "final_rate": "m^3/s", "final_pressure": "Pa",
    "chamber_thickness": "m", "c": "kg/m^3", "cake_volume_ratio": "1", "porosity": "1",
    "wet_to_dry_ratio": "1", "moisture": "1", "solids_mass_fraction": "1",
    "liquid_density": "kg/m^3", "viscosity": "Pa*s", "resistance_at_feed": "m/kg",
    "filter_area": "m^2", "chamber_volume": "m^3", "chambers_full_volume": "m^3",
    "cake_constant": "s/m^6", "medium_constant": "s/m^3", "matched_chamber_thickness": "m",
    "throughput_gain_unconstrained": "1", "throughput_ratio_to_best": "1", "time": "s",
    "pressure": "Pa", "flow": "m^3/s", "required": "kg/s or m^3/s", "achieved": "kg/s or m^3/s",
    "hours_per_day": "h",
}


def _path(parameter: str, override: tuple | None = None) -> tuple:
    return override or FIELD_PATHS.get(parameter, ("body",))


class Built:
    """A solver case built from a request, with the slurry figures derived on the way."""

    def __init__(self, case: solver.PressCase, end: solver.EndCriterion, derived: dict):
        self.case = case
        self.end = end
        self.derived = derived


def build_case(req: CycleRequest) -> Built:
    """Turn a schema-valid request into a solver case; impossible combinations -> InputError."""
    try:
        return _build(req)
    except solver.SolverInputError as exc:
        raise InputError([(_path(exc.parameter), exc.message)]) from None


def liquid_density(given: float | None, temperature: float | None) -> float:
    """The filtrate density: as given, else water at the temperature, else 998 kg/m³."""
    if given is not None:
        return given
    return water.water_density(temperature) if temperature is not None else DEFAULT_LIQUID_DENSITY


def _build(req: CycleRequest) -> Built:
    s, k = req.slurry, req.cake
    rho_l = liquid_density(s.liquid_density, s.temperature)
    mu = s.viscosity if s.viscosity is not None else water.water_viscosity(s.temperature)
    bal = sb.balance(
        liquid_density=rho_l, solids_density=s.solids_density, solids_mass_fraction=s.solids_mass_fraction,
        solids_concentration=s.solids_concentration, moisture=k.moisture, wet_to_dry_ratio=k.wet_to_dry_ratio,
        porosity=k.porosity,
    )
    c, v, m, eps = bal.solids_per_filtrate, bal.cake_volume_ratio, bal.wet_to_dry_ratio, bal.porosity

    p = req.press
    area = p.filter_area
    if area is None:
        area = solver.filter_area_from_plates(p.plate_face_area, p.chambers)
    press = solver.Press(area, p.chamber_thickness, p.fill_fraction)

    feed = _feed(req.feed)
    p_ref = k.reference_pressure if k.reference_pressure is not None else feed.pressure_cap
    filtration = solver.Filtration(
        solids_per_filtrate=c, cake_volume_ratio=v, wet_to_dry_ratio=m, viscosity=mu,
        resistance_ref=k.resistance, reference_pressure=p_ref,
        compressibility=k.compressibility, medium_resistance=req.medium_resistance, porosity=eps,
    )
    cyc = req.cycle
    settings = solver.CycleSettings(
        downtime=cyc.downtime, wash_ratio=cyc.wash_ratio, washing=cyc.washing,
        wash_pressure=cyc.wash_pressure, wash_viscosity=cyc.wash_viscosity, wash_basis=cyc.wash_basis,
    )
    e = cyc.end
    end = solver.EndCriterion(e.criterion, e.time, e.flow, e.flow_per_area, e.flow_fraction, e.pressure)
    derived = {
        "feed_mode": req.feed.mode, "c": c, "cake_volume_ratio": v, "porosity": eps, "wet_to_dry_ratio": m,
        "moisture": bal.moisture, "solids_mass_fraction": bal.solids_mass_fraction,
        "liquid_density": rho_l, "viscosity": mu,
        "resistance_at_feed": filtration.specific_resistance(feed.pressure_cap),
        "filter_area": area, "chamber_volume": press.chamber_volume,
    }
    return Built(solver.PressCase(filtration, press, feed, settings), end, derived)


def _feed(f):
    """The solver's feed mode for a feed schema."""
    if f.mode == "constant_pressure":
        return solver.ConstantPressure(f.pressure)
    if f.mode == "constant_rate":
        return solver.ConstantRate(f.flow, f.max_pressure)
    if f.mode == "pump_curve":
        return solver.PumpCurve(tuple(f.points), f.max_pressure)
    return solver.PressureSteps(tuple(f.steps))


def _cycle_dict(r: solver.CycleResult) -> dict:
    return {name: getattr(r, name) for name in r.__dataclass_fields__}


def solve_request(req: CycleRequest) -> dict:
    """The whole /api/v1/cycle answer as plain data (SI), checked finite."""
    return solve_full(req).answer


class Solved:
    """The API answer with the solver objects behind it (for charts)."""

    def __init__(self, answer, built, model, solution):
        self.answer, self.built, self.model, self.solution = answer, built, model, solution


def solve_full(req: CycleRequest) -> Solved:
    """Solve a request; keep the solver's model and solution beside the plain answer."""
    built = build_case(req)
    try:
        model = solver.curve_cycle_for(built.case, req.compare_thicknesses)
        sol = solver.solve_cycle(built.case, built.end, model)
        rows = solver.compare_thicknesses(built.case, req.compare_thicknesses, built.end, model)
    except solver.SolverInputError as exc:
        raise InputError([(_path(exc.parameter), exc.message)]) from None
    derived = dict(built.derived)
    derived.update(
        chambers_full_volume=sol.chambers_full_volume,
        cake_constant=sol.K_p, medium_constant=sol.B,
        matched_chamber_thickness=sol.matched_chamber_thickness,
        throughput_gain_unconstrained=sol.throughput_gain_unconstrained,
    )
    at_end = _cycle_dict(sol.at_end.cycle)
    at_end.update(end_reason=sol.at_end.end_reason, throughput_ratio_to_best=sol.at_end.throughput_ratio_to_best)
    out = {
        "derived": derived,
        "uncertainty": uncertainty(req, built, sol),
        "target": target_check(req, sol),
        "best": _cycle_dict(sol.best),
        "unconstrained_optimum": _cycle_dict(sol.unconstrained_optimum),
        "chambers_full": _cycle_dict(sol.chambers_full),
        "at_end": at_end,
        "curves": {k: [float(x) for x in v] for k, v in sol.curves.items()},
        "thickness_comparison": [
            {"chamber_thickness": L, "best": _cycle_dict(t.best), "chambers_full": _cycle_dict(t.chambers_full)}
            for L, t in rows
        ],
        "warnings": list(sol.warnings),
        "cautions": CAUTIONS,
        "units": RESULT_UNITS,
        "solver_version": solver.SOLVER_VERSION,
    }
    bad = first_non_finite(out)
    if bad is not None:
        raise InputError(
            [(("body",), f"these inputs give a result out of numeric range ({bad}); check the magnitudes")]
        )
    return Solved(out, built, model, sol)


def target_check(req: CycleRequest, sol) -> dict | None:
    """Does the press meet the production target at its best cycle, and how many presses would?"""
    t = req.target
    if t is None:
        return None
    key = "solids_throughput" if t.solids_throughput is not None else "filtrate_throughput"
    required = getattr(t, key)
    achieved = getattr(sol.best, key) * t.hours_per_day / 24.0
    ratio = achieved / required
    return {"quantity": key, "required": required, "achieved": achieved, "ratio": ratio, "meets": ratio >= 1.0,
            "presses_needed": max(1, math.ceil(required / achieved * (1 - 1e-12))), "hours_per_day": t.hours_per_day}


def uncertainty(req: CycleRequest, built: Built, sol) -> dict | None:
    """The best cycle over resistance ± one standard error (each of alpha and R_m, all corners).

    A plain corner check, not a statistical interval: it shows how far the lab fit's scatter
    moves the answer. A lower bound at or below zero is left out (and said so).
    """
    se_a, se_r = req.cake.resistance_stderr, req.medium_resistance_stderr
    if not se_a and not se_r:
        return None
    f = built.case.filtration
    alphas = [f.resistance_ref + d * (se_a or 0.0) for d in (-1, 1)]
    meds = [f.medium_resistance + d * (se_r or 0.0) for d in (-1, 1)]
    notes = []
    if alphas[0] <= 0:
        alphas, notes = alphas[1:], notes + ["alpha minus its standard error is not positive and was left out"]
    if meds[0] < 0:
        meds, notes = meds[1:] + [0.0], notes + ["the cloth resistance's lower bound is taken as 0"]
    cases = []
    for a in alphas:
        for r in meds:
            variant = replace(f, resistance_ref=a, medium_resistance=r)
            c = built.case
            cases.append(solver.solve_cycle(solver.PressCase(variant, c.press, c.feed, c.cycle), built.end,
                                            with_curves=False).best)
    cases.append(sol.best)

    def span(key):
        values = [getattr(b, key) for b in cases]
        return [min(values), max(values)]

    basis = "best cycle at resistance and cloth resistance each one standard error below and above"
    return {"filtrate_throughput": span("filtrate_throughput"), "solids_throughput": span("solids_throughput"),
            "filtration_time": span("filtration_time"), "cycle_time": span("cycle_time"),
            "basis": basis + ("; " + "; ".join(notes) if notes else "")}


def first_non_finite(obj, path="") -> str | None:
    if isinstance(obj, float):
        return None if math.isfinite(obj) else path or "result"
    if isinstance(obj, dict):
        items = obj.items()
    elif isinstance(obj, list):
        items = enumerate(obj)
    else:
        return None
    for key, value in items:
        found = first_non_finite(value, f"{path}.{key}" if path else str(key))
        if found:
            return found
    return None
