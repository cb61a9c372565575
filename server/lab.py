"""From a validated /api/v1/lab-fit request to the solver's lab evaluation, and back."""

import math
from dataclasses import replace

import numpy as np

from . import solver
from .errors import InputError
from .labdata import CsvError, parse_compression, parse_readings
from .plausibility import LAB_USUAL, dry_cake_mass_warnings, fitted_resistance_warnings, input_warnings
from .schemas.labfit import CompressionFitRequest, LabFitRequest, LabTestIn
from .solve import first_non_finite, liquid_density
from .solver import labfit, locallaws, water
from .solver import slurry as sb

LAB_UNITS = {
    "pressure": "Pa", "area": "m^2", "viscosity": "Pa*s", "c": "kg/m^3", "slope": "s/m^6",
    "intercept": "s/m^3", "resistance": "m/kg", "medium_resistance": "1/m", "resistance_ref": "m/kg",
    "reference_pressure": "Pa", "compressibility": "1", "readings": "[s, m^3]", "line.x": "m^3", "line.y": "s/m^3",
    "time_offset": "s", "filling.volume": "m^3", "filling.time": "s", "pressures": "Pa",
    "tested_pressure_range": "Pa", "medium_resistance_stderr": "1/m", "resistance_medium_correlation": "1",
}


#: a lab fit's inputs in the lab page's words (for the flags of unusual values)
LAB_LABELS = {
    "pressure": "pressure drop", "area": "filter area of the cell", "temperature": "filtrate temperature",
    "viscosity": "filtrate viscosity", "c": "dry solids per filtrate volume c",
    "solids_mass_fraction": "solids mass fraction of the slurry", "solids_concentration": "solids per slurry volume",
    "solids_density": "solids density", "liquid_density": "liquid density", "moisture": "cake moisture",
    "wet_to_dry_ratio": "wet-to-dry ratio of the cake", "porosity": "cake porosity",
}


def _test_label(t: LabTestIn, i: int) -> str:
    return f"test {i + 1}" + (f" ({t.name})" if t.name else "")


def _flag_label(field: str, tests) -> str:
    """'Test 1 (leaf 3 bar), filter area of the cell' for 'tests.0.area'."""
    parts = field.split(".")
    if parts[0] == "tests" and len(parts) == 3 and parts[1].isdigit():
        text = f"{_test_label(tests[int(parts[1])], int(parts[1]))}, {LAB_LABELS.get(parts[2], parts[2])}"
    else:
        text = {"reference_pressure": "reference pressure of α"}.get(field, field)
    return text[:1].upper() + text[1:]


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


