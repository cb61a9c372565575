"""Schemas of POST /api/v1/cycle: a press cycle scenario (its inputs) and its results.

Inputs take numbers in SI base units or strings with units ("5 bar"); results are in
SI base units, listed in the response's ``units`` map. Each feed mode and cycle setting is
declared here once: its model converts itself to the solver object (``to_solver``), and the
list of feed modes is read off the ``FeedIn`` union.
"""

from typing import Annotated, ClassVar, Literal, get_args

from pydantic import BaseModel, Field, PrivateAttr, TypeAdapter, field_validator, model_validator

from ..solver import cycle as solver_cycle
from ..solver import feeds as solver_feeds
from ..solver import planning as solver_planning
from ..solver import press as solver_press
from ..solver import stages as solver_stages
from ..solver.blowing import Blow
from ..solver.errors import inputs_of
from ..solver.expression import Squeeze
from ..solver.locallaws import TillerLeu
from ..solver.washquality import WashModel
from .common import (
    Density,
    Fraction01,
    KeepsRaw,
    LabPressure,
    PressPressure,
    SolidsFraction,
    Strict,
    Temperature,
    Viscosity,
    exactly_one,
)
from .quantities import quantity

Length = quantity("length", ge=1e-3, le=0.5, description="Chamber thickness")


class SlurryIn(Strict):
    solids_mass_fraction: SolidsFraction | None = Field(
        None, description="Solids mass fraction of the slurry [-], e.g. \"12 %\""
    )
    solids_concentration: quantity(
        "density", ge=1e-3, le=5000.0, description="Dry solids per volume of slurry"
    ) | None = None
    solids_per_liquid: quantity(
        "density", ge=1e-3, le=25000.0,
        description="Dry solids per volume of slurry liquid (e.g. g of solids per L of water)"
    ) | None = None
    solids_density: Density | None = Field(
        None, description="Density of the dry solids [kg/m³]; may be left out when the cake is given by its dry "
                          "bulk density with its moisture or wet-to-dry ratio (a saturated cake then fixes it)"
    )
    liquid_density: Density | None = Field(
        None, description="Filtrate density [kg/m³]; default water at the temperature, or 998 kg/m³"
    )
    viscosity: Viscosity | None = Field(None, description="Filtrate viscosity [Pa·s]")
    temperature: Temperature | None = Field(
        None, description="Slurry temperature for a water-like filtrate [K]; bare numbers in °C"
    )

    @model_validator(mode="after")
    def _alternatives(self):
        exactly_one(self, ("solids_mass_fraction", "solids_concentration", "solids_per_liquid"))
        exactly_one(self, ("viscosity", "temperature"))
        return self


class LocalLawsIn(Strict):
    """Tiller and Leu's local laws from a compression-permeability cell."""

    resistance_at_zero_stress: quantity(
        "specific_resistance", ge=1e5, le=1e17, description="alpha_0 in alpha(p_s) = alpha_0 (1 + p_s/p_a)^n"
    ) = Field(description="[m/kg]")
    resistance_exponent: quantity(
        "fraction", ge=0.0, lt=2.0, description="n [-]", unit_hint=False) = Field(description="[-]")
    solidosity_at_zero_stress: quantity(
        "fraction", gt=0.0, lt=1.0, description="eps_s0 in eps_s(p_s) = eps_s0 (1 + p_s/p_a)^beta"
    ) = Field(description="Solids volume fraction at no stress [-]")
    solidosity_exponent: quantity(
        "fraction", ge=0.0, lt=1.0, description="beta [-]", unit_hint=False) = Field(description="[-]")
    stress_scale: LabPressure = Field(description="p_a [Pa]")

    def to_solver(self) -> TillerLeu:
        return TillerLeu(self.resistance_at_zero_stress, self.resistance_exponent, self.solidosity_at_zero_stress,
                         self.solidosity_exponent, self.stress_scale)


