"""From a validated cycle request (the inputs) to the solver, and from the solver to results.

The one path from inputs to results: every API route and page solves through :func:`solve`,
and every number a page or chart shows comes from the solver through here. This is also the
only module that knows both the request's field paths and the solver's (:data:`API_PATHS`).
"""

import math
from dataclasses import dataclass, replace
from functools import cached_property
from itertools import chain
from operator import itemgetter
from typing import get_type_hints

import numpy as np
import orjson

from . import solver
from .errors import InputError
from .plausibility import derived_warnings, input_warnings
from .schemas.common import DENSITY_MAX, DENSITY_MIN
from .schemas.cycle import CycleRequest
from .schemas.quantities import user_unit
from .solver import planning, water
from .solver import slurry as sb
from .solver.errors import inputs_of

DEFAULT_LIQUID_DENSITY = 998.0  # kg/m^3, water near 20 degC
MAX_PRESSES = 100_000  # a target beyond this many presses is a slip in the input, not a plan

#: Where the inputs of each solver object sit in the request. Solver errors carry a dotted
#: path: an object's own field ("flow"), prefixed by whoever built it here ("feed.flow",
#: see _build), or, when raised while solving, the path among the solve's inputs (the
#: system's "feed", "press", "cycle", "filtration" and the "end" criterion: "end.flow").
#: The longest matching prefix here gives the request path and the rest of the solver path
#: is appended, so a feed's or a future stage's own field names need no entry.
API_PATHS = {
    "feed": ("feed",),
    "cake.local": ("cake", "local"),
    "press": ("press",),
    "cycle": ("cycle",),
    "cloth": ("cloth",),
    "end": ("cycle", "end"),
    "water.temperature": ("slurry", "temperature"),
    "filtration.viscosity": ("slurry", "viscosity"),
    "filtration.resistance": ("cake", "resistance"),
    "filtration.reference_pressure": ("cake", "reference_pressure"),
    "filtration.compressibility": ("cake", "compressibility"),
    "filtration.medium_resistance": ("medium_resistance",),
    "balance.solids_mass_fraction": ("slurry", "solids_mass_fraction"),
    "balance.solids_concentration": ("slurry", "solids_concentration"),
    "balance.solids_density": ("slurry", "solids_density"),
    "balance.solids_per_liquid": ("slurry", "solids_per_liquid"),
    "balance.dry_bulk_density": ("cake", "dry_bulk_density"),
    "balance.liquid_density": ("slurry", "liquid_density"),
    "balance.moisture": ("cake", "moisture"),
    "balance.wet_to_dry_ratio": ("cake", "wet_to_dry_ratio"),
    "balance.porosity": ("cake", "porosity"),
}


def api_path(solver_path: str) -> tuple:
    """The request path (with the leading "body") of a solver input path.

    >>> api_path("end.flow_fraction")
    ('body', 'cycle', 'end', 'flow_fraction')
    >>> api_path("feed.pressure"), api_path("balance.moisture")
    (('body', 'feed', 'pressure'), ('body', 'cake', 'moisture'))
    """
    parts = solver_path.split(".")
    for k in range(len(parts), 0, -1):
        mapped = API_PATHS.get(".".join(parts[:k]))
        if mapped is not None:
            return ("body", *mapped, *parts[k:])
    return ("body",)


class solver_errors:
    """Solver input errors in the block become a 422 at the field they concern (a class: a
    generator context manager costs more, and every request enters this twice)."""

    __slots__ = ()

    def __enter__(self):
        return None

    def __exit__(self, kind, exc, traceback):
        if kind is not None and issubclass(kind, solver.SolverInputError):
            raise InputError([(api_path(p), exc.message) for p in exc.parameters]) from None
        return False


