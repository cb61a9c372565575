"""presscycle's pure science: SI floats and numpy arrays in and out, no web imports.

Three layers, each tested on its own (see DEVELOPERS.md):

- functions: water, slurry, resistance, constant_pressure, washing, press;
- objects that hold a system: Filtration, Press, feed modes, CycleSettings, PressSystem;
- the chain that runs a whole scenario: solve_cycle, compare_thicknesses, chart_series.
"""

from . import planning
from .cycle import (
    CycleFamily,
    CycleResult,
    CycleSettings,
    CycleSolution,
    EndCriterion,
    PressSystem,
    compare_thicknesses,
    cycle_family_for,
    numeric_optimum_volume,
    solve_cycle,
    thickness_rows,
)
from .errors import SolverInputError
from .feeds import ConstantPressure, ConstantRate, Filtration, PressureSteps, PumpCurve
from .press import Press, filter_area_from_plates
from .sweeps import chart_series

SOLVER_VERSION = "0.2.1"  # 0.2.0: the cake pressure basis by default; 0.2.1: a pump's exact supply (issue 12)

__all__ = [
    "SOLVER_VERSION",
    "ConstantPressure",
    "ConstantRate",
    "CycleFamily",
    "EndCriterion",
    "PressureSteps",
    "PumpCurve",
    "CycleResult",
    "CycleSettings",
    "CycleSolution",
    "Filtration",
    "Press",
    "PressSystem",
    "SolverInputError",
    "chart_series",
    "compare_thicknesses",
    "cycle_family_for",
    "thickness_rows",
    "filter_area_from_plates",
    "numeric_optimum_volume",
    "planning",
    "solve_cycle",
]
