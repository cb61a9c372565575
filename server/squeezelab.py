"""From a validated /api/v1/squeeze-fit request to the solver's squeeze-test fit, and back."""

import numpy as np

from . import solver
from .errors import InputError
from .labdata import CsvError, parse_squeeze_readings
from .plausibility import SQUEEZE_USUAL, fitted_consolidation_warnings, input_warnings
from .schemas.squeezefit import SqueezeFitRequest
from .solve import first_non_finite
from .solver.squeezefit import SqueezeTest, fit_squeeze

SQUEEZE_UNITS = {
    "pressure": "Pa", "consolidation_coefficient": "m^2/s", "creep_fraction": "1", "creep_rate": "1/s",
    "initial_thickness": "m", "final_thickness": "m", "solids_thickness": "m", "initial_void_ratio": "1",
    "final_void_ratio": "1", "initial_porosity": "1", "final_porosity": "1", "final_moisture": "1",
    "consolidation_at_last": "1", "readings": "[s, m] or [s, m^3]", "fitted": "m or m^3", "residuals": "m or m^3",
    "curve.time": "s", "curve.value": "m or m^3",
}
#: the squeeze fit's inputs in the lab page's words (for the flags of unusual values)
SQUEEZE_LABELS = {"pressure": "Squeeze pressure", "area": "Piston (cake) area", "solids_density": "Solids density",
                  "liquid_density": "Liquid density"}
#: Solver fields that are request fields of the same name.
_SAME = ("dry_solids_mass", "solids_density", "area", "drained_faces", "initial_thickness", "liquid_density")


def _where(parameter: str, source: str) -> tuple:
    """The request path of a solver input path."""
    head, _, rest = parameter.partition(".")
    if head == "readings":
        if source == "csv":
            return ("body", "csv")
        return ("body", source, *[int(p) if p.isdigit() else p for p in rest.split(".") if p])
    return ("body", head if head in _SAME else "csv" if source == "csv" else source)


def _message(exc: solver.SolverInputError, source: str) -> str:
    """A readings error in a CSV names the reading (1-based, below the header)."""
    head, _, rest = exc.parameter.partition(".")
    if source == "csv" and head == "readings" and rest:
        return f"reading {int(rest.split('.')[0]) + 1}: {exc.message}"
    return exc.message


#: The CSV's readings keep the same ranges as the JSON readings' fields (schemas/squeezefit.py).
_BOUNDS = {"time": (1e7, "s"), "thickness": (1.0, "m"), "filtrate": (10.0, "m³")}


def _within_bounds(readings, measured: str) -> None:
    for k, (t, v) in enumerate(readings):
        positive = v > 0.0 if measured == "thickness" else v >= 0.0
        for value, key, low_ok in ((t, "time", t >= 0.0), (v, measured, positive)):
            top, unit = _BOUNDS[key]
            if not (low_ok and value <= top):
                what = {"time": "time", "thickness": "thickness", "filtrate": "expressed liquid"}[key]
                lower = "above 0" if key == "thickness" else "at least 0"
                raise InputError([(("body", "csv"), f"reading {k + 1}: the {what} must be {lower} and at most "
                                                    f"{top:g} {unit}; got {value:.6g} {unit} (check the unit in "
                                                    "the header)")])