class CakeIn(Strict):
    resistance: quantity(
        "specific_resistance", ge=1e5, le=1e17,
        description="Average specific cake resistance at the reference pressure",
    ) | None = Field(None, description="alpha_ref [m/kg]; required unless local is given")
    resistance_stderr: quantity(
        "specific_resistance", ge=0.0, le=1e17, description="Standard error of resistance, e.g. from a lab fit"
    ) | None = None
    reference_pressure: LabPressure | None = Field(
        None, description="Pressure at which resistance applies [Pa] (from 1 Pa: alpha_0 dP^s is often "
                          "tabulated at 1 lbf/ft^2); needed when compressibility > 0"
    )
    compressibility: quantity(
        "fraction", ge=0.0, lt=1.0, description="Cake compressibility s in alpha = alpha_ref (dP/p_ref)^s",
        unit_hint=False,
    ) = 0.0
    compressibility_stderr: quantity(
        "fraction", ge=0.0, le=1.0, description="Standard error of compressibility, e.g. from a lab fit",
        unit_hint=False,
    ) | None = None
    pressure_basis: Literal["cake", "total"] = Field(
        "cake", description="cake: the resistance belongs to the pressure across the cake, dP - mu R_m q / A "
                            "(Tiller); total: to the whole pressure drop (the textbook shortcut)")
    tested_pressure_range: tuple[LabPressure, LabPressure] | None = Field(
        None, description="Lowest and highest pressure of the lab tests [Pa]: a warning says when the press runs "
                          "outside them")
    local: LocalLawsIn | None = Field(
        None, description="Local laws from a compression-permeability cell, instead of resistance, "
                          "compressibility and porosity (the cake's averages then follow the pressure)")
    moisture: Fraction01 | None = Field(None, description="Liquid mass / wet cake mass [-]")
    wet_to_dry_ratio: quantity(
        "fraction", gt=1.0, le=100.0, description="Wet cake mass / dry cake mass"
    ) | None = None
    porosity: Fraction01 | None = Field(None, description="Cake void fraction [-]")
    dry_bulk_density: quantity(
        "density", ge=1.0, le=25000.0, description="Dry solids mass per cake volume; alone (with the solids "
        "density), or with moisture or wet_to_dry_ratio (then the solids density may be left out)"
    ) | None = None

    @model_validator(mode="after")
    def _alternatives(self):
        if self.local is not None:
            extra = [n for n in ("resistance", "resistance_stderr", "reference_pressure", "compressibility_stderr",
                                 "moisture", "wet_to_dry_ratio", "porosity", "dry_bulk_density")
                     if getattr(self, n) is not None] + (["compressibility"] if self.compressibility else [])
            if extra:
                raise ValueError(f"local gives the cake's resistance and solidosity: leave out {' and '.join(extra)}")
            return self
        if self.resistance is None:
            raise ValueError("give resistance (with compressibility and reference_pressure for a compressible cake), "
                             "or local")
        if self.dry_bulk_density is not None and self.porosity is None:
            exactly_one(self, ("moisture", "wet_to_dry_ratio"), required=False)
        else:
            exactly_one(self, ("moisture", "wet_to_dry_ratio", "porosity", "dry_bulk_density"))
        if self.compressibility > 0.0 and self.reference_pressure is None:
            raise ValueError(
                "give reference_pressure: with compressibility above 0 the resistance "
                "is only defined at a stated pressure"
            )
        if self.tested_pressure_range is not None and self.tested_pressure_range[0] > self.tested_pressure_range[1]:
            raise ValueError("tested_pressure_range is [lowest, highest]: the first must not exceed the second")
        return self


class PressIn(Strict):
    filter_area: quantity(
        "area", ge=1e-3, le=1e4, description="Total filter area, both faces of every chamber"
    ) | None = None
    plate_face_area: quantity(
        "area", ge=1e-3, le=50.0, description="Filtering area of one chamber face"
    ) | None = None
    chambers: int | None = Field(None, ge=1, le=1000, description="Number of chambers [-]")
    chamber_thickness: Length = Field(description="Chamber (frame) thickness [m]")
    fill_fraction: quantity(
        "fraction", ge=0.01, le=1.0, description="Fraction of the chamber volume the cake may fill"
    ) = 1.0

    @model_validator(mode="after")
    def _geometry(self):
        plates = self.plate_face_area is not None or self.chambers is not None
        if self.filter_area is not None and plates:
            raise ValueError("give either filter_area or plate_face_area with chambers, not both")
        if self.filter_area is None:
            if not plates:
                raise ValueError("give filter_area, or plate_face_area with chambers")
            if self.plate_face_area is None or self.chambers is None:
                raise ValueError("plate_face_area and chambers go together: give both")
        return self

    def to_solver(self) -> solver_press.Press:
        area = self.filter_area
        if area is None:
            area = solver_press.filter_area_from_plates(self.plate_face_area, self.chambers)
        return solver_press.Press(area, self.chamber_thickness, self.fill_fraction)


Flow = quantity("flow", ge=1e-9, le=100.0, description="Filtrate flow")
PumpFlow = quantity("flow", ge=0.0, le=100.0, description="Pump flow")
Duration = quantity("time", gt=0.0, le=1e6, description="Step duration")


