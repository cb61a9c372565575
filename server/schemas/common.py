"""What every schema family shares: strict models, "give exactly one of", and the quantity
types used by more than one resource (each defined once, with its allowed range)."""

from pydantic import BaseModel, ConfigDict, PrivateAttr, model_validator

from .quantities import quantity

Fraction01 = quantity("fraction", gt=0.0, lt=1.0, description="Fraction")
SolidsFraction = quantity("fraction", ge=1e-6, lt=1.0, description="Solids mass fraction of the slurry")
DENSITY_MIN, DENSITY_MAX = 100.0, 25000.0  # kg/m^3: from light organics to the densest solids
Density = quantity("density", ge=DENSITY_MIN, le=DENSITY_MAX, description="Density")
Viscosity = quantity("viscosity", ge=1e-5, le=10.0, description="Viscosity")
Temperature = quantity("temperature", gt=273.15, lt=373.15, description="Temperature")
#: A pressure on a press: feed, relief, wash, terminal and reference pressures.
PressPressure = quantity("pressure", ge=100.0, le=1e8, description="Pressure")
#: A lab test's pressure: small test cells and vacuum leaves run far below press pressures.
LabPressure = quantity("pressure", ge=1.0, le=1e8, description="Pressure")


class Strict(BaseModel):
    """Unknown fields are refused (a misspelt field must not pass silently)."""

    model_config = ConfigDict(extra="forbid")


class KeepsRaw(Strict):
    """A request that keeps itself as sent (``raw``: the units a person typed, for the flags of
    unusual values, plausibility.input_warnings)."""

    #: the request as sent; not a field
    _raw: dict = PrivateAttr(default_factory=dict)

    @model_validator(mode="wrap")
    @classmethod
    def _keep_raw(cls, data, handler):
        model = handler(data)
        if isinstance(data, dict):
            model.__pydantic_private__["_raw"] = data
        return model

    @property
    def raw(self) -> dict:
        """The request as sent (for the units a person typed), read from the private store
        itself: pydantic's look-up of a private attribute costs microseconds (issue 12)."""
        return self.__pydantic_private__["_raw"]


def exactly_one(model: BaseModel, names: tuple[str, ...], required: bool = True) -> None:
    """Refuse a model that gives more than one (or, if required, none) of ``names``."""
    given = [n for n in names if getattr(model, n) is not None]
    listing = " or ".join(names)
    if len(given) > 1:
        raise ValueError(f"give only one of {listing}; got {' and '.join(given)}")
    if required and not given:
        raise ValueError(f"give one of {listing}")


class ErrorOut(BaseModel):
    """Every refusal other than a 422 (which lists the fields): a message in words."""

    detail: str


#: The refusals any API route may give, declared in the OpenAPI schema.
ERROR_RESPONSES = {
    400: {"model": ErrorOut, "description": "The body could not be read (not JSON, not UTF-8)"},
    403: {"model": ErrorOut, "description": "A write from another web origin"},
    404: {"model": ErrorOut, "description": "No such scenario"},
    408: {"model": ErrorOut, "description": "The body did not arrive in time"},
    413: {"model": ErrorOut, "description": "The body is larger than the limit"},
    415: {"model": ErrorOut, "description": "The body is not of the media type the route takes"},
    503: {"model": ErrorOut, "description": "The saved scenarios cannot be used just now (read-only or damaged)"},
    507: {"model": ErrorOut, "description": "The disk holding the saved scenarios is full"},
}
