"""What the service takes and gives: request and response models (pydantic).

A run request is a :class:`~tripsim.scenario.Scenario` as JSON, with stored inputs by
id (or given inline) instead of file names, and without output files: the service keeps
the results.  The option tables (``conditions``, ``solar``, ``drive``, ``plan.options``,
``fleet``) are tripsim's own option models, so they are checked once, with the same
ranges and messages as on the command line.
"""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from tripsim.drive import DriveOptions
from tripsim.energy import Conditions, SolarOptions
from tripsim.plan.search import PlanOptions
from tripsim.scenario import FleetSpec

__all__ = ["FleetRequest", "InputOut", "JobOut", "PlanRequest", "Problem", "RunOut",
           "SimulationRequest"]

#: Ids of stored things: a prefix and 12 hex digits.
ID_PATTERN = r"^[a-z]{2,4}-[0-9a-f]{12}$"
StoredId = Annotated[str, Field(pattern=ID_PATTERN, description="a stored input's id",
                                examples=["rte-3f9a0c1b2d4e"])]
Name = Annotated[str, Field(min_length=1, max_length=200)]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)


class RouteRef(_Strict):
    """A stored route, optionally with alternatives (plans on a road network)."""

    id: StoredId
    alternatives: int = Field(1, ge=1, le=5, description="plan on this many alternative "
                              "routes (a route on an OSM network between two waypoints)")
    name: Name | None = Field(None, description="the route's name in reports")


class InlineRoute(_Strict):
    """A route given in the request as GeoJSON (a LineString, or a Feature of one)."""

    geojson: dict[str, Any] = Field(..., description="GeoJSON LineString, Feature or "
                                    "FeatureCollection (speed limits in `maxspeed`, "
                                    "elevation as the third coordinate)")
    segment_m: float = Field(25.0, ge=1.0, le=500.0, description="longest segment [m]")
    smooth_m: float = Field(40.0, ge=0.0, le=2000.0, description="elevation smoothing σ [m]")
    name: Name | None = None


class WeatherRef(_Strict):
    """Weather: a stored weather file by id, or ``clear-sky`` with a cloud share."""

    source: str = Field(..., min_length=1, max_length=40,
                        description='a stored weather id, or "clear-sky"')
    cloud: float = Field(0.0, ge=0.0, le=1.0, description="cloud share for clear-sky, 0-1")


class InlineSite(_Strict):
    """A charging site or lodging given in the request (the columns of the CSV files)."""

    lat: float = Field(..., ge=-90.0, le=90.0)
    lon: float = Field(..., ge=-180.0, le=180.0)
    name: Name
    connector: str | None = Field(None, max_length=200,
                                  description="connectors separated by ';' (type2, "
                                  "type2_combo, chademo, ...)")
    power_kw: float | None = Field(None, ge=0.5, le=1000.0, description="per port [kW]")
    ports: int | None = Field(None, ge=1, le=500)
    hours: str | None = Field(None, max_length=500, description="OSM opening_hours")


Sites = Annotated[list[InlineSite], Field(min_length=1, max_length=5000)]


class PlanInputs(_Strict):
    """Where the chargers and beds are, and the planner's options."""

    chargers: StoredId | Sites = Field(..., description="a stored charger set, or sites")
    lodging: StoredId | Sites | None = Field(None, description="stored lodgings, or places")
    options: PlanOptions = Field(default_factory=PlanOptions)
    speed_factors: list[Annotated[float, Field(ge=0.2, le=2.0)]] = Field(
        [], max_length=12, description="driver speed factors to compare")


class _RunRequest(_Strict):
    name: Name | None = Field(None, description="a name for reports")
    route: StoredId | RouteRef | InlineRoute = Field(
        ..., description="a stored route (id), with options, or inline GeoJSON")
    vehicle: StoredId | dict[str, Any] = Field(
        ..., description="a stored vehicle (id), or the vehicle file's tables as JSON")
    start_soc: float | None = Field(None, gt=0.0, le=1.0,
                                    description="state of charge at departure, 0-1")
    speed_kph: float | None = Field(None, ge=1.0, le=200.0,
                                    description="speed on roads with no known limit [km/h]")
    conditions: Conditions = Field(default_factory=Conditions)
    weather: StoredId | Literal["clear-sky"] | WeatherRef | None = None
    solar: SolarOptions = Field(default_factory=SolarOptions)
    drive: DriveOptions = Field(default_factory=DriveOptions)