class FeedModeIn(Strict):
    """What every feed mode's model shares."""

    #: its cycles are in closed form: a request solves in well under a millisecond, without
    #: the hop to a worker thread (budget.within_budget)
    closed_form: ClassVar[bool] = False


class ConstantPressureFeedIn(FeedModeIn):
    closed_form: ClassVar[bool] = True
    mode: Literal["constant_pressure"]
    pressure: PressPressure = Field(description="Pressure drop across cake and cloth [Pa]")

    def to_solver(self) -> solver_feeds.ConstantPressure:
        return solver_feeds.ConstantPressure(self.pressure)


class ConstantRateFeedIn(FeedModeIn):
    mode: Literal["constant_rate"]
    flow: Flow = Field(description="Set flow of a positive-displacement pump [m³/s]")
    max_pressure: PressPressure = Field(description="Relief or set pressure, then held [Pa]")

    def to_solver(self) -> solver_feeds.ConstantRate:
        return solver_feeds.ConstantRate(self.flow, self.max_pressure)


class PumpCurveFeedIn(FeedModeIn):
    mode: Literal["pump_curve"]
    points: list[tuple[PumpFlow, PressPressure]] = Field(
        min_length=2, max_length=5000,
        description="Centrifugal pump curve as [flow, pressure] pairs; pressure must fall as flow rises",
    )
    max_pressure: PressPressure | None = Field(None, description="Relief pressure [Pa]")

    def to_solver(self) -> solver_feeds.PumpCurve:
        return solver_feeds.PumpCurve(tuple(self.points), self.max_pressure)


class PressureStepsFeedIn(FeedModeIn):
    mode: Literal["pressure_steps"]
    steps: list[tuple[PressPressure, Duration]] = Field(
        min_length=1, max_length=100,
        description="[pressure, duration] steps in order; the last step is held",
    )

    def to_solver(self) -> solver_feeds.PressureSteps:
        return solver_feeds.PressureSteps(tuple(self.steps))


#: The feed modes: to add one, write its model above (``mode`` literal + ``to_solver``) and
#: list it here; FEED_MODES, the error messages and the API schema follow from this union.
FEED_MODELS = ConstantPressureFeedIn | ConstantRateFeedIn | PumpCurveFeedIn | PressureStepsFeedIn
FeedIn = Annotated[FEED_MODELS, Field(discriminator="mode")]
FEED_MODES = tuple(get_args(m.model_fields["mode"].annotation)[0] for m in get_args(FEED_MODELS))


class EndIn(Strict):
    criterion: Literal[solver_cycle.END_CRITERIA] = Field(
        "best", description="How filtration ends: best throughput, full chambers, a time, a flow or a pressure"
    )
    time: quantity("time", gt=0.0, le=1e6, description="Filtration time") | None = None
    flow: Flow | None = Field(None, description="End when the filtrate flow falls below this [m³/s]")
    flow_per_area: quantity(
        "flux", gt=0.0, le=1.0, description="End when flow per filter area falls below this"
    ) | None = None
    flow_fraction: Fraction01 | None = Field(
        None, description="End when flow falls below this share of the initial flow"
    )
    pressure: PressPressure | None = Field(None, description="End at this terminal feed pressure [Pa]")

    @model_validator(mode="after")
    def _threshold(self):
        names = solver_cycle.END_THRESHOLDS.get(self.criterion, ())
        if names:
            exactly_one(self, names)
        extra = [n for group in solver_cycle.END_THRESHOLDS.values() for n in group
                 if n not in names and getattr(self, n) is not None]
        if extra:
            raise ValueError(f"{' and '.join(extra)} do not apply to the {self.criterion!r} end criterion")
        return self

    def to_solver(self) -> solver_cycle.EndCriterion:
        return solver_cycle.EndCriterion(self.criterion, self.time, self.flow, self.flow_per_area,
                                         self.flow_fraction, self.pressure)


class ClothWashIn(Strict):
    time: quantity("time", gt=0.0, le=1e6, description="One cloth wash") = Field(description="[s]")
    every_cycles: Annotated[int, Field(ge=1, le=100_000)] | Literal["best"] = Field(
        description="Cycles between cloth washes, or \"best\": the interval of highest average throughput "
                    "(needs cloth.resistance_growth_per_cycle)"
    )


