"""Saving scenarios: validate and solve the inputs, keep them as entered with their results;
and drawing a saved one again.

A scenario is stored compact (schema 2): inputs as entered, its results without the curves
and chart series, its summary, solver version and parent. The curves and chart series are a
deterministic function of the inputs and the solver version, so the page recomputes them
(:func:`redraw`); under the solver that saved the scenario they are the saved ones. A record
migrated from schema 1 under another solver version kept its own series and is drawn from them.
"""

import math
from dataclasses import dataclass

from pydantic import ValidationError

from . import solver
from .errors import InputError
from .schemas.cycle import CycleRequest
from .schemas.plan import PlanRequest
from .solve import solve
from .store import SERIES_KEYS, Scenario, ScenarioStore, compact

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


def check_plan(inputs: dict, plan: dict) -> None:
    """Plan inputs saved with a scenario must make a valid plan request with its inputs."""
    if "inputs" in plan:
        raise InputError([(("body", "plan", "inputs"), "the plan takes the scenario's inputs: leave inputs out")])
    try:
        PlanRequest.model_validate({**plan, "inputs": inputs})
    except ValidationError as exc:
        raise InputError.from_validation(exc, ("body", "plan")) from None


def summary_of(results: dict) -> dict:
    best = results["best"]
    out = {k: best[k] for k in SUMMARY_KEYS}
    out["chamber_thickness"] = results["derived"]["chamber_volume"] * 2 / results["derived"]["filter_area"]
    return out


def save(store: ScenarioStore, name: str, note: str, inputs: dict, parent: str | None,
         plan: dict | None = None) -> Scenario:
    if parent is not None and store.get(parent) is None:
        raise InputError([(("body", "parent"), f"no saved scenario {parent!r}")])
    results = solve_inputs(inputs)
    if plan is not None:
        check_plan(inputs, plan)
        results["plan_inputs"] = plan  # kept with the results (stored as they are): no new column
    return store.create(name.strip(), note.strip(), inputs, compact(results), solver.SOLVER_VERSION, parent,
                        summary_of(results))


@dataclass(frozen=True)
class Redrawn:
    """A saved scenario made whole again for its page, API answer and comparisons."""

    #: the saved results with curves and chart series
    results: dict
    #: key figures the current solver gives differently: (figure, saved, now)
    changed: list
    #: the results the charts are drawn with: the saved ones, or the current solver's when it
    #: changed the figures (its curves must not be marked with another solver's optimum)
    chart_results: dict | None
    #: "saved": curves and charts are the saved ones (stored, or recomputed by the same solver
    #: to the same figures); "current": redrawn by the current solver, which gives other
    #: figures; None: the current solver refuses the inputs and nothing was stored to draw
    series_from: str | None


def redraw(s: Scenario) -> Redrawn:
    """The saved results with their curves and chart series, and what the current solver changed."""
    try:
        now = solve_inputs(s.inputs)
    except InputError:
        now = None
    changed = differences(s.results, now) if now is not None else [("inputs", "valid when saved",
                                                                    "refused by this version")]
    if all(k in s.results for k in SERIES_KEYS):  # kept at migration: drawn as saved
        return Redrawn(s.results, changed, s.results, "saved")
    if now is None:
        return Redrawn(s.results, changed, None, None)
    results = {**s.results, **{k: now[k] for k in SERIES_KEYS}}
    if changed:
        return Redrawn(results, changed, now, "current")
    return Redrawn(results, changed, results, "saved")


#: figures that agree to this are the same: six significant figures, more than any page shows (a
#: faster solver path may move an optimum's place by round-off at the scan's resolution, ~1e-8)
SAME_FIGURE = 1e-6


def differences(saved: dict, now: dict, rel: float = SAME_FIGURE) -> list[tuple[str, float, float]]:
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