#: the solids densities the API accepts (schemas.common.Density): a density fixed by the cake must
#: lie there too
SOLIDS_DENSITY_RANGE = (DENSITY_MIN, DENSITY_MAX)

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
    "filter_area": "m^2", "chamber_volume": "m^3", "chamber_volume_each": "m^3",
    "solids_density": "kg/m^3", "dry_bulk_density": "kg/m^3", "chambers_full_volume": "m^3",
    "cake_constant": "s/m^6", "medium_constant": "s/m^3", "matched_chamber_thickness": "m",
    "throughput_gain_unconstrained": "1", "throughput_ratio_to_best": "1", "time": "s",
    "pressure": "Pa", "flow": "m^3/s", "required": "kg/s or m^3/s", "achieved": "kg/s or m^3/s",
    "hours_per_day": "h", "fill_time": "s", "squeeze_time": "s", "blow_time": "s",
    "squeeze_filtrate_volume": "m^3", "consolidation": "1", "wash_pore_volumes": "1", "wash_filtrate_volumes": "1",
    "solute_removal": "1", "cake_thickness_final": "m", "max_moisture": "1", "min_solute_removal": "1",
}


@dataclass(frozen=True)
class BuiltSystem:
    """The solver objects built from a request, with the slurry figures derived on the way."""

    system: solver.PressSystem
    end: solver.EndCriterion
    derived: dict


def liquid_density(given: float | None, temperature: float | None) -> float:
    """The filtrate density: as given, else water at the temperature, else 998 kg/m³."""
    if given is not None:
        return given
    return water.water_density(temperature) if temperature is not None else DEFAULT_LIQUID_DENSITY


def build_system(inputs: CycleRequest) -> BuiltSystem:
    """Turn schema-valid inputs into solver objects; impossible combinations -> InputError."""
    with solver_errors():
        return _build(inputs)


