"""Schemas of POST /api/v1/plan: a production plan for a scenario (its inputs) and its answer.

Rates per day are given as rates ("120 t/day", "40 m^3/day") and kept in SI per second;
the answer is SI, listed in its ``units`` map.
"""

from typing import Literal

from pydantic import BaseModel, Field, model_validator

from .common import Strict, Temperature, exactly_one
from .cycle import CycleRequest
from .quantities import quantity

#: Inputs a plan may give a range for, and the kind of quantity each takes.
RANGE_KINDS = {
    "slurry.solids_mass_fraction": "fraction",
    "slurry.temperature": "temperature",
    "slurry.viscosity": "viscosity",
    "cake.resistance": "specific_resistance",
    "cake.compressibility": "fraction",
    "cake.moisture": "fraction",
    "cake.wet_to_dry_ratio": "fraction",
    "cake.porosity": "fraction",
    "medium_resistance": "medium_resistance",
    "feed.pressure": "pressure",
    "cycle.downtime": "time",
    "cycle.wash_ratio": "fraction",
}


#: The largest targets a plan takes: dry solids [kg/s], slurry or filtrate [m^3/s].
MAX_SOLIDS_RATE, MAX_FLOW = 1e5, 100.0


class PlanTargetIn(Strict):
    dry_solids_per_day: quantity(
        "mass_rate", gt=0.0, le=MAX_SOLIDS_RATE, description="Dry solids to process, averaged over every calendar day"
    ) | None = None
    slurry_per_day: quantity(
        "flow", gt=0.0, le=MAX_FLOW, description="Slurry to process, averaged over every calendar day"
    ) | None = None
    filtrate_per_day: quantity(
        "flow", gt=0.0, le=MAX_FLOW, description="Filtrate to produce, averaged over every calendar day"
    ) | None = None
    hours_per_day: quantity(
        "hours", ge=0.1, le=24.0, description="Hours a working day the presses run"
    ) = 24.0  # a quantity, as the cycle target's: its refusal names the unit ("at most 24 h")
    days_per_week: float = Field(7.0, ge=1.0, le=7.0, description="Working days a week [-]")
    availability: quantity(
        "fraction", gt=0.0, le=1.0, description="Fraction of running hours the press is actually cycling"
    ) = 1.0
    margin: quantity("fraction", ge=0.0, le=10.0, description="Extra capacity asked for") = 0.0
    pump_efficiency: quantity("fraction", gt=0.0, le=1.0, description="Feed pump efficiency") = 0.5

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("dry_solids_per_day", "slurry_per_day", "filtrate_per_day"))
        return self


class ShiftIn(Strict):
    length: quantity("time", ge=600.0, le=86400.0, description="Length of a shift") = Field(description="[s]")
    whole_cycles: bool = Field(True, description="Only whole cycles in a shift (none crosses its end)")


class PlanRequest(Strict):
    inputs: CycleRequest = Field(description="A /api/v1/cycle request: the scenario to plan for")
    target: PlanTargetIn
    spares: int = Field(1, ge=0, le=100, description="Spare presses on top of those needed [-]")
    shift: ShiftIn | None = None
    temperatures: list[Temperature] = Field(
        default_factory=list, max_length=12, description="Season temperatures of the slurry [K]; bare numbers in °C"
    )
    samples: int = Field(10_000, ge=0, le=100_000, description="Monte Carlo samples (0: none) [-]")
    seed: int = Field(1, ge=0, le=2**32 - 1, description="Seed of the Monte Carlo (the same seed, the same answer)")
    ranges: dict[str, list[float | str]] = Field(
        default_factory=dict, max_length=len(RANGE_KINDS),
        description="Uncertain inputs: path -> [low, high] or [low, high, \"triangular\"] (default uniform); "
                    f"paths: {', '.join(RANGE_KINDS)}",
    )


# ---- responses -------------------------------------------------------------------


class Percentiles(BaseModel):
    p10: float
    p50: float
    p90: float


