"""presscycle's pure science: SI floats and numpy arrays in and out, no web imports.

Three layers, each tested on its own (see DEVELOPERS.md):

- functions: water, slurry, resistance, constant_pressure, washing, press;
- objects that hold a system: Filtration, Press, feed modes, CycleSettings, PressCase;
- the chain that runs a whole case: solve_cycle, compare_thicknesses.
"""

from .cycle import (
    CurveCycle,
    CycleResult,
    CycleSettings,
    CycleSolution,
    EndCriterion,
    PressCase,
    compare_thicknesses,
    curve_cycle_for,
    numeric_optimum_volume,
    solve_cycle,
)
from .errors import SolverInputError
from .feeds import ConstantPressure, ConstantRate, Filtration, PressureSteps, PumpCurve
from .press import Press, filter_area_from_plates

SOLVER_VERSION = "0.1.0"

__all__ = [
    "SOLVER_VERSION",
    "ConstantPressure",
    "ConstantRate",
    "CurveCycle",
    "EndCriterion",
    "PressureSteps",
    "PumpCurve",
    "CycleResult",
    "CycleSettings",
    "CycleSolution",
    "Filtration",
    "Press",
    "PressCase",
    "SolverInputError",
    "compare_thicknesses",
    "curve_cycle_for",
    "filter_area_from_plates",
    "numeric_optimum_volume",
    "solve_cycle",
]
