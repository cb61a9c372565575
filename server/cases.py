"""From a validated API request to a solver case, and from solver results to the API.

This is the only place that knows both the API's field paths and the solver's names.
"""

import math

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
    "filter_area": ("body", "press", "filter_area"),
    "plate_face_area": ("body", "press", "plate_face_area"),
    "chambers": ("body", "press", "chambers"),
    "chamber_thickness": ("body", "press", "chamber_thickness"),
    "fill_fraction": ("body", "press", "fill_fraction"),
    "pressure": ("body", "feed", "pressure"),
    "downtime": ("body", "cycle", "downtime"),
    "wash_ratio": ("body", "cycle", "wash_ratio"),
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
    "throughput_gain_unconstrained": "1",
}


def _path(parameter: str, override: tuple | None = None) -> tuple:
    return override or FIELD_PATHS.get(parameter, ("body",))


class Built:
    """A solver case built from a request, with the slurry figures derived on the way."""

    def __init__(self, case: solver.PressCase, derived: dict):
        self.case = case
        self.derived = derived


def build_case(req: CycleRequest) -> Built:
    """Turn a schema-valid request into a solver case; impossible combinations -> InputError."""
    try:
        return _build(req)
    except solver.SolverInputError as exc:
        raise InputError([(_path(exc.parameter), exc.message)]) from None


def _build(req: CycleRequest) -> Built:
    s, k = req.slurry, req.cake
    T = s.temperature
    rho_l = s.liquid_density
    if rho_l is None:
        rho_l = water.water_density(T) if T is not None else DEFAULT_LIQUID_DENSITY
    mu = s.viscosity if s.viscosity is not None else water.water_viscosity(T)
    rho_s = s.solids_density

    if k.wet_to_dry_ratio is not None:
        m = k.wet_to_dry_ratio
    elif k.moisture is not None:
        m = sb.wet_to_dry_from_moisture(k.moisture)
    else:
        m = sb.wet_to_dry_from_porosity(k.porosity, rho_s, rho_l)
    eps = k.porosity if k.porosity is not None else sb.porosity_from_wet_to_dry(m, rho_s, rho_l)

    if s.solids_mass_fraction is not None:
        c = sb.solids_per_filtrate_from_mass_fraction(s.solids_mass_fraction, m, rho_l)
    else:
        c = sb.solids_per_filtrate_from_concentration(s.solids_concentration, m, rho_s, rho_l)
    v = sb.cake_volume_ratio(c, eps, rho_s)

    p = req.press
    area = p.filter_area
    if area is None:
        area = solver.filter_area_from_plates(p.plate_face_area, p.chambers)
    press = solver.Press(area, p.chamber_thickness, p.fill_fraction)

    p_ref = k.reference_pressure if k.reference_pressure is not None else req.feed.pressure
    filtration = solver.Filtration(
        solids_per_filtrate=c, cake_volume_ratio=v, wet_to_dry_ratio=m, viscosity=mu,
        resistance_ref=k.resistance, reference_pressure=p_ref,
        compressibility=k.compressibility, medium_resistance=req.medium_resistance,
    )
    feed = solver.ConstantPressure(req.feed.pressure)
    cyc = req.cycle
    settings = solver.CycleSettings(
        downtime=cyc.downtime, wash_ratio=cyc.wash_ratio, washing=cyc.washing,
        wash_pressure=cyc.wash_pressure, wash_viscosity=cyc.wash_viscosity,
    )
    derived = {
        "c": c, "cake_volume_ratio": v, "porosity": eps, "wet_to_dry_ratio": m,
        "moisture": 1.0 - 1.0 / m, "solids_mass_fraction": sb.mass_fraction_from_solids_per_filtrate(c, m, rho_l),
        "liquid_density": rho_l, "viscosity": mu,
        "resistance_at_feed": filtration.specific_resistance(feed.pressure),
        "filter_area": area, "chamber_volume": press.chamber_volume,
    }
    return Built(solver.PressCase(filtration, press, feed, settings), derived)


def _cycle_dict(r: solver.CycleResult) -> dict:
    return {name: getattr(r, name) for name in r.__dataclass_fields__}


def solve_request(req: CycleRequest) -> dict:
    """The whole /api/v1/cycle answer as plain data (SI), checked finite."""
    built = build_case(req)
    sol = solver.solve_cycle(built.case)
    derived = dict(built.derived)
    derived.update(
        chambers_full_volume=sol.chambers_full_volume,
        cake_constant=sol.K_p, medium_constant=sol.B,
        matched_chamber_thickness=sol.matched_chamber_thickness,
        throughput_gain_unconstrained=sol.throughput_gain_unconstrained,
    )
    comparison = []
    for i, L in enumerate(req.compare_thicknesses):
        try:
            (_, tsol), = solver.compare_thicknesses(built.case, [L])
        except solver.SolverInputError as exc:
            raise InputError([(("body", "compare_thicknesses", i), exc.message)]) from None
        comparison.append(
            {"chamber_thickness": L, "best": _cycle_dict(tsol.best),
             "chambers_full": _cycle_dict(tsol.chambers_full)}
        )
    out = {
        "derived": derived,
        "best": _cycle_dict(sol.best),
        "unconstrained_optimum": _cycle_dict(sol.unconstrained_optimum),
        "chambers_full": _cycle_dict(sol.chambers_full),
        "thickness_comparison": comparison,
        "warnings": list(sol.warnings),
        "cautions": CAUTIONS,
        "units": RESULT_UNITS,
        "solver_version": solver.SOLVER_VERSION,
    }
    bad = _first_non_finite(out)
    if bad is not None:
        raise InputError(
            [(("body",), f"these inputs give a result out of numeric range ({bad}); check the magnitudes")]
        )
    return out


def _first_non_finite(obj, path="") -> str | None:
    if isinstance(obj, float):
        return None if math.isfinite(obj) else path or "result"
    if isinstance(obj, dict):
        items = obj.items()
    elif isinstance(obj, list):
        items = enumerate(obj)
    else:
        return None
    for key, value in items:
        found = _first_non_finite(value, f"{path}.{key}" if path else str(key))
        if found:
            return found
    return None
