"""Schemas of POST /api/v1/press-log: a plant log and a scenario in, cake, cloth and trends out."""

from pydantic import BaseModel, Field, model_validator

from .common import Density, Strict, exactly_one
from .quantities import quantity

#: Largest log text [characters]: 1,000 cycles of 2,000 rows of three columns fit with room.
MAX_LOG_CHARS = 150_000_000


class SaveIn(Strict):
    name: str = Field(min_length=1, max_length=120, description="Name of the calibrated copy")
    note: str = Field("", max_length=2000, description="Note; default: the source log summarised")


class PressLogRequest(Strict):
    csv: str = Field(
        min_length=1, max_length=MAX_LOG_CHARS,
        description="The log as CSV text with a header naming columns and units: a time ('time [s]', or "
                    "'timestamp' with ISO 8601 dates), the feed pressure ('feed pressure [bar]') and one of filtrate "
                    "flow ('filtrate flow [L/min]'), cumulative filtrate volume ('filtrate volume [L]') or filtrate "
                    "mass ('filtrate mass [kg]'); optionally 'cycle'. Commas, semicolons or tabs; a decimal comma "
                    "when the separator is not a comma")
    scenario_id: str | None = Field(None, max_length=40, description="A saved scenario giving c, mu and the area")
    inputs: dict | None = Field(None, description="An /api/v1/cycle request giving c, mu and the area, instead of "
                                                  "scenario_id")
    filtrate_density: Density | None = Field(None, description="For a filtrate mass column [kg/m³]")
    ignore_columns: list[str] | None = Field(None, max_length=100, description="Header cells of columns to leave "
                                                                               "out (other columns are refused)")
    exclude_cycles: list[int] | None = Field(None, max_length=100_000, description="Cycle numbers left out of the "
                                                                                   "fits and trends")
    cloth_washes: list[int] | None = Field(
        None, max_length=100_000,
        description="Cycle numbers that ran on a freshly washed cloth; default: detected as drops in R_m")
    cloth_wash_time: quantity("time", gt=0.0, le=1e6, description="One cloth wash") | None = Field(
        None, description="[s]; default: the scenario's cycle.downtime_parts.cloth_wash.time")
    gap: quantity("time", gt=0.0, le=1e7, description="A pause in the log") | None = Field(
        None, description="A pause longer than this starts a cycle (and is refused within a filtration) [s]; "
                          "default: 20 log steps, at least 60 s")
    pressure_on_share: float = Field(
        0.05, ge=0.005, le=0.5, description="Filtration runs while the pressure is above this share of the cycle's "
                                            "highest [-]")
    chart_cycle: int | None = Field(None, description="The cycle number drawn; default: the last fitted")
    save: SaveIn | None = Field(None, description="Save a calibrated copy of the scenario (its parent the saved "
                                                  "scenario, when scenario_id is given)")

    @model_validator(mode="after")
    def _one_scenario(self):
        exactly_one(self, ("scenario_id", "inputs"))
        return self


class TrendOut(BaseModel):
    slope: float = Field(description="Per cycle (Theil-Sen)")
    slope_low: float = Field(description="95 % interval of the slope, low end")
    slope_high: float = Field(description="95 % interval of the slope, high end")
    intercept: float
    scatter: float = Field(description="1.4826 x median absolute deviation about the line")


class CycleFitOut(BaseModel):
    number: int
    excluded: bool
    start_time: float = Field(description="Start of filtration since the first row [s]")
    start_date: str | None = Field(None, description="Start of filtration as a date (logs with timestamps)")
    cycle_time: float | None = Field(None, description="To the next cycle's start [s]")
    filtration_time: float | None = Field(None, description="[s]")
    filtrate_volume: float | None = Field(None, description="[m³]")
    mean_pressure: float | None = Field(None, description="[Pa]")
    max_pressure: float | None = Field(None, description="[Pa]")
    resistance: float | None = Field(None, description="alpha (at the reference pressure) [m/kg]")
    resistance_stderr: float | None = Field(None, description="[m/kg]")
    medium_resistance: float | None = Field(None, description="R_m [1/m]")
    medium_resistance_stderr: float | None = Field(None, description="[1/m]")
    resistance_medium_correlation: float | None = None
    r_squared: float | None = Field(None, description="Of the integrated form")
    residual_rms: float | None = Field(None, description="Of int dP dt [Pa·s]")
    rows: int | None = None
    throughput: float | None = Field(None, description="Filtrate per cycle time [m³/s]")
    after_wash: bool | None = None
    left_out: list[str] | None = Field(None, description="Why the cycle's fit is left out of the summaries "
                                                         "(physically invalid); none when it counts")
    medium_resistance_start_bound: float | None = Field(
        None, description="How much too high R_m may be if the feed started up to one log step before the first "
                          "row under pressure: the cake resistance of the first step's filtrate [1/m]")
    residual_pattern: bool | None = Field(None, description="The fit's residuals follow a pattern, not noise "
                                                            "(its standard errors are widened)")


