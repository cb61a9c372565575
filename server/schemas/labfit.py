"""Schemas of POST /api/v1/lab-fit: constant-pressure lab tests in, alpha and R_m out."""

from typing import Literal

from pydantic import BaseModel, Field, field_validator, model_validator

from .common import (
    Density,
    Fraction01,
    KeepsRaw,
    LabPressure,
    SolidsFraction,
    Strict,
    Temperature,
    Viscosity,
    exactly_one,
)
from .quantities import quantity

Time = quantity("time", ge=0.0, le=1e7, description="Time since the start of filtration")
Volume = quantity("volume", ge=0.0, le=1e3, description="Cumulative filtrate volume")


class StartIn(Strict):
    time: Time = Field(description="Time at which constant pressure was reached [s]")
    volume: Volume = Field(description="Filtrate collected by then [m³]")


class LabTestIn(Strict):
    name: str | None = Field(None, max_length=120, description="A label for the test")
    pressure: LabPressure = Field(description="Pressure drop across cake and cloth [Pa]")
    area: quantity("area", ge=1e-6, le=100.0, description="Filter area of the test cell") = Field(
        description="[m²]"
    )
    viscosity: Viscosity | None = Field(None, description="Filtrate viscosity [Pa·s]")
    temperature: Temperature | None = Field(None, description="For a water-like filtrate [K]; bare numbers in °C")
    c: quantity("density", ge=1e-3, le=1e5, description="Dry solids per filtrate volume") | None = None
    c_stderr: quantity(
        "density", ge=0.0, le=1e5, description="Standard error of c, however c is given (alpha is inversely "
        "proportional to it); counted in alpha's standard error"
    ) | None = None
    # c from slurry and cake data, as in /api/v1/cycle
    solids_mass_fraction: SolidsFraction | None = None
    solids_concentration: quantity("density", ge=1e-3, le=5000.0, description="Solids per slurry volume") | None = None
    solids_density: Density | None = None
    liquid_density: Density | None = None
    moisture: Fraction01 | None = None
    wet_to_dry_ratio: quantity("fraction", gt=1.0, le=100.0, description="Wet / dry cake mass") | None = None
    porosity: Fraction01 | None = None
    # c from the test itself
    dry_cake_mass: quantity("mass", gt=0.0, le=1e4, description="Dry cake from the test") | None = None
    final_filtrate_volume: Volume | None = Field(
        None, description="Total filtrate of the test [m³]; default: the last reading"
    )
    points: list[tuple[Time, Volume] | tuple[Time, Volume, LabPressure]] | None = Field(
        None, min_length=3, max_length=20000,
        description="[time, cumulative filtrate volume] readings, or [time, volume, pressure] rows: readings "
                    "before the set pressure is reached are then the filling period",
    )
    csv: str | None = Field(
        None, max_length=1_000_000,
        description="Readings as CSV text with a header naming columns and units, e.g. 'time [min], filtrate [mL]'"
                    " (optionally 'pressure [bar]' too)",
    )
    start: StartIn | None = Field(None, description="Start of constant pressure, for tests with a filling period")
    use: tuple[int, int] | None = Field(
        None, description="0-based [first, last] readings to fit (inclusive); default: chosen automatically"
    )

    @field_validator("use", mode="before")
    @classmethod
    def _use_as_a_pair(cls, use):
        if use is not None and not (isinstance(use, list | tuple) and len(use) == 2):
            raise ValueError(f"write the first and last readings to fit, e.g. 1, 5; got {use!r}")
        return use

    @field_validator("points")
    @classmethod
    def _same_row_length(cls, points):
        if points is not None and len({len(p) for p in points}) > 1:
            raise ValueError("give every reading as [time, volume] or every reading as [time, volume, pressure]")
        return points

    @model_validator(mode="after")
    def _alternatives(self):
        exactly_one(self, ("viscosity", "temperature"))
        exactly_one(self, ("points", "csv"))
        # in words (the lab page's labels), not field names: the page shows it above the test
        ways = {
            "c": self.c is not None,
            "the slurry and cake data": self.solids_mass_fraction is not None
            or self.solids_concentration is not None,
            "the dry cake mass": self.dry_cake_mass is not None,
        }
        given = [k for k, v in ways.items() if v]
        if len(given) != 1:
            raise ValueError(
                "give the dry solids per filtrate volume c in exactly one way: c itself, the dry cake mass of "
                "the test, or the slurry and cake data (the slurry's solids as a mass fraction or as solids per "
                "slurry volume, with the cake's moisture, wet-to-dry ratio or porosity)"
                + (f"; got both {' and '.join(given)}" if len(given) == 2 else f"; got {', '.join(given)}"
                   if given else "; got none of them")
            )
        if given == ["the slurry and cake data"]:
            exactly_one(self, ("solids_mass_fraction", "solids_concentration"))
            exactly_one(self, ("moisture", "wet_to_dry_ratio", "porosity"))
            if self.solids_density is None and (self.porosity is not None or self.solids_concentration is not None):
                raise ValueError("give solids_density: porosity or solids_concentration need it")
        return self


class LabFitRequest(KeepsRaw):
    tests: list[LabTestIn] = Field(min_length=1, max_length=50)
    reference_pressure: LabPressure | None = Field(
        None, description="Pressure at which resistance_ref is given [Pa]; default: the geometric mean of the "
                          "tested pressures")
    model: Literal["classic", "three_parameter", "auto"] = Field(
        "auto", description="classic: the t/V line (printed textbook evaluations); three_parameter: t = t_d + B V + "
                            "(K_p/2) V², exact after a filling period; auto: the classic line unless a filling "
                            "period or a start offset is significant")
    pressure_basis: Literal["cake", "total"] = Field(
        "cake", description="cake: alpha belongs to the pressure across the cake, dP - mu R_m q / A (Tiller); "
                            "total: to the whole pressure drop (the textbook shortcut)")


