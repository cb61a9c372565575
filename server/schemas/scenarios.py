"""Schemas of /api/v1/scenarios: saved, immutable scenarios."""

from pydantic import BaseModel, Field, field_validator

from .cycle import Strict


class ScenarioIn(Strict):
    name: str = Field(min_length=1, max_length=120, description="A short name")
    note: str = Field("", max_length=2000, description="Who made it and why")
    inputs: dict = Field(description="An /api/v1/cycle request, kept as entered (with its units)")
    parent: str | None = Field(None, max_length=40, description="The scenario this one was copied from")
    plan: dict | None = Field(None, description="Plan inputs saved with the scenario: a /api/v1/plan request "
                                                "without its inputs (target, spares, shift, temperatures, ...)")

    @field_validator("name")
    @classmethod
    def _named(cls, name: str) -> str:
        """A name of spaces only would be saved empty, and the list could not link to it."""
        if not name.strip():
            raise ValueError("must not be blank: give the scenario a short name")
        return name


class ScenarioCreated(BaseModel):
    id: str
    link: str


class ScenarioOut(BaseModel):
    id: str
    name: str
    note: str
    created: str = Field(description="ISO 8601, UTC")
    inputs: dict
    results: dict = Field(description=(
        "As computed when saved (SI); its curves and chart_series are recomputed from the inputs by the "
        "solver_version that saved them, or by the current solver when that gives other figures"))
    solver_version: str
    parent: str | None
    link: str
    plan: dict | None = Field(None, description="Plan inputs saved with the scenario, as entered")


class ScenarioSummary(BaseModel):
    id: str
    name: str
    note: str
    created: str
    link: str
    summary: dict = Field(description="Key figures of the best cycle (SI)")


class ScenarioList(BaseModel):
    items: list[ScenarioSummary]
    page: int | None = Field(description="The page number asked for (1 without page or cursor; null with a cursor)")
    pages: int
    total: int = Field(description="Scenarios in the list (matching q); with `total_exact` false, more than this match")
    total_exact: bool = Field(True, description="False when a search found more matches than it counts (5,000)")
    first: int | None = Field(None, description=(
        "Place of the first item in the whole list, 1 for the newest (null when not known: a search "
        "with more matches than it counts)"))
    q: str
    next: str | None = Field(None, description="Cursor of the next (older) page; pass it as `cursor`. Null at the end")
    previous: str | None = Field(None, description="Cursor of the previous (newer) page; null on the first page")