class DowntimePartsIn(Strict):
    fixed: quantity(
        "time", ge=1.0, le=1e6, description="Open, close and start of discharge, every cycle"
    ) = Field(description="[s]")
    per_chamber: quantity(
        "time", ge=0.0, le=1e4, description="Plate shifting and discharge per chamber (needs press.chambers)"
    ) = 0.0
    cloth_wash: ClothWashIn | None = Field(None, description="Cloth washing, shared over its interval")

    def to_solver(self) -> solver_planning.DowntimeParts:
        w = self.cloth_wash
        every = None if w is None or w.every_cycles == "best" else w.every_cycles
        return solver_planning.DowntimeParts(self.fixed, self.per_chamber, w.time if w else 0.0,
                                             every if w else 1)


class SqueezeIn(Strict):
    """A membrane squeeze after filtration (Terzaghi–Voigt expression model)."""

    pressure: PressPressure = Field(description="Membrane (squeeze) pressure [Pa]")
    time: quantity("time", gt=0.0, le=1e6, description="Squeeze duration") | None = Field(
        None, description="[s]; or consolidation; neither: the optimum chooses it under specs.max_moisture")
    consolidation: quantity("fraction", gt=0.0, lt=1.0, description="Average consolidation ratio U_c to squeeze to") \
        | None = Field(None, description="[-]")
    consolidation_coefficient: quantity(
        "diffusivity", gt=1e-14, le=1e-2, description="Modified consolidation coefficient C_e, from a lab squeeze test"
    ) = Field(description="[m²/s]")
    creep_fraction: quantity("fraction", ge=0.0, lt=1.0, description="Creep (secondary consolidation) share B") = 0.0
    creep_rate: quantity("rate", gt=0.0, le=10.0, description="Creep rate eta") | None = Field(
        None, description="[1/s]; needed when creep_fraction > 0")
    final_porosity: Fraction01 | None = Field(
        None, description="The cake's equilibrium porosity under the squeeze pressure [-]")
    final_moisture: Fraction01 | None = Field(
        None, description="The cake's equilibrium moisture under the squeeze pressure (liquid / wet cake mass) [-]")

    @model_validator(mode="after")
    def _choices(self):
        exactly_one(self, ("time", "consolidation"), required=False)
        exactly_one(self, ("final_porosity", "final_moisture"))
        if self.creep_fraction > 0.0 and self.creep_rate is None:
            raise ValueError("a creep share (creep_fraction) above 0 needs its creep rate (creep_rate, 1/s or 1/min)")
        return self

    def to_solver(self, porosity: float, wet_to_dry_ratio: float) -> Squeeze:
        """The squeeze, its equilibrium as a void ratio from the cake after filtration."""
        if self.final_porosity is not None:
            e_inf = self.final_porosity / (1.0 - self.final_porosity)
        else:  # liquid per solids is proportional to the void ratio in a saturated cake
            e0 = porosity / (1.0 - porosity)
            X = self.final_moisture / (1.0 - self.final_moisture)
            e_inf = X * e0 / (wet_to_dry_ratio - 1.0)
        return Squeeze(self.pressure, self.consolidation_coefficient, e_inf, self.time, self.consolidation,
                       self.creep_fraction, self.creep_rate or 0.0)


class DispersionWashIn(Strict):
    model: Literal["dispersion"]
    dispersion_number: quantity("fraction", gt=0.0, le=1e4, description="D_n = u L / D_L of the cake") = Field(
        description="[-]; from a lab wash test (washate concentration against wash ratio)")

    def to_solver(self) -> WashModel:
        return WashModel("dispersion", dispersion_number=self.dispersion_number)


class EfficiencyWashIn(Strict):
    model: Literal["efficiency"]
    efficiency: Fraction01 = Field(description="Wash efficiency E: (1 - E)^N of the solute remains after N pore "
                                               "volumes [-]")

    def to_solver(self) -> WashModel:
        return WashModel("efficiency", efficiency=self.efficiency)


WashModelIn = Annotated[DispersionWashIn | EfficiencyWashIn, Field(discriminator="model")]


class WashTargetIn(Strict):
    solute_removal: Fraction01 | None = Field(None, description="Wash until this share of the solute is removed [-]")
    solute_remaining: Fraction01 | None = Field(
        None, description="Wash until this share of the solute remains in the cake [-]")

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("solute_removal", "solute_remaining"))
        return self

    @property
    def removal(self) -> float:
        return self.solute_removal if self.solute_removal is not None else 1.0 - self.solute_remaining


BlowTime = quantity("time", ge=0.0, le=1e6, description="Lab blow time")