def _build(inputs: CycleRequest) -> BuiltSystem:
    s, k = inputs.slurry, inputs.cake
    with inputs_of("water"):
        rho_l = liquid_density(s.liquid_density, s.temperature)
        mu = s.viscosity if s.viscosity is not None else water.water_viscosity(s.temperature)
    with inputs_of("feed"):
        feed = inputs.feed.to_solver()
    local = None
    porosity = k.porosity
    if k.local is not None:
        with inputs_of("cake.local"):
            local = k.local.to_solver()
            # the cake's average solidosity at the feed's highest pressure (the pressure it ends at)
            solidosity = float(local.average_solidosity(feed.pressure_cap))
            if not solidosity < 1.0:
                raise solver.SolverInputError(
                    "solidosity_exponent", f"the laws give a solids fraction of {solidosity:.4g} at the feed "
                    "pressure: it must stay below 1")
        porosity = 1.0 - solidosity
        if s.solids_density is None:
            with inputs_of("balance"):
                raise solver.SolverInputError("solids_density", "give the solids density: with local laws the "
                                              "cake's volume follows from its solids fraction and this density")
    with inputs_of("balance"):
        bal = sb.balance(
            liquid_density=rho_l, solids_density=s.solids_density, solids_mass_fraction=s.solids_mass_fraction,
            solids_concentration=s.solids_concentration, solids_per_liquid=s.solids_per_liquid,
            moisture=k.moisture, wet_to_dry_ratio=k.wet_to_dry_ratio, porosity=porosity,
            dry_bulk_density=k.dry_bulk_density,
        )
        if s.solids_density is None and bal.solids_density is not None and not (
                SOLIDS_DENSITY_RANGE[0] <= bal.solids_density <= SOLIDS_DENSITY_RANGE[1]):
            low, high = SOLIDS_DENSITY_RANGE
            liquid = "wet_to_dry_ratio" if k.wet_to_dry_ratio is not None else "moisture"
            raise solver.SolverInputError(
                "dry_bulk_density", f"with this cake liquid content, a dry bulk density of {k.dry_bulk_density:.4g} "
                f"kg/m³ means solids of {bal.solids_density:.0f} kg/m³ (porosity {bal.porosity:.4g}); solids lie "
                f"between {low:g} and {high:g} kg/m³: check the dry bulk density and the {liquid.replace('_', ' ')}",
                also=(liquid,))
        if bal.solids_density is None:
            raise solver.SolverInputError(
                "solids_density", "give the solids density (or the cake's dry bulk density with its moisture or "
                "wet-to-dry ratio, which fixes it): the cake's volume depends on it")
    with inputs_of("press"):
        press = inputs.press.to_solver()
    p_ref = k.reference_pressure if k.reference_pressure is not None else feed.pressure_cap
    with inputs_of("filtration"):
        filtration = solver.Filtration(
            solids_per_filtrate=bal.solids_per_filtrate, cake_volume_ratio=bal.cake_volume_ratio,
            wet_to_dry_ratio=bal.wet_to_dry_ratio, viscosity=mu,
            resistance_ref=k.resistance if local is None else local.resistance_at_zero_stress,
            reference_pressure=p_ref, compressibility=k.compressibility,
            medium_resistance=inputs.medium_resistance, porosity=bal.porosity,
            pressure_basis=k.pressure_basis, local=local,
        )
    parts = inputs.cycle.downtime_parts
    dp = None
    if parts is not None:
        with inputs_of("cycle.downtime_parts"):
            dp = parts.to_solver()
            downtime = dp.per_cycle(inputs.press.chambers)  # an interval of "best": found below
    with inputs_of("cycle"):
        settings = inputs.cycle.to_solver(downtime if dp is not None else None, bal.porosity, bal.wet_to_dry_ratio,
                                          pump_fill_flow(inputs))
    with inputs_of("end"):
        end = inputs.cycle.end.to_solver()
    derived = {
        "feed_mode": feed.mode, "c": bal.solids_per_filtrate, "cake_volume_ratio": bal.cake_volume_ratio,
        "porosity": bal.porosity, "wet_to_dry_ratio": bal.wet_to_dry_ratio,
        "moisture": bal.moisture, "solids_mass_fraction": bal.solids_mass_fraction,
        "liquid_density": rho_l, "viscosity": mu, "solids_density": bal.solids_density,
        "dry_bulk_density": (1.0 - bal.porosity) * bal.solids_density,
        "resistance_at_feed": filtration.specific_resistance(feed.pressure_cap),
        "pressure_basis": k.pressure_basis,
        "filter_area": press.filter_area, "chamber_volume": press.chamber_volume,
        "chamber_volume_each": press.chamber_volume / inputs.press.chambers if inputs.press.chambers else None,
    }
    system = solver.PressSystem(filtration, press, feed, settings)
    if dp is not None and dp.cloth_wash_time and dp.cloth_wash_every is None:
        system, derived["cloth_wash_every_cycles"] = _best_wash_interval(inputs, system, dp)
    elif dp is not None and dp.cloth_wash_time:
        derived["cloth_wash_every_cycles"] = dp.cloth_wash_every
    derived["downtime"] = system.cycle.downtime
    return BuiltSystem(system, end, derived)


def pump_fill_flow(inputs: CycleRequest) -> float | None:
    """The pump's highest flow [m³/s] for filling the chambers (fill_time "pump"), else None."""
    if inputs.cycle.fill_time != "pump":
        return None
    feed = inputs.feed
    if feed.mode == "constant_rate":
        return feed.flow
    if feed.mode == "pump_curve":
        top = max(q for q, _ in feed.points)
        if top > 0.0:
            return top
    raise solver.SolverInputError(
        "fill_time", f'"pump" fills the chambers at the pump\'s highest flow: it needs a pump-fed feed '
        f"(constant_rate, or pump_curve with a flow above 0); the feed is {feed.mode.replace('_', ' ')}: "
        "give the filling time as a time instead (e.g. 5 min)")


