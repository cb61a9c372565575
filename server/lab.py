"""From a validated /api/v1/lab-fit request to the solver's lab evaluation, and back."""

import numpy as np

from . import solver
from .errors import InputError
from .labdata import CsvError, parse_readings
from .schemas.labfit import LabFitRequest, LabTestIn
from .solve import first_non_finite, liquid_density
from .solver import labfit, water
from .solver import slurry as sb

LAB_UNITS = {
    "pressure": "Pa", "area": "m^2", "viscosity": "Pa*s", "c": "kg/m^3", "slope": "s/m^6",
    "intercept": "s/m^3", "resistance": "m/kg", "medium_resistance": "1/m", "resistance_ref": "m/kg",
    "reference_pressure": "Pa", "compressibility": "1", "readings": "[s, m^3]", "line.x": "m^3", "line.y": "s/m^3",
    "time_offset": "s", "filling.volume": "m^3", "filling.time": "s", "pressures": "Pa",
    "tested_pressure_range": "Pa", "medium_resistance_stderr": "1/m", "resistance_medium_correlation": "1",
}


def _loc(i: int, *rest) -> tuple:
    return ("body", "tests", i, *rest)


def _solids_per_filtrate(t: LabTestIn, readings, i: int) -> float:
    if t.c is not None:
        return t.c
    if t.dry_cake_mass is not None:
        V_final = t.final_filtrate_volume if t.final_filtrate_volume is not None else readings[-1][1]
        if not V_final > 0:
            raise InputError([(_loc(i, "final_filtrate_volume"), "must be > 0 m³ to give c from the dry cake mass")])
        return t.dry_cake_mass / V_final
    bal = sb.balance(
        liquid_density=liquid_density(t.liquid_density, t.temperature), solids_density=t.solids_density,
        solids_mass_fraction=t.solids_mass_fraction, solids_concentration=t.solids_concentration,
        moisture=t.moisture, wet_to_dry_ratio=t.wet_to_dry_ratio, porosity=t.porosity,
    )
    return bal.solids_per_filtrate


def _test(t: LabTestIn, i: int, model: str) -> tuple[labfit.LabTest, list, list | None]:
    pressures = None
    if t.csv is not None:
        try:
            parsed = parse_readings(t.csv)
        except CsvError as exc:
            raise InputError([(_loc(i, "csv"), str(exc))]) from None
        readings, pressures = parsed.points, parsed.pressures
    else:
        readings = [(p[0], p[1]) for p in t.points]
        if len(t.points[0]) == 3:
            pressures = [p[2] for p in t.points]
    try:
        mu = t.viscosity if t.viscosity is not None else water.water_viscosity(t.temperature)
        c = _solids_per_filtrate(t, readings, i)
    except solver.SolverInputError as exc:
        raise InputError([(_loc(i, exc.parameter), exc.message)]) from None
    start = t.start or None
    test = labfit.LabTest(
        pressure=t.pressure, area=t.area, viscosity=mu, solids_per_filtrate=c,
        time=tuple(p[0] for p in readings), volume=tuple(p[1] for p in readings),
        start_time=start.time if start else 0.0, start_volume=start.volume if start else 0.0,
        use=tuple(t.use) if t.use is not None else None,
        pressures=tuple(pressures) if pressures is not None else None, model=model,
    )
    return test, readings, pressures


def _test_out(t: LabTestIn, test: labfit.LabTest, fit: labfit.TestFit, readings, pressures) -> dict:
    used = set(fit.points_used)
    return {
        "name": t.name, "pressure": test.pressure, "area": test.area, "viscosity": test.viscosity,
        "c": test.solids_per_filtrate, "slope": fit.slope, "slope_stderr": fit.slope_stderr,
        "intercept": fit.intercept, "intercept_stderr": fit.intercept_stderr, "r_squared": fit.r_squared,
        "resistance": fit.resistance, "resistance_stderr": fit.resistance_stderr,
        "medium_resistance": fit.medium_resistance, "medium_resistance_stderr": fit.medium_resistance_stderr,
        "resistance_medium_correlation": fit.resistance_medium_correlation,
        "model": fit.model, "model_note": fit.model_note,
        "time_offset": fit.time_offset, "time_offset_stderr": fit.time_offset_stderr, "filling": fit.filling,
        "points_used": fit.points_used, "residuals": [float(r) for r in fit.residuals], "region": fit.region,
        "readings": [[float(a), float(b)] for a, b in readings],
        "pressures": [float(p) for p in pressures] if pressures is not None else None,
        "line": {
            "index": fit.indices,
            "x": np.asarray(fit.x, dtype=float).tolist(), "y": np.asarray(fit.y, dtype=float).tolist(),
            "used": [k in used for k in fit.indices],
            "fitted": np.asarray(fit.fitted, dtype=float).tolist(),
        },
        "warnings": fit.warnings,
    }