class BlowIn(Strict):
    """An air blow, from a lab blow curve at the press's blow pressure."""

    curve: list[tuple[BlowTime, Fraction01]] = Field(
        min_length=2, max_length=500, description="Lab blow curve as [time, cake moisture] pairs; time rising, "
                                                  "moisture not rising")
    lab_thickness: quantity("length", ge=1e-4, le=0.5, description="Thickness of the lab cake") = Field(
        description="[m]")
    pressure: PressPressure | None = Field(None, description="Blow pressure (the lab curve's) [Pa], for the record")
    time: quantity("time", gt=0.0, le=1e6, description="Blow duration") | None = Field(
        None, description="[s]; or target_moisture; neither: the optimum chooses it under specs.max_moisture")
    target_moisture: Fraction01 | None = Field(None, description="Blow until the cake has this moisture [-]")

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("time", "target_moisture"), required=False)
        return self

    def to_solver(self) -> Blow:
        return Blow(tuple(t for t, _ in self.curve), tuple(m for _, m in self.curve), self.lab_thickness,
                    self.time, self.target_moisture, self.pressure)


class SpecsIn(Strict):
    max_moisture: Fraction01 | None = Field(None, description="Discharged cake moisture at most [-]")
    min_solute_removal: Fraction01 | None = Field(
        None, description="Share of the cake liquor's solute the wash must remove, at least [-]")

    def to_solver(self) -> solver_stages.Specs:
        return solver_stages.Specs(self.max_moisture, self.min_solute_removal)


FillTime = quantity("time", ge=0.0, le=1e5, description="Filling the chambers before filtration")

#: the request keys that put each stage in the order given
_STAGE_KEYS = {"wash_ratio": "wash", "wash_target": "wash", "wash_model": "wash", "squeeze": "squeeze",
               "blow": "blow"}


