"""Saving scenarios: validate and solve the inputs, keep them as entered with their results."""

import math

from pydantic import ValidationError

from . import solver
from .errors import InputError
from .schemas.cycle import CycleRequest
from .solve import solve
from .storage import Scenario, ScenarioStore

SUMMARY_KEYS = ("filtration_time", "cycle_time", "filtrate_throughput", "solids_throughput", "chamber_fill",
                "filtrate_volume", "limited_by")


def validate_inputs(inputs: dict, prefix=("body", "inputs")) -> CycleRequest:
    """An /api/v1/cycle request from stored or imported inputs; errors point inside ``inputs``."""
    try:
        return CycleRequest.model_validate(inputs)
    except ValidationError as exc:
        raise InputError.from_validation(exc, prefix) from None


def solve_inputs(inputs: dict, prefix=("body", "inputs")) -> dict:
    """Results of stored inputs as the current solver gives them, with their chart series."""
    request = validate_inputs(inputs, prefix)
    try:
        solved = solve(request, with_chart_series=True)
    except InputError as exc:
        raise exc.within(prefix) from None
    return {**solved.results, "chart_series": solved.chart_series}


def summary_of(results: dict) -> dict:
    best = results["best"]
    out = {k: best[k] for k in SUMMARY_KEYS}
    out["chamber_thickness"] = results["derived"]["chamber_volume"] * 2 / results["derived"]["filter_area"]
    return out


def save(store: ScenarioStore, name: str, note: str, inputs: dict, parent: str | None) -> Scenario:
    if parent is not None and store.get(parent) is None:
        raise InputError([(("body", "parent"), f"no saved scenario {parent!r}")])
    results = solve_inputs(inputs)
    return store.create(name.strip(), note.strip(), inputs, results, solver.SOLVER_VERSION, parent,
                        summary_of(results))


def differences(saved: dict, now: dict, rel: float = 1e-9) -> list[tuple[str, float, float]]:
    """Key figures where the current solver no longer gives the saved numbers."""
    out = []
    for section in ("best", "unconstrained_optimum", "chambers_full"):
        for key, old in saved.get(section, {}).items():
            new = now.get(section, {}).get(key)
            if isinstance(old, float) and isinstance(new, float):
                if not math.isclose(old, new, rel_tol=rel, abs_tol=1e-300):
                    out.append((f"{section}.{key}", old, new))
            elif old != new:
                out.append((f"{section}.{key}", old, new))
    return out