def squeeze_request(req: SqueezeFitRequest) -> dict:
    """The whole /api/v1/squeeze-fit answer as plain data (SI), checked finite."""
    if req.csv is not None:
        try:
            parsed = parse_squeeze_readings(req.csv)
        except CsvError as exc:
            raise InputError([(("body", "csv"), str(exc))]) from None
        readings, measured, source = parsed.points, parsed.measured, "csv"
        _within_bounds(readings, measured)
    elif req.thickness_readings is not None:
        readings, measured, source = [tuple(p) for p in req.thickness_readings], "thickness", "thickness_readings"
    else:
        readings, measured, source = [tuple(p) for p in req.filtrate_readings], "filtrate", "filtrate_readings"
    try:
        test = SqueezeTest(
            times=tuple(p[0] for p in readings), values=tuple(p[1] for p in readings), quantity=measured,
            dry_solids_mass=req.dry_solids_mass, solids_density=req.solids_density, area=req.area,
            drained_faces=req.drained_faces, initial_thickness=req.initial_thickness, creep=req.creep,
            liquid_density=req.liquid_density if req.liquid_density is not None else 1000.0,
        )
        fit = fit_squeeze(test)
    except solver.SolverInputError as exc:
        message = _message(exc, source)
        raise InputError([(_where(p, source), message) for p in exc.parameters]) from None
    t = np.asarray(test.times, dtype=float)
    grid = np.unique(np.concatenate([np.linspace(0.0, t[-1], 121), t]))
    squeeze = {
        "pressure": req.pressure,
        "consolidation_coefficient": fit.consolidation_coefficient,
        "creep_fraction": fit.creep_fraction,
        "final_porosity": fit.final_porosity,
    }
    if fit.creep_fraction > 0.0:
        squeeze["creep_rate"] = fit.creep_rate
    flags = input_warnings(req, req.raw, SQUEEZE_USUAL)
    out = {
        "input_warnings": [{**w, "label": SQUEEZE_LABELS.get(w["field"], w["field"])} for w in flags],
        "name": req.name, "pressure": req.pressure, "measured": measured,
        "consolidation_coefficient": fit.consolidation_coefficient,
        "consolidation_coefficient_stderr": fit.consolidation_coefficient_stderr,
        "creep_fraction": fit.creep_fraction, "creep_fraction_stderr": fit.creep_fraction_stderr,
        "creep_rate": fit.creep_rate, "creep_rate_stderr": fit.creep_rate_stderr,
        "initial_thickness": fit.initial_thickness, "initial_thickness_stderr": fit.initial_thickness_stderr,
        "final_thickness": fit.final_thickness, "final_thickness_stderr": fit.final_thickness_stderr,
        "solids_thickness": fit.solids_thickness,
        "initial_void_ratio": fit.initial_void_ratio, "final_void_ratio": fit.final_void_ratio,
        "initial_porosity": fit.initial_porosity, "final_porosity": fit.final_porosity,
        "final_porosity_stderr": fit.final_porosity_stderr, "final_moisture": fit.final_moisture,
        "r_squared": fit.r_squared, "consolidation_at_last": fit.consolidation_at_last,
        "correlation": fit.correlation,
        "readings": [[float(a), float(b)] for a, b in readings],
        "fitted": np.asarray(fit.fitted, dtype=float).tolist(),
        "residuals": np.asarray(fit.residuals, dtype=float).tolist(),
        "curve": {"time": grid.tolist(), "value": np.asarray(fit.curve(test, grid), dtype=float).tolist()},
        "for_cycle": {"squeeze": squeeze},
        "warnings": list(fit.warnings) + fitted_consolidation_warnings(fit.consolidation_coefficient),
        "units": SQUEEZE_UNITS,
    }
    bad = first_non_finite(out)
    if bad is not None:
        raise InputError([(("body", source), f"these readings give a result out of numeric range ({bad})")])
    return out


def scenario_prefill(result: dict) -> dict:
    """The fitted squeeze as editor inputs, in units people type: the cycle.squeeze fields."""
    sq = result["for_cycle"]["squeeze"]
    squeeze = {
        "pressure": f"{sq['pressure'] / 1e5:.4g} bar",
        "consolidation_coefficient": f"{sq['consolidation_coefficient']:.4g} m**2/s",
        "creep_fraction": round(sq["creep_fraction"], 4),
        "final_porosity": round(sq["final_porosity"], 4),
    }
    if "creep_rate" in sq:
        squeeze["creep_rate"] = f"{sq['creep_rate']:.4g} 1/s"
    return {"cycle": {"squeeze": squeeze}}