class CycleIn(Strict):
    downtime: quantity(
        "time", ge=1.0, le=1e6, description="Open, discharge, clean, close per cycle"
    ) | None = Field(None, description="[s]; or give downtime_parts")
    downtime_parts: DowntimePartsIn | None = Field(
        None, description="Downtime from its parts (fixed, per chamber, cloth wash), instead of downtime"
    )
    wash_ratio: quantity(
        "fraction", ge=0.0, le=100.0, description="Wash volume per filtrate volume (or per cake pore volume)"
    ) = 0.0
    wash_basis: Literal["filtrate", "cake_pores"] = Field(
        "filtrate", description="What wash_ratio counts: filtrate volumes, or cake pore volumes (displacement washes)"
    )
    washing: Literal["through", "simple"] = Field(
        "through", description="through: wash rate 1/4 of final rate; simple: equal to it"
    )
    wash_pressure: PressPressure | None = Field(None, description="[Pa]; default: the filtration pressure")
    wash_viscosity: Viscosity | None = Field(None, description="[Pa·s]; default: the filtrate's")
    end: EndIn = Field(default_factory=lambda: EndIn(), description="How filtration ends; default: best")
    wash_model: WashModelIn | None = Field(
        None, description="How the wash removes solute: dispersion (dispersion_number) or efficiency; gives the "
                          "solute removal, and is needed for wash_target and specs.min_solute_removal")
    wash_target: WashTargetIn | None = Field(
        None, description="Wash until a share of the solute is removed (instead of wash_ratio)")
    squeeze: SqueezeIn | None = Field(None, description="Membrane squeeze after filtration")
    blow: BlowIn | None = Field(None, description="Air blow, the last stage")
    stages: list[Literal[solver_stages.STAGES]] | None = Field(
        None, max_length=3, description="Order of the stages after filtration, e.g. [\"squeeze\", \"wash\", "
                                        "\"blow\"]; default: the order they are given in the request")
    specs: SpecsIn | None = Field(None, description="What the discharged cake must meet; the best cycle meets them "
                                                    "at the highest throughput")
    fill_time: float | Literal["pump"] | None = Field(
        None, description="Filling the chambers before filtration [s] (a number in s or a string with a unit, "
                          "0 to 1e5 s); \"pump\": the chambers and manifold filled at the pump's highest flow "
                          "(pump-fed presses); default: no separate filling time",
        json_schema_extra={"x-si-unit": "s"})
    manifold_volume: quantity("volume", ge=0.0, le=100.0, description="Feed pipes and manifold filled with "
                                                                      "the chambers") = 0.0

    @field_validator("fill_time", mode="before")
    @classmethod
    def _fill_time(cls, value):
        """"pump" (any case), or a time checked as every time is (one clear message)."""
        if value is None or (isinstance(value, str) and value.strip().lower() == "pump"):
            return None if value is None else "pump"
        return TypeAdapter(FillTime).validate_python(value)

    #: the stage order as the request gave it (key order), when ``stages`` is not given
    _given_order: tuple = PrivateAttr(default=())

    @model_validator(mode="wrap")
    @classmethod
    def _key_order(cls, data, handler):
        model = handler(data)
        if isinstance(data, dict):
            seen = []
            for key in data:
                stage = _STAGE_KEYS.get(key)
                if stage and stage not in seen:
                    seen.append(stage)
            model.__pydantic_private__["_given_order"] = tuple(seen)
        return model

    @model_validator(mode="before")
    @classmethod
    def _wash_model_kind(cls, data):
        """A wash model given by its parameter alone ({"dispersion_number": 8}, as the editor
        sends it) names its model by that parameter."""
        if isinstance(data, dict) and isinstance(data.get("wash_model"), dict) and "model" not in data["wash_model"]:
            given = [m for m, key in (("dispersion", "dispersion_number"), ("efficiency", "efficiency"))
                     if key in data["wash_model"]]
            if len(given) == 1:
                data = {**data, "wash_model": {"model": given[0], **data["wash_model"]}}
        return data

    @model_validator(mode="after")
    def _one_downtime(self):
        exactly_one(self, ("downtime", "downtime_parts"))
        if self.wash_target is not None and self.wash_ratio:
            raise ValueError("give the wash as wash_ratio or as wash_target, not both")
        return self

    @property
    def adds_stages(self) -> bool:
        """Stages beyond a plain wash (squeeze, blow, wash quality, specifications, filling):
        their free durations are searched, so the request is not bounded like a closed form."""
        return any(getattr(self, n) is not None for n in ("squeeze", "blow", "wash_model", "wash_target", "specs",
                                                           "fill_time"))

    @property
    def order(self) -> tuple:
        """The stages after filtration in their order: as listed, else as given in the request."""
        if self.stages is not None:
            return tuple(self.stages)
        # read from the private store itself: pydantic's own look-up of a private attribute
        # raises and catches an AttributeError on the way (microseconds; issue 12)
        given = self.__pydantic_private__["_given_order"]
        return given + tuple(s for s in solver_stages.STAGES if s not in given)

    def to_solver(self, downtime: float | None = None, porosity: float = 0.5, wet_to_dry_ratio: float = 2.0,
                  fill_flow: float | None = None) -> solver_cycle.CycleSettings:
        """The cycle settings; ``downtime`` [s] as worked out from downtime_parts, if given; the
        cake after filtration (porosity, wet-to-dry ratio) for a squeeze's equilibrium given
        as a moisture; ``fill_flow`` [m^3/s] the pump's highest flow for fill_time "pump"."""
        def part(name, build):
            if getattr(self, name) is None:
                return None
            with inputs_of(name):
                return build()

        return solver_cycle.CycleSettings(
            downtime=self.downtime if downtime is None else downtime, wash_ratio=self.wash_ratio, washing=self.washing,
            wash_pressure=self.wash_pressure, wash_viscosity=self.wash_viscosity, wash_basis=self.wash_basis,
            wash_model=part("wash_model", lambda: self.wash_model.to_solver()),
            wash_removal_target=self.wash_target.removal if self.wash_target is not None else None,
            wash_target_field="wash_target.solute_remaining" if self.wash_target is not None
            and self.wash_target.solute_remaining is not None else "wash_target.solute_removal",
            squeeze=part("squeeze", lambda: self.squeeze.to_solver(porosity, wet_to_dry_ratio)),
            blow=part("blow", lambda: self.blow.to_solver()),
            order=self.order, specs=part("specs", lambda: self.specs.to_solver()),
            fill_time=self.fill_time if isinstance(self.fill_time, float) else 0.0,
            fill_flow=fill_flow if self.fill_time == "pump" else None, manifold_volume=self.manifold_volume,
        )


class TargetIn(Strict):
    solids_throughput: quantity(
        "mass_rate", gt=0.0, le=1e4, description="Required dry solids, averaged over the day"
    ) | None = None
    filtrate_throughput: quantity(
        "flow", gt=0.0, le=100.0, description="Required filtrate, averaged over the day"
    ) | None = None
    hours_per_day: quantity(
        "hours", ge=0.1, le=24.0, description="Hours a day the press runs (availability)"
    ) = Field(24.0, description="[h/day]; default 24")

    @model_validator(mode="after")
    def _one(self):
        exactly_one(self, ("solids_throughput", "filtrate_throughput"))
        return self


class ClothIn(Strict):
    resistance_growth_per_cycle: quantity(
        "medium_resistance", ge=0.0, le=1e14, description="Cloth resistance added per cycle since the last cloth wash"
    ) = Field(description="[1/m]")