def _best_wash_interval(inputs: CycleRequest, system, dp):
    """The system with the cloth wash shared over the interval of highest average throughput."""
    growth = inputs.cloth.resistance_growth_per_cycle if inputs.cloth else 0.0
    if not growth > 0.0:
        raise solver.SolverInputError(
            "cycle.downtime_parts.cloth_wash.every_cycles", '"best" needs the cloth\'s wear: give '
            "cloth.resistance_growth_per_cycle above 0 1/m, or a number of cycles")
    N = planning.best_wash_interval(system, growth, dp.cloth_wash_time)
    return replace(system, cycle=replace(system.cycle, downtime=dp.per_cycle(inputs.press.chambers, N))), N


def _cycle_dict(r: solver.CycleResult) -> dict:
    # a frozen dataclass keeps its fields in __dict__, in field order: a copy is the dict
    return dict(r.__dict__)


@dataclass(frozen=True)
class SolvedScenario:
    """A scenario's answer, serialised once (what /api/v1/cycle sends), and, when asked for,
    the SI data of every chart (solver/sweeps.py).

    ``answer`` holds the solver's own objects (cycles as :class:`~.solver.CycleResult`, the
    curves as arrays), which the JSON encoder writes as they are; ``results`` is the same answer
    as plain data (dicts, lists and floats), made on first use: a page, a saved scenario or a
    plan needs it, the API's answer does not (issue 12).
    """

    answer: dict
    chart_series: dict | None
    #: the results as JSON, serialised once (what /api/v1/cycle sends)
    results_json: bytes = b""

    @cached_property
    def results(self) -> dict:
        """The /api/v1/cycle answer as plain data (SI): what ``results_json`` holds, as Python."""
        return _plain(self.answer)


def _plain(value):
    """The answer as plain data: cycles as dicts (in field order), arrays as lists."""
    kind = type(value)
    if kind is dict:
        return {k: _plain(v) for k, v in value.items()}
    if kind is list:
        return [_plain(v) for v in value]
    if kind is solver.CycleResult:
        return dict(value.__dict__)
    if kind is np.ndarray:
        return value.tolist()
    return value


def solve_results(inputs: CycleRequest) -> dict:
    """The whole /api/v1/cycle answer as plain data (SI), checked finite."""
    return solve(inputs).results


def solve(inputs: CycleRequest, with_chart_series: bool = False) -> SolvedScenario:
    """Solve a scenario: its results, and its chart series if asked for (pages draw them)."""
    built = build_system(inputs)
    system, end = built.system, built.end
    with solver_errors():
        family = solver.cycle_family_for(system, inputs.compare_thicknesses)
        sol = solver.solve_cycle(system, end, family)
        rows = solver.thickness_rows(system, inputs.compare_thicknesses, family, sol.unconstrained_optimum,
                                     (sol.best, sol.chambers_full))
        series = solver.chart_series(family, system, sol) if with_chart_series else None
    derived = dict(built.derived)
    derived.update(
        chambers_full_volume=sol.chambers_full_volume,
        cake_constant=sol.K_p, medium_constant=sol.B,
        matched_chamber_thickness=sol.matched_chamber_thickness,
        throughput_gain_unconstrained=sol.throughput_gain_unconstrained,
    )
    # the curves are checked finite as arrays (and sent as arrays)
    curves = {k: np.asarray(v, dtype=float) for k, v in sol.curves.items()}
    bad = None
    # all of them at once (np.isfinite warns of nothing: no error-state context to set up)
    spoiled = bool(curves) and not np.isfinite(np.concatenate(tuple(curves.values()))).all()
    if spoiled:
        bad = next((f"curves.{k}.{int(np.flatnonzero(~np.isfinite(v))[0])}" for k, v in curves.items()
                    if not np.isfinite(v).all()), None)
    at_end = _cycle_dict(sol.at_end.cycle)
    at_end.update(end_reason=sol.at_end.end_reason, throughput_ratio_to_best=sol.at_end.throughput_ratio_to_best)
    answer = {
        "input_warnings": input_warnings(inputs, inputs.raw) + derived_warnings(built.derived, inputs),
        "derived": derived,
        "uncertainty": uncertainty(inputs, built, sol),
        "target": target_check(inputs, sol),
        "best": sol.best,
        "unconstrained_optimum": sol.unconstrained_optimum,
        "chambers_full": sol.chambers_full,
        "at_end": at_end,
        "curves": curves,
        "thickness_comparison": [{"chamber_thickness": L, "best": best, "chambers_full": full}
                                 for L, best, full in rows],
        "stage_order": ["fill", "filtration", *sol.stage_order, "downtime"],
        "specs": sol.specs,
        "warnings": list(sol.warnings) + tested_range_warning(inputs, system.feed) + stage_order_warning(inputs, sol),
        "cautions": CAUTIONS,
        "units": RESULT_UNITS,
        "solver_version": solver.SOLVER_VERSION,
    }
    # the cycles (most of the answer's numbers) checked at once, the rest walked
    cycles = [sol.best, sol.unconstrained_optimum, sol.chambers_full, *(c for _, *pair in rows for c in pair)]
    if bad is None and (not _cycles_finite(cycles) or _any_non_finite(
            {k: v for k, v in answer.items() if k not in _TEXT_PARTS and k not in _CYCLE_PARTS})):
        bad = first_non_finite(_plain(answer))
    if bad is None and series is not None:
        bad = next((f"chart_series.{name}" for name, values in _series_arrays(series)
                    if not np.isfinite(values).all()), None)
    if bad is not None:
        raise InputError(
            [(("body",), f"these inputs give a result out of numeric range ({bad}); check the magnitudes")]
        )
    return SolvedScenario(answer, series, orjson.dumps(answer, option=orjson.OPT_SERIALIZE_NUMPY))