def fit_request(lab_request: LabFitRequest) -> dict:
    """The whole /api/v1/lab-fit answer as plain data (SI), checked finite."""
    tests, inputs = [], []
    for i, t in enumerate(lab_request.tests):
        test, readings, pressures = _test(t, i, lab_request.model)
        tests.append(test)
        inputs.append((t, readings, pressures))
        try:
            labfit.evaluate_test(test)  # each test's own errors land at its fields
        except solver.SolverInputError as exc:
            field = "csv" if (exc.parameter == "points" and t.csv is not None) else exc.parameter
            raise InputError([(_loc(i, field), exc.message)]) from None
    try:
        fits, combined = labfit.fit_for_basis(tests, lab_request.pressure_basis, lab_request.reference_pressure)
    except solver.SolverInputError as exc:
        raise InputError([(("body", "tests"), exc.message)]) from None
    tests_out, warnings = [], []
    for i, ((t, readings, pressures), test, fit) in enumerate(zip(inputs, tests, fits)):
        tests_out.append(_test_out(t, test, fit, readings, pressures))
        label = t.name or f"test {i + 1}"
        warnings.extend(f"{label}: {w}" for w in fit.warnings)
    warnings.extend(combined.warnings)
    s = combined.compressibility
    basis = lab_request.pressure_basis
    applied = any(f.compressibility > 0.0 for f in fits)
    if basis == "cake" and not applied and s is not None and s > 0.0:
        basis = "total"  # alpha was evaluated on the total basis: the cycle must use it the same way
        warnings.append(
            "No compressibility consistent with the cake pressure basis was found for these tests: the "
            "resistances are evaluated on the total basis (and for_cycle says so).")
    elif basis == "cake" and s is None and combined.medium_resistance > 0:
        warnings.append(
            "The cake pressure basis needs the compressibility from tests at two or more pressures; with one "
            "pressure the resistance is that of the whole pressure drop (the same for an incompressible cake).")
    usable_s = s is not None and 0.0 <= s < 1.0
    cake = {
        "resistance": combined.resistance_ref,
        "reference_pressure": combined.reference_pressure,
        "compressibility": s if usable_s else 0.0,
        "pressure_basis": basis,
        "tested_pressure_range": list(combined.tested_pressures),
    }
    if combined.resistance_ref_stderr is not None:
        cake["resistance_stderr"] = combined.resistance_ref_stderr
    if usable_s and combined.compressibility_stderr is not None:
        cake["compressibility_stderr"] = combined.compressibility_stderr
    for_cycle = {"cake": cake, "medium_resistance": max(combined.medium_resistance, 0.0)}
    if combined.medium_resistance_stderr is not None:
        for_cycle["medium_resistance_stderr"] = combined.medium_resistance_stderr
    if combined.resistance_medium_correlation is not None:
        for_cycle["resistance_medium_correlation"] = combined.resistance_medium_correlation
    if s is not None and not usable_s:
        warnings.append("for_cycle takes the compressibility as 0 because the fitted value is outside [0, 1).")
    if combined.medium_resistance < 0:
        warnings.append("for_cycle takes the medium resistance as 0 because the fitted value is negative.")
    out = {
        "tests": tests_out,
        "compressibility": s, "compressibility_stderr": combined.compressibility_stderr,
        "resistance_ref": combined.resistance_ref, "resistance_ref_stderr": combined.resistance_ref_stderr,
        "reference_pressure": combined.reference_pressure,
        "medium_resistance": combined.medium_resistance,
        "medium_resistance_spread": combined.medium_resistance_spread,
        "medium_resistance_stderr": combined.medium_resistance_stderr,
        "medium_resistance_trend": combined.medium_resistance_trend,
        "resistance_compressibility_correlation": combined.resistance_compressibility_correlation,
        "resistance_medium_correlation": combined.resistance_medium_correlation,
        "tested_pressure_range": list(combined.tested_pressures),
        "pressure_basis": basis,
        "for_cycle": for_cycle, "warnings": warnings, "units": LAB_UNITS,
    }
    bad = first_non_finite(out)
    if bad is not None:
        raise InputError([(("body", "tests"), f"these readings give a result out of numeric range ({bad})")])
    return out
