"""Schemas of POST /api/v1/squeeze-fit: a lab piston-press squeeze test in, C_e, creep and the
squeezed cake out."""

from typing import Literal

from pydantic import BaseModel, Field, model_validator

from .common import Density, KeepsRaw, PressPressure, exactly_one
from .labfit import LabInputWarningOut
from .quantities import quantity

Time = quantity("time", ge=0.0, le=1e7, description="Time since the squeeze pressure was applied")
Thickness = quantity("length", gt=0.0, le=1.0, description="Cake thickness")
Expressed = quantity("volume", ge=0.0, le=10.0, description="Cumulative liquid expressed since the squeeze began")


class SqueezeFitRequest(KeepsRaw):
    name: str | None = Field(None, max_length=120, description="A label for the test")
    pressure: PressPressure = Field(description="Squeeze (piston or membrane) pressure of the test [Pa]; carried to "
                                                "the scenario, where the press must squeeze at the same pressure")
    dry_solids_mass: quantity("mass", gt=0.0, le=1000.0, description="Dry solids of the lab cake")
    solids_density: Density
    area: quantity("area", ge=1e-6, le=100.0, description="Area of the lab cake (piston)")
    drained_faces: Literal[1, 2] = Field(
        1, description="Faces the liquid leaves by: 1 (an impervious piston or base) or 2 (cloth on both faces); "
                       "the drainage length is the solids thickness over this number")
    initial_thickness: quantity("length", gt=0.0, le=1.0, description="Cake thickness when the squeeze starts; "
                                "needed with expressed-liquid readings") | None = None
    liquid_density: Density | None = Field(None, description="Density of the liquid [kg/m³], for the moisture; "
                                                             "default 1000 kg/m³")
    creep: bool = Field(True, description="Fit the creep (secondary consolidation) fraction B and rate eta; false: "
                                          "B = 0 (Terzaghi alone)")
    thickness_readings: list[tuple[Time, Thickness]] | None = Field(
        None, min_length=3, max_length=20000, description="[time, cake thickness] readings")
    filtrate_readings: list[tuple[Time, Expressed]] | None = Field(
        None, min_length=3, max_length=20000, description="[time, cumulative expressed liquid] readings "
                                                          "(needs initial_thickness)")
    csv: str | None = Field(
        None, max_length=1_000_000,
        description="Readings as CSV text with a header naming columns and units: 'time [min], thickness [mm]' or "
                    "'time [s], filtrate [mL]'")

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("thickness_readings", "filtrate_readings", "csv"))
        return self


class SqueezeFitResponse(BaseModel):
    input_warnings: list[LabInputWarningOut] = Field(
        default_factory=list, description="Inputs outside the trade's usual range (calculated as given)")
    name: str | None
    pressure: float = Field(description="[Pa]")
    measured: Literal["thickness", "filtrate"] = Field(description="What the readings are")
    consolidation_coefficient: float = Field(description="C_e [m²/s]")
    consolidation_coefficient_stderr: float | None = Field(description="[m²/s]")
    creep_fraction: float = Field(description="B [-]")
    creep_fraction_stderr: float | None
    creep_rate: float = Field(description="eta [1/s]; 0 without creep")
    creep_rate_stderr: float | None = Field(description="[1/s]")
    initial_thickness: float = Field(description="Cake thickness when the squeeze starts, L_0 [m]")
    initial_thickness_stderr: float | None = Field(description="[m]; null when given")
    final_thickness: float = Field(description="Equilibrium thickness under the squeeze pressure, L_inf [m]")
    final_thickness_stderr: float | None = Field(description="[m]")
    solids_thickness: float = Field(description="omega = m_s / (rho_s A), solids volume per area [m]")
    initial_void_ratio: float
    final_void_ratio: float
    initial_porosity: float
    final_porosity: float = Field(description="Equilibrium porosity under the squeeze pressure [-]")
    final_porosity_stderr: float | None
    final_moisture: float = Field(description="Liquid / wet cake mass at equilibrium [-]")
    r_squared: float
    consolidation_at_last: float = Field(description="U_c at the last reading [-]: how far the test went")
    correlation: dict[str, float] = Field(description="Correlations of the fitted C_e, B and eta [-]")
    readings: list[tuple[float, float]] = Field(description="[t s, thickness m or expressed liquid m³] as read")
    fitted: list[float] = Field(description="The model at the readings [m or m³]")
    residuals: list[float] = Field(description="Measured minus fitted [m or m³]")
    curve: dict[str, list[float]] = Field(description="The fitted model on a time grid: time [s], value [m or m³]")
    for_cycle: dict = Field(description="The squeeze fields of an /api/v1/cycle request (cycle.squeeze), SI")
    warnings: list[str]
    units: dict[str, str]