def _series_arrays(series: dict, prefix: str = ""):
    """(name, float array) of every list of numbers in the chart series."""
    for key, value in series.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            yield from _series_arrays(value, name + ".")
        elif isinstance(value, list) and value and not isinstance(value[0], bool):
            yield name, np.asarray(value, dtype=float)


def target_check(inputs: CycleRequest, sol) -> dict | None:
    """Does the press meet the production target at its best cycle, and how many presses would?"""
    t = inputs.target
    if t is None:
        return None
    key = "solids_throughput" if t.solids_throughput is not None else "filtrate_throughput"
    required = getattr(t, key)
    achieved = getattr(sol.best, key) * t.hours_per_day / 24.0
    ratio = achieved / required
    if not ratio * MAX_PRESSES > 1.0:
        raise InputError([(("body", "target"), f"this target would need more than {MAX_PRESSES:,} presses like "
                           "this one: check the target, its units and the press")])
    return {"quantity": key, "required": required, "achieved": achieved, "ratio": ratio, "meets": ratio >= 1.0,
            "presses_needed": max(1, math.ceil(required / achieved * (1 - 1e-12))), "hours_per_day": t.hours_per_day}


#: The lab fit's inputs with a standard error: (request field of the error, how one standard
#: error moves the filtration). alpha is varied on a log scale, as the compressibility fit
#: gives it (ln alpha_ref), R_m and s linearly.
UNCERTAIN = ("resistance", "medium_resistance", "compressibility")


def _vary(f: solver.Filtration, name: str, d: float) -> solver.Filtration:
    if name == "resistance":
        return replace(f, resistance_ref=f.resistance_ref * math.exp(d))
    if name == "medium_resistance":
        return replace(f, medium_resistance=f.medium_resistance + d)
    return replace(f, compressibility=f.compressibility + d)