Depart = Annotated[str | None, Field(
    None, max_length=64, description="departure, ISO 8601; without an offset, local time "
    "of the route; default 2026-06-21 08:00 local", examples=["2026-07-14T08:00:00-02:00"])]


class SimulationRequest(_RunRequest):
    """A simulation: drive a route with a vehicle."""

    depart: Depart = None
    battery_model: Literal["energy", "rint"] = "energy"


class PlanRequest(_RunRequest):
    """A charging plan."""

    depart: Depart = None
    plan: PlanInputs


class FleetRequest(_RunRequest):
    """A fleet year: a loop driven on a schedule over a weather year."""

    fleet: FleetSpec = Field(default_factory=FleetSpec)


# --- responses ----------------------------------------------------------------------------

class FieldProblem(BaseModel):
    """One problem with one field of a request."""

    field: str = Field(..., description="where: a dotted path in the body, or a form field")
    detail: str = Field(..., description="what is wrong and what was expected")


class Problem(BaseModel):
    """An error (RFC 9457 problem details)."""

    model_config = ConfigDict(extra="allow")
    type: str = "about:blank"
    title: str
    status: int
    detail: str | None = None
    instance: str | None = None
    errors: list[FieldProblem] | None = None


class FileOut(BaseModel):
    """A stored file."""

    role: str
    filename: str
    media_type: str
    size: int
    sha256: str
    href: str | None = None


class InputOut(BaseModel):
    """A stored input: what was read from it (``info``) and how it is used (``spec``)."""

    id: str
    kind: str
    name: str
    created_at: dt.datetime
    info: dict[str, Any]
    spec: dict[str, Any]
    files: list[FileOut]
    href: str


class InputList(BaseModel):
    """A page of stored inputs."""

    items: list[InputOut]
    total: int
    limit: int
    offset: int


class RunOut(BaseModel):
    """A stored run: its result and everything needed to tell how it was made."""

    id: str
    kind: str
    name: str
    created_at: dt.datetime
    tripsim_version: str
    input_hash: str = Field(..., description="SHA-256 of the inputs (same inputs: this run)")
    exit_code: int = Field(..., description="as the command line's: 0 done, 3 no plan")
    request: dict[str, Any]
    inputs: list[dict[str, Any]] = Field(..., description="the stored inputs read: id, "
                                         "kind, name and the SHA-256 of each file")
    timings: dict[str, float]
    caution: str
    result: dict[str, Any]
    files: list[FileOut]
    links: dict[str, str]


class RunSummary(BaseModel):
    """A run in a list."""

    id: str
    kind: str
    name: str
    created_at: dt.datetime
    exit_code: int
    tripsim_version: str
    input_hash: str
    href: str


class RunList(BaseModel):
    """A page of runs."""

    items: list[RunSummary]
    total: int
    limit: int
    offset: int


class JobOut(BaseModel):
    """A background job."""

    id: str
    kind: str
    state: Literal["queued", "running", "done", "failed", "cancelled"]
    progress: float = Field(..., ge=0.0, le=1.0)
    message: str
    created_at: dt.datetime
    started_at: dt.datetime | None
    finished_at: dt.datetime | None
    result: str | None = Field(None, description="the result's URL once done")
    problem: dict[str, Any] | None = None
    href: str


class JobList(BaseModel):
    """A page of jobs."""

    items: list[JobOut]
    total: int
    limit: int
    offset: int


class Health(BaseModel):
    """The service's state."""

    status: str
    tripsim_version: str
    schema_version: int
    store: str
    workers: int
    jobs_active: int
    queue_size: int