class WashIntervalOut(BaseModel):
    best: int = Field(description="Cycles between washes of highest average throughput (brute force)")
    classic: float = Field(description="sqrt(2 t_w / delta) [cycles]")
    wash_time: float = Field(description="[s]")
    filtrate_volume: float = Field(description="The cycle held from wash to wash (the log's median) [m³]")
    first_increase: float = Field(description="delta: cycle time added per cycle [s]")


class ClothOut(BaseModel):
    washes: list[int]
    washes_from: str
    growth_per_cycle: float = Field(description="[1/m per cycle]")
    growth_per_cycle_stderr: float
    relative_growth_per_cycle: float | None
    clean_resistance: float = Field(description="[1/m]")
    clean_resistance_stderr: float
    current_resistance: float = Field(description="[1/m]")
    cycles_since_wash: int
    wash_interval: WashIntervalOut | None
    resolved: bool = Field(True, description="The log's step resolves the cloth resistance (else no wash interval)")


class LeftOutOut(BaseModel):
    number: int
    reasons: list[str]


class PlantOut(BaseModel):
    resistance: float = Field(description="alpha, the median over the valid cycles (at reference_pressure) [m/kg]")
    resistance_stderr: float = Field(description="Its standard error: from the cycles' scatter (MAD), at least "
                                                 "their own errors over sqrt(n) [m/kg]")
    medium_resistance: float = Field(description="R_m of a freshly washed cloth [1/m]")
    medium_resistance_stderr: float = Field(description="With the start of feeding's uncertainty [1/m]")
    reference_pressure: float = Field(description="[Pa]")
    compressibility: float = Field(description="s, the scenario's [-]")
    pressure_basis: str
    cycles_used: int = Field(description="Cycles in the plant values, trends and cloth blinding")
    cycles_left_out: list[LeftOutOut] = Field([], description="Fitted cycles left out of every summary, and why")
    medium_resistance_resolved: bool = Field(True, description="The log's step resolves R_m")
    medium_resistance_start_share: float = Field(0.0, description="R_m's possible excess from the start of feeding, "
                                                                  "as a share of R_m (the median cycle) [-]")
    log_step: float = Field(0.0, description="The log's step at the start of filtration (median) [s]")
    log_step_needed: float | None = Field(None, description="A step that would resolve R_m [s]")


class CalibrationOut(BaseModel):
    from_lab_fit: bool = Field(description="The scenario carries standard errors, as a lab fit gives them")
    lab_resistance: float = Field(description="The scenario's alpha [m/kg]")
    lab_medium_resistance: float = Field(description="The scenario's R_m [1/m]")
    resistance_ratio: float = Field(description="Plant / scenario alpha [-]")
    resistance_ratio_stderr: float = Field(description="[-]")
    medium_resistance_ratio: float | None = Field(description="Plant (clean cloth) / scenario R_m [-]")
    medium_resistance_ratio_stderr: float | None = Field(description="[-]")


class LogChecksOut(BaseModel):
    chambers_full_volume: float = Field(description="Filtrate at which the scenario's chambers are full [m^3]")
    cycles_beyond_chambers: list[int] = Field(description="Cycles whose filtrate is more than 3 times that: a unit "
                                                          "slip in the flow, volume or mass column")
    max_pressure: float = Field(description="The highest feed pressure of the cycles in the summaries [Pa]")
    scenario_feed_pressure: float | None = Field(description="The scenario's highest feed pressure [Pa]")
    calibration_withheld: bool = Field(description="The log's values cannot be what their headers say: no "
                                                   "calibrated_inputs and nothing saved")
    warnings: list[str] = Field([], description="What these checks found, in words (also first in the answer's "
                                                "warnings); the page shows them above the results")


class PressLogResponse(BaseModel):
    cycles_found: int
    how_found: str
    rows: int
    columns: dict
    separator: str
    decimal: str
    signal: str
    scenario: dict
    cycles: list[CycleFitOut]
    trend: dict[str, TrendOut]
    alpha_drift: dict
    cloth: ClothOut
    plant: PlantOut
    calibration: CalibrationOut
    model: dict
    chart_cycle: dict
    calibrated_inputs: dict | None
    log_checks: LogChecksOut | None = None
    saved: dict | None
    warnings: list[str]
    cautions: list[str]
    units: dict