def uncertainty(inputs: CycleRequest, built: BuiltSystem, sol) -> dict | None:
    """The best cycle's range of one standard deviation from the lab fit's standard errors and
    their correlation (delta method).

    Each input with a standard error is moved one standard error down and up (up only where
    down leaves its range); the slopes found, with the covariance of ln alpha_ref, R_m and s
    (correlation of alpha_ref and R_m as given, s uncorrelated: a reference pressure at the
    tests' geometric mean makes it so), give the variance of each figure of the best cycle.
    """
    k = inputs.cake
    f = built.system.filtration
    if k.local is not None:
        return None
    sd = {
        "resistance": (k.resistance_stderr or 0.0) / f.resistance_ref,
        "medium_resistance": inputs.medium_resistance_stderr or 0.0,
        "compressibility": (k.compressibility_stderr or 0.0) if f.compressibility > 0.0 else 0.0,
    }
    names = [n for n in UNCERTAIN if sd[n] > 0.0]
    if not names:
        return None
    keys = ("filtrate_throughput", "solids_throughput", "filtration_time", "cycle_time")
    base = {key: getattr(sol.best, key) for key in keys}

    def best(name: str, d: float):
        variant = replace(built.system, filtration=_vary(f, name, d))
        # the best cycle does not depend on how the engineer ends filtration
        b = solver.solve_cycle(variant, solver.EndCriterion(), with_curves=False).best
        return {key: getattr(b, key) for key in keys}

    slopes = {}
    for name in names:
        h = sd[name]
        room_below = {"resistance": True, "medium_resistance": f.medium_resistance - h >= 0.0,
                      "compressibility": f.compressibility - h >= 0.0}[name]
        room_above = name != "compressibility" or f.compressibility + h < 1.0
        up = best(name, h) if room_above else base
        down = best(name, -h) if room_below else base
        span = h * ((1 if room_above else 0) + (1 if room_below else 0))
        slopes[name] = {key: (up[key] - down[key]) / span for key in keys}
    rho = inputs.resistance_medium_correlation or 0.0
    cov = {(a, b): (sd[a] ** 2 if a == b else 0.0) for a in names for b in names}
    if "resistance" in names and "medium_resistance" in names:
        cov[("resistance", "medium_resistance")] = cov[("medium_resistance", "resistance")] = (
            rho * sd["resistance"] * sd["medium_resistance"])
    out, notes = {}, []
    for key in keys:
        var = sum(slopes[a][key] * slopes[b][key] * cov[(a, b)] for a in names for b in names)
        half = math.sqrt(max(var, 0.0))
        low = base[key] - half
        if low <= 0.0:
            low = base[key] * 1e-3
            notes.append(f"the low end of {key.replace('_', ' ')} is not positive and is shown near zero")
        out[key] = [low, base[key] + half]
    words = {"resistance": "cake resistance", "medium_resistance": "cloth resistance",
             "compressibility": "compressibility"}
    basis = ("best cycle within one standard deviation (about a 68 % range), from the standard errors of the "
             + ", ".join(words[n] for n in names)
             + (f" with the correlation {rho:.2f} of cake and cloth resistance" if rho and len(names) > 1 else "")
             + " (delta method)")
    out["basis"] = basis + ("; " + "; ".join(notes) if notes else "")
    return out


def stage_order_warning(inputs: CycleRequest, sol) -> list[str]:
    """A stage order (``cycle.stages``) naming stages the cycle does not have: they are left out,
    and the engineer is told (a demo listed a blow it had no settings for)."""
    order = inputs.cycle.stages
    if not order:
        return []
    unused = [s for s in order if s not in sol.stage_order]
    if not unused:
        return []
    names = " and ".join(unused)
    return [f"The stage order lists {names}, but the cycle has no {names} settings: "
            f"{'it is' if len(unused) == 1 else 'they are'} left out of the cycle."]