class CycleRequest(KeepsRaw):
    @property
    def solves_in_closed_form(self) -> bool:
        """Its cycles are in closed form (a constant-pressure feed on a basis where the closed
        form holds): a request solves in well under a millisecond."""
        k = self.cake
        incompressible = k.local.resistance_exponent == 0.0 if k.local is not None else k.compressibility == 0.0
        return self.feed.closed_form and not self.cycle.adds_stages and not solver_feeds.cake_basis_applies(
            k.pressure_basis, self.medium_resistance, incompressible)

    slurry: SlurryIn
    cake: CakeIn
    medium_resistance: quantity(
        "medium_resistance", ge=0.0, le=1e15, description="Filter medium (cloth) resistance R_m; 0 neglects it"
    ) = Field(description="[1/m]")
    medium_resistance_stderr: quantity(
        "medium_resistance", ge=0.0, le=1e15, description="Standard error of medium_resistance"
    ) | None = None
    resistance_medium_correlation: float | None = Field(
        None, ge=-1.0, le=1.0, description="Correlation of the errors of cake.resistance and medium_resistance "
                                           "(a lab fit gives it; strongly negative for one t/V line) [-]")
    cloth: ClothIn | None = Field(None, description="Cloth wear between cloth washes")
    press: PressIn
    feed: FeedIn
    cycle: CycleIn
    compare_thicknesses: list[Length] = Field(
        default_factory=list, max_length=50, description="Chamber thicknesses to compare [m]"
    )
    target: TargetIn | None = Field(None, description="A production target to check the press against")


# ---- responses -------------------------------------------------------------------


class DerivedOut(BaseModel):
    feed_mode: str
    c: float = Field(description="Dry solids deposited per filtrate volume [kg/m³]")
    cake_volume_ratio: float = Field(description="Cake volume per filtrate volume [-]")
    porosity: float = Field(description="Cake porosity [-]")
    wet_to_dry_ratio: float = Field(description="Wet cake mass / dry cake mass [-]")
    moisture: float = Field(description="Cake moisture, liquid / wet cake mass [-]")
    solids_mass_fraction: float = Field(description="Solids mass fraction of the slurry [-]")
    liquid_density: float = Field(description="[kg/m³]")
    viscosity: float = Field(description="Filtrate viscosity [Pa·s]")
    resistance_at_feed: float = Field(description="Specific cake resistance at the feed pressure [m/kg]")
    pressure_basis: str | None = Field(
        None, description="cake: the resistance belongs to the pressure across the cake; total: to the whole drop")
    filter_area: float = Field(description="[m²]")
    chamber_volume: float = Field(
        description="Total chamber volume A L / 2 [m³] (A counts both faces of every chamber)")
    chamber_volume_each: float | None = Field(
        None, description="Volume of one chamber [m³]; null when the press is given by its total filter area")
    solids_density: float = Field(description="Solids density, as given or fixed by the cake [kg/m³]")
    dry_bulk_density: float = Field(description="Cake dry bulk density, dry solids per cake volume [kg/m³]")
    chambers_full_volume: float = Field(description="Filtrate volume when the chambers are full [m³]")
    cake_constant: float | None = Field(description="K_p in t = K_p V²/2 + B V [s/m⁶]")
    medium_constant: float | None = Field(description="B in t = K_p V²/2 + B V [s/m³]")
    matched_chamber_thickness: float = Field(
        description="Chamber thickness that the cake just fills at the unconstrained optimum [m]"
    )
    throughput_gain_unconstrained: float = Field(
        description="Unconstrained optimum throughput / best feasible throughput - 1 [-]"
    )
    downtime: float | None = Field(None, description="Downtime per cycle, from its parts when given [s]")
    cloth_wash_every_cycles: int | None = Field(
        None, description="Cycles between cloth washes (the best interval when asked for) [-]")