class TestOut(BaseModel):
    name: str | None
    pressure: float = Field(description="[Pa]")
    area: float = Field(description="[m²]")
    viscosity: float = Field(description="[Pa·s]")
    c: float = Field(description="[kg/m³]")
    slope: float = Field(description="K_p/2 [s/m⁶]")
    slope_stderr: float | None = Field(description="[s/m⁶]")
    intercept: float = Field(description="B [s/m³]")
    intercept_stderr: float | None = Field(description="[s/m³]")
    r_squared: float
    resistance: float = Field(description="Specific cake resistance alpha [m/kg]")
    resistance_stderr: float | None = Field(description="[m/kg]")
    medium_resistance: float = Field(description="R_m [1/m]")
    medium_resistance_stderr: float | None = Field(description="[1/m]")
    points_used: list[int] = Field(description="0-based indices of the readings in the fit")
    residuals: list[float] = Field(description="Measured minus fitted t/V of the readings used [s/m³]")
    region: str = Field(description="How the readings were chosen")
    readings: list[tuple[float, float]] = Field(description="[t s, V m³] as read")
    line: dict = Field(description="x = V + V0 [m³], y = (t - t0)/(V - V0) [s/m³] (three-parameter model: x = V, "
                                   "y = (t - t_d)/V), used, fitted y")
    warnings: list[str]
    model: str = Field(description="classic or three_parameter: the model used")
    model_note: str = Field(description="Which model was used and why")
    resistance_medium_correlation: float | None = Field(description="Correlation of alpha and R_m [-]")
    time_offset: float | None = Field(description="t_d of the three-parameter model [s]")
    time_offset_stderr: float | None = Field(description="[s]")
    filling: dict | None = Field(description="The filling period found: readings, volume [m³], time [s], how")
    pressures: list[float] | None = Field(description="Pressure at each reading, when given [Pa]")


class LabInputWarningOut(BaseModel):
    field: str = Field(description="Path of the input, as in the request (tests.0.area)")
    label: str = Field(description="The input in words, as the lab page labels it")
    message: str = Field(description="The value in the unit typed, the usual range, and a likely slip if any")


class LabFitResponse(BaseModel):
    input_warnings: list[LabInputWarningOut] = Field(
        default_factory=list, description="Inputs outside the trade's usual range (calculated as given)")
    tests: list[TestOut]
    compressibility: float | None = Field(description="s [-]; null with one pressure")
    compressibility_stderr: float | None
    resistance_ref: float = Field(description="alpha at reference_pressure [m/kg]")
    resistance_ref_stderr: float | None
    reference_pressure: float = Field(description="[Pa]")
    medium_resistance: float = Field(description="Pooled over the tests (inverse-variance mean), or its trend's "
                                                 "value at the reference pressure [1/m]")
    medium_resistance_spread: float | None = Field(description="Sample standard deviation over the tests [1/m]")
    medium_resistance_stderr: float | None = Field(description="[1/m]")
    medium_resistance_trend: dict | None = Field(
        description="R_m = at_reference + per_log_pressure ln(dP/reference_pressure) [1/m], when the tests show a "
                    "trend with pressure")
    resistance_compressibility_correlation: float | None = Field(description="Of resistance_ref and s [-]")
    resistance_medium_correlation: float | None = Field(description="Of resistance_ref and medium_resistance [-]")
    tested_pressure_range: tuple[float, float] = Field(description="Lowest and highest test pressure [Pa]")
    pressure_basis: str = Field(description="cake or total")
    for_cycle: dict = Field(description="The cake and medium_resistance fields of an /api/v1/cycle request")
    warnings: list[str]
    units: dict[str, str]


# ---- compression-permeability tests ---------------------------------------------------

Stress = quantity("pressure", ge=0.0, le=1e9, description="Effective solids pressure")
LocalResistance = quantity("specific_resistance", gt=0.0, le=1e18, description="Local specific cake resistance")
Solidosity = quantity("fraction", gt=0.0, lt=1.0, description="Solids volume fraction of the cake")


class CompressionFitRequest(Strict):
    points: list[tuple[Stress, LocalResistance, Solidosity]] | None = Field(
        None, min_length=4, max_length=5000,
        description="[effective solids pressure, local specific resistance, solidosity] rows of a "
                    "compression-permeability cell")
    csv: str | None = Field(
        None, max_length=1_000_000,
        description="The same as CSV text with units in the header, e.g. 'stress [kPa], alpha [m/kg], "
                    "solidosity [-]' (or porosity instead of solidosity)")

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("points", "csv"))
        return self


class CompressionFitResponse(BaseModel):
    local: dict = Field(description="Tiller and Leu's parameters, as cake.local of /api/v1/cycle (SI)")
    stderrs: dict = Field(description="Standard errors of the parameters (SI)")
    points: list[tuple[float, float, float]] = Field(description="[p_s Pa, alpha m/kg, solidosity -] as read")
    averages: dict = Field(description="Cake averages against the pressure across the cake: cake_pressure [Pa], "
                                       "resistance [m/kg], solidosity [-]")
    for_cycle: dict = Field(description="The cake field of an /api/v1/cycle request")
    warnings: list[str]
    units: dict[str, str]