def _with_c_uncertainty(fits, combined, c_errors):
    """The fits with the uncertainty of c added to alpha's standard error.

    alpha is inversely proportional to c, so c's relative error adds to alpha's in quadrature;
    R_m does not depend on c, so the covariance of alpha and R_m stays and their correlation
    shrinks accordingly. For alpha_ref over several pressures the relative error of c is taken
    as common to the tests (one slurry): the cautious choice, it does not average out.
    """
    rel = [(se / c) if se else 0.0 for se, c in c_errors]
    if not any(rel):
        return fits, combined

    def widen(stderr, value, corr, r):
        if stderr is None or value is None:
            return stderr, corr
        new = math.hypot(stderr, r * abs(value))
        return new, (corr * stderr / new if corr is not None and new > 0 else corr)

    out = []
    for fit, r in zip(fits, rel, strict=True):
        se, corr = widen(fit.resistance_stderr, fit.resistance, fit.resistance_medium_correlation, r)
        out.append(replace(fit, resistance_stderr=se, resistance_medium_correlation=corr))
    common = max(rel)
    se, corr = widen(combined.resistance_ref_stderr, combined.resistance_ref, combined.resistance_medium_correlation,
                     common)
    return out, replace(combined, resistance_ref_stderr=se, resistance_medium_correlation=corr)


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
    fits, combined = _with_c_uncertainty(fits, combined, [(t.c_stderr, test.solids_per_filtrate)
                                                          for (t, _, _), test in zip(inputs, tests)])
    tests_out, warnings = [], []
    for i, ((t, readings, pressures), test, fit) in enumerate(zip(inputs, tests, fits)):
        tests_out.append(_test_out(t, test, fit, readings, pressures))
        label = t.name or f"test {i + 1}"
        warnings.extend(f"{label}: {w}" for w in fit.warnings)
    warnings.extend(combined.warnings)
    warnings.extend(dry_cake_mass_warnings([(_test_label(t, i), test.solids_per_filtrate)
                                            for i, ((t, _, _), test) in enumerate(zip(inputs, tests))
                                            if t.c is None and t.dry_cake_mass is not None]))
    warnings.extend(fitted_resistance_warnings(
        combined.resistance_ref, [(_test_label(t, i), fit.resistance)
                                  for i, ((t, _, _), fit) in enumerate(zip(inputs, fits))]))
    s = combined.compressibility
    basis = lab_request.pressure_basis
    applied = any(f.compressibility > 0.0 for f in fits)
    if basis == "cake" and not applied and s is not None and s > 0.0:
        basis = "total"  # alpha was evaluated on the total basis: the cycle must use it the same way
        warnings.append(
            "No compressibility consistent with the cake pressure basis was found for these tests: the "
            "resistances are evaluated on the total basis (and the values for a scenario use that basis too).")
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
        warnings.append("The values for a scenario take the compressibility as 0 because the fitted value is outside "
                        "0 ≤ s < 1.")
    if combined.medium_resistance < 0:
        warnings.append("The values for a scenario take the cloth resistance as 0 because the fitted value is "
                        "negative.")
    flags = input_warnings(lab_request, lab_request.raw, LAB_USUAL)
    out = {
        "input_warnings": [{**w, "label": _flag_label(w["field"], lab_request.tests)} for w in flags],
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


def compression_request(req: CompressionFitRequest) -> dict:
    """The /api/v1/compression-fit answer: Tiller and Leu's laws fitted to a compression-
    permeability table, their cake averages, and cake.local for a cycle (SI, checked finite)."""
    if req.csv is not None:
        try:
            rows = parse_compression(req.csv)
        except CsvError as exc:
            raise InputError([(("body", "csv"), str(exc))]) from None
        where = ("body", "csv")
    else:
        rows = [tuple(r) for r in req.points]
        where = ("body", "points")
    p, a, e = (np.array(col, dtype=float) for col in zip(*rows)) if rows else ([], [], [])
    bad = [i + 1 for i, (x, y, z) in enumerate(rows) if not (x >= 0 and y > 0 and 0 < z < 1)]
    if bad:
        raise InputError([(where, f"row {bad[0]}: stresses must be >= 0, resistances > 0 and solidosities "
                                  "between 0 and 1")])
    try:
        fit = locallaws.fit_tiller_leu(p, a, e)
    except solver.SolverInputError as exc:
        raise InputError([(where, exc.message)]) from None
    law = fit.law
    local = {"resistance_at_zero_stress": law.resistance_at_zero_stress, "resistance_exponent": law.resistance_exponent,
             "solidosity_at_zero_stress": law.solidosity_at_zero_stress,
             "solidosity_exponent": law.solidosity_exponent, "stress_scale": law.stress_scale}
    warnings = []
    spread = float(np.sqrt(np.mean(fit.residuals_resistance**2)))
    if spread > 0.2:
        warnings.append(f"The resistances scatter by about {100 * spread:.0f} % about the fitted law: "
                        "check the readings.")
    dp = np.geomspace(max(float(p[p > 0].min()) if np.any(p > 0) else 1e3, 1.0), max(float(p.max()), 1e3), 40)
    out = {
        "local": local, "stderrs": fit.stderrs, "points": [list(r) for r in rows],
        "averages": {"cake_pressure": dp.tolist(), "resistance": np.asarray(law.average_resistance(dp)).tolist(),
                     "solidosity": np.asarray(law.average_solidosity(dp)).tolist()},
        "for_cycle": {"cake": {"local": local}}, "warnings": warnings,
        "units": {"resistance_at_zero_stress": "m/kg", "resistance_exponent": "1", "solidosity_at_zero_stress": "1",
                  "solidosity_exponent": "1", "stress_scale": "Pa", "points": "[Pa, m/kg, 1]",
                  "averages.cake_pressure": "Pa", "averages.resistance": "m/kg", "averages.solidosity": "1"},
    }
    bad_path = first_non_finite(out)
    if bad_path is not None:
        raise InputError([(where, f"these rows give a result out of numeric range ({bad_path})")])
    return out