class CycleOut(BaseModel):
    filtrate_volume: float = Field(description="Filtrate per cycle [m³]")
    filtration_time: float = Field(description="[s]")
    wash_volume: float = Field(description="[m³]")
    wash_time: float = Field(description="[s]")
    downtime: float = Field(description="[s]")
    cycle_time: float = Field(description="Filtration + wash + downtime [s]")
    filtrate_throughput: float = Field(description="Filtrate per unit time over whole cycles [m³/s]")
    solids_throughput: float = Field(description="Dry solids per unit time [kg/s]")
    cake_thickness: float = Field(description="Cake thickness on each face [m]")
    chamber_fill: float = Field(description="Cake volume / chamber volume [-]")
    dry_cake_mass: float = Field(description="Dry cake per cycle [kg]")
    wet_cake_mass: float = Field(description="Wet cake per cycle [kg]")
    final_rate: float = Field(description="Filtrate flow at the end of filtration [m³/s]")
    final_pressure: float = Field(description="Pressure at the end of filtration [Pa]")
    limited_by: Literal["optimum", "chambers_full"]
    feasible: bool = Field(description="The cake fits in the chambers (within fill_fraction)")
    fill_time: float = Field(0.0, description="Filling before filtration [s]")
    squeeze_time: float = Field(0.0, description="Membrane squeeze [s]")
    blow_time: float = Field(0.0, description="Air blow [s]")
    squeeze_filtrate_volume: float = Field(0.0, description="Liquid expressed by the squeeze per cycle [m³]")
    consolidation: float | None = Field(None, description="Average consolidation ratio U_c the squeeze reaches [-]")
    wash_pore_volumes: float | None = Field(None, description="Wash ratio in cake pore volumes (at wash time) [-]")
    wash_filtrate_volumes: float | None = Field(None, description="Wash volume / filtrate volume [-]")
    solute_removal: float | None = Field(
        None, description="Share of the cake liquor's solute the wash removes (with a wash model) [-]")
    moisture: float | None = Field(None, description="Moisture of the discharged cake, liquid / wet cake mass [-]")
    cake_thickness_final: float | None = Field(None, description="Cake thickness per face at discharge [m]")
    meets_specs: bool | None = Field(None, description="Every specification met (null: none given)")


class AtEndOut(CycleOut):
    limited_by: str = Field(description="Same as end_reason")
    end_reason: Literal["optimum", "chambers_full", "time", "flow", "pressure"]
    throughput_ratio_to_best: float = Field(description="Filtrate throughput / that of the best cycle [-]")


class CurvesOut(BaseModel):
    time: list[float] = Field(description="[s]")
    filtrate_volume: list[float] = Field(description="[m³]")
    pressure: list[float] = Field(description="[Pa]")
    flow: list[float] = Field(description="Filtrate flow [m³/s]")
    cake_thickness: list[float] = Field(description="Per face [m]")


class ThicknessOut(BaseModel):
    chamber_thickness: float = Field(description="[m]")
    best: CycleOut
    chambers_full: CycleOut


class UncertaintyOut(BaseModel):
    filtrate_throughput: tuple[float, float] = Field(description="Low and high best throughput [m³/s]")
    solids_throughput: tuple[float, float] = Field(description="[kg/s]")
    filtration_time: tuple[float, float] = Field(description="Shortest and longest best filtration time [s]")
    cycle_time: tuple[float, float] = Field(description="[s]")
    basis: str


class SpecOut(BaseModel):
    required: float = Field(description="[-]")
    achieved: float | None = Field(description="At the best cycle [-]")
    met: bool
    binds: bool = Field(description="The specification sets the best cycle (a stage lengthened or the end volume "
                                    "limited for it)")


class SpecsOut(BaseModel):
    max_moisture: SpecOut | None = None
    min_solute_removal: SpecOut | None = None


class TargetOut(BaseModel):
    quantity: Literal["solids_throughput", "filtrate_throughput"]
    required: float = Field(description="Required, averaged over the day [kg/s or m³/s]")
    achieved: float = Field(description="This press at its best cycle, averaged over the day [kg/s or m³/s]")
    ratio: float = Field(description="achieved / required [-]")
    meets: bool
    presses_needed: int = Field(description="Presses like this one that meet the target")
    hours_per_day: float = Field(description="[h]")


class InputWarningOut(BaseModel):
    field: str = Field(description="Path of the input, as in the request")
    message: str = Field(description="The value in the unit typed, the usual range, and a likely slip if any")


class CycleResponse(BaseModel):
    input_warnings: list[InputWarningOut] = Field(
        default_factory=list, description="Inputs outside the trade's usual range (calculated as given)"
    )
    target: TargetOut | None = None
    derived: DerivedOut
    uncertainty: UncertaintyOut | None = Field(
        None, description="Range of the best cycle over resistance ± its standard error (when given)"
    )
    best: CycleOut
    unconstrained_optimum: CycleOut
    chambers_full: CycleOut
    at_end: AtEndOut
    curves: CurvesOut
    thickness_comparison: list[ThicknessOut]
    stage_order: list[str] = Field(description="The cycle's stages in order: fill, filtration, the stages after "
                                               "it, downtime")
    specs: SpecsOut | None = Field(None, description="Each specification at the best cycle (when given)")
    warnings: list[str]
    cautions: list[str]
    units: dict[str, str]
    solver_version: str