class ScheduleOut(BaseModel):
    shift_length: float = Field(description="[s]")
    cycles_per_shift: int = Field(description="Whole cycles of the best schedule [-]")
    cycle_time: float = Field(description="Each cycle of that schedule [s]")
    filtrate_volume: float = Field(description="Filtrate per cycle [m³]")
    throughput: float = Field(description="Averaged over the shift, on the target's basis [kg/s or m³/s]")
    cost: float = Field(description="Throughput lost against the unrestricted best cycle [-]")
    cycles_at_best: int = Field(description="Whole unrestricted best cycles that fit a shift [-]")


class SeasonOut(BaseModel):
    temperature: float = Field(description="[K]")
    viscosity: float = Field(description="[Pa·s]")
    throughput: float = Field(description="Best throughput, target basis [kg/s or m³/s]")
    presses_needed: int
    target_met: bool = Field(description="The planned presses (without spares) meet the target")


class ClothOut(BaseModel):
    resistance_growth_per_cycle: float = Field(description="[1/m]")
    first_increase: float = Field(description="Second cycle after a wash minus the first [s]")
    best_interval: int = Field(description="Cloth-wash interval of highest average throughput, brute force [cycles]")
    classic_interval: float = Field(description="sqrt(2 t_w / delta) [cycles]")
    interval_used: int | None = Field(description="The interval in the inputs (or the best) [cycles]")
    cycle_number: list[int]
    cycle_time: list[float] = Field(description="Of each cycle after a wash [s]")
    interval: list[int]
    average_throughput: list[float] = Field(description="Over an interval of that many cycles, target basis")


class EnergyOut(BaseModel):
    per_cycle: float = Field(description="Feed pump energy per cycle [J]")
    per_dry_solids: float = Field(description="[J/kg] of dry solids")
    pump_efficiency: float


class TornadoOut(BaseModel):
    input: str
    label: str
    unit: str = Field(description="The SI unit of low and high (\"-\": a fraction)")
    low: float = Field(description="The input's low value, SI")
    high: float = Field(description="The input's high value, SI")
    throughput_low: float = Field(description="Best throughput with the input low [target basis]")
    throughput_high: float
    variance_share: float | None = Field(description="First-order share of the spread of presses needed [-]")


class SensitivityOut(BaseModel):
    tornado: list[TornadoOut]
    measure_next: str = Field(description="What to measure next, in words")


class UncertaintyPlanOut(BaseModel):
    samples: int
    seed: int
    throughput: Percentiles = Field(description="Best throughput [target basis]")
    presses_needed: Percentiles
    probability_target_met: float = Field(description="Share of samples in which the planned presses meet the target")
    probability_target_met_with_spare: float
    histogram_edges: list[float]
    histogram_counts: list[int]
    notes: list[str]


class PlanResponse(BaseModel):
    basis: Literal["dry_solids", "slurry", "filtrate"]
    temperature: float | None = Field(
        description="The scenario's own slurry temperature, at which every figure but the seasons' is worked "
                    "out [K]; null when the scenario gives the filtrate viscosity instead")
    viscosity: float = Field(
        description="The filtrate viscosity of those figures: the scenario's, or water's at its temperature [Pa·s]")
    required: float = Field(description="Throughput needed while cycling [kg/s or m³/s]")
    throughput: float = Field(description="One press, as planned (whole cycles when asked) [kg/s or m³/s]")
    best_throughput: float = Field(description="One press at its best cycle [kg/s or m³/s]")
    presses_needed: int
    presses_with_spare: int
    utilisation: float = Field(description="Of each needed press [-]")
    needed_per_press: float = Field(
        description="Best throughput each needed press must reach (the charts' mark) [kg/s or m³/s]")
    chambers_needed: int | None = Field(
        description="The fewest chambers of the scenario's plate size with which one press alone meets the target "
                    "(downtime per chamber counted) [-]; null without plates or beyond 1,000")
    schedule: ScheduleOut | None
    seasons: list[SeasonOut]
    cloth: ClothOut | None
    energy: EnergyOut
    uncertainty: UncertaintyPlanOut | None
    sensitivity: SensitivityOut | None
    warnings: list[str]
    cautions: list[str]
    units: dict[str, str]