def tested_range_warning(inputs: CycleRequest, feed) -> list[str]:
    """A warning when the press runs above or below the lab tests' pressures, in the unit typed."""
    rng = inputs.cake.tested_pressure_range
    if rng is None:
        return []
    lo, hi = rng
    top = feed.pressure_cap
    if lo * (1 - 1e-9) <= top <= hi * (1 + 1e-9):
        return []
    raw = inputs.raw
    feed_raw = raw.get("feed", {}) if isinstance(raw, dict) else {}
    typed = next((feed_raw.get(n) for n in ("pressure", "max_pressure") if isinstance(feed_raw, dict)
                  and feed_raw.get(n) is not None), None)
    given = user_unit(typed, "pressure")
    unit, to_user = given if given else ("bar", lambda x: x / 1e5)
    where = "above" if top > hi else "below"
    return [f"The press runs at up to {to_user(top):.4g} {unit}, {where} the lab tests' pressures "
            f"({to_user(lo):.4g} to {to_user(hi):.4g} {unit}): the cake resistance there is extrapolated "
            f"with the compressibility; a test at the press pressure would confirm it."]


#: parts of the results that hold no numbers computed for the request (the curves are
#: checked as arrays, and input_warnings holds field names and messages)
_TEXT_PARTS = ("curves", "units", "cautions", "solver_version", "warnings", "stage_order", "input_warnings")
#: parts of the results that are cycles (checked by _cycles_finite)
_CYCLE_PARTS = ("best", "unconstrained_optimum", "chambers_full", "thickness_comparison")

#: a cycle's fields that are always numbers, and those that are numbers or None
_CYCLE_NUMBERS = {name: kind for name, kind in get_type_hints(solver.CycleResult).items()
                  if kind in (float, float | None)}
_ALWAYS_NUMBERS = itemgetter(*(name for name, kind in _CYCLE_NUMBERS.items() if kind is float))
_MAYBE_NUMBERS = itemgetter(*(name for name, kind in _CYCLE_NUMBERS.items() if kind is not float))


def _cycles_finite(cycles) -> bool:
    """Whether every number of these cycles (CycleResult) is finite: their numeric fields read
    out and added up by the interpreter's own iterators, no Python step per number (issue 12).
    NaN or an infinity carries through a sum; a sum that overflowed on finite numbers, or a
    field that is not a number where one is expected, is left to the walk (:func:`_any_non_finite`)."""
    fields = [c.__dict__ for c in cycles]
    try:
        # None (and 0, which adds nothing) left out of the fields that may be None
        total = sum(chain.from_iterable(map(_ALWAYS_NUMBERS, fields)),
                    sum(filter(None, chain.from_iterable(map(_MAYBE_NUMBERS, fields)))))
    except TypeError:
        total = math.nan
    return math.isfinite(total) or not _any_non_finite(cycles)


def _any_non_finite(data) -> bool:
    """Whether plain data (a dict or a list; cycles as CycleResult) holds a NaN or an infinity
    anywhere: x * 0 is 0 for a finite x and NaN otherwise, so one sum answers for every number
    (no per-path bookkeeping; first_non_finite finds the path when the answer is yes, and a
    sum that only overflowed finds none). Each container's items are looked at in one loop,
    only the containers among them kept for later: the answer is mostly flat dicts of numbers."""
    stack, acc = [data], 0.0
    pop, push = stack.pop, stack.append
    cycle = solver.CycleResult
    while stack:
        item = pop()
        kind = type(item)
        for value in (item.values() if kind is dict else item.__dict__.values() if kind is cycle else item):
            kind = type(value)
            if kind is float:
                acc += value * 0.0
            elif kind is dict or kind is list or kind is tuple or kind is cycle:
                push(value)
            elif isinstance(value, float):  # numpy's float64, as a plain float (no warning)
                acc += float(value) * 0.0
    return acc != 0.0


def first_non_finite(obj, path="") -> str | None:
    """The path of the first NaN or infinity in plain data, or None. Lists of numbers are
    checked at once with numpy (the curves hold thousands)."""
    if isinstance(obj, list) and obj and isinstance(obj[0], float):
        try:
            values = np.asarray(obj, dtype=float)
        except (TypeError, ValueError):
            values = None
        if values is not None and values.ndim == 1:
            bad = np.flatnonzero(~np.isfinite(values))
            return f"{path}.{int(bad[0])}" if bad.size else None
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
