"""Read trip lists (TOML): which route, which vehicles, when, in what weather."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import pydantic
from pydantic import AllowInfNan, BaseModel, ConfigDict, Field, Strict

from tripsim.errors import TripsimInputError
from tripsim.io._files import read_toml
from tripsim.io._validation import format_validation_error

__all__ = ["FleetSpec", "PlanSpec", "TripSpec", "read_fleets", "read_plans", "read_trips"]


#: A number in a trip list: TOML ``true`` is not 1.0, and no NaN or infinity.
Real = Annotated[float, Strict(), AllowInfNan(False)]


class _RouteSpec(BaseModel):
    """What every table of a trip list has: a name and a route."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(min_length=1)
    description: str = ""
    route: Path
    waypoints: str | None = None
    dem: Path | None = None


class TripSpec(_RouteSpec):
    """One trip of a trip list (``[[trip]]``).  Paths are relative to the list's folder."""

    depart: str = "2026-06-21T08:00:00Z"
    temp_c: Real = Field(20.0, ge=-60.0, le=60.0)
    wind_speed_mps: Real = Field(0.0, ge=0.0, le=75.0)
    wind_from_deg: Real = Field(0.0, ge=-360.0, le=360.0)
    speed_kph: Real | None = Field(None, gt=0.0, le=300.0)
    start_soc: Real = Field(1.0, gt=0.0, le=1.0)
    vehicles: list[str] = Field(min_length=1)


class FleetSpec(_RouteSpec):
    """One fleet loop of a trip list (``[[fleet]]``).  Paths are relative to the list."""

    weather: Path
    speed_kph: Real | None = Field(None, gt=0.0, le=300.0)
    schedule: str = "Mon-Fri@08:00"
    policy: str = "solar-only"
    parking_heading_deg: Real = Field(180.0, ge=-360.0, le=360.0)
    parking_shading: Real = Field(0.0, ge=0.0, le=1.0)
    target_share: Real = Field(0.9, gt=0.0, le=1.0)
    vehicle: str
    solar_year_vehicles: list[str] = Field(default_factory=list)


class PlanSpec(_RouteSpec):
    """One charging plan of a trip list (``[[plan]]``).  Paths are relative to the list."""

    weather: Path | None = None
    depart: str = "2026-06-21T08:00:00Z"
    start_soc: Real = Field(0.9, gt=0.0, le=1.0)
    vehicle: str
    chargers: Path
    lodging: Path | None = None
    daily_window: str | None = None
    max_drive_h: Real | None = Field(None, gt=0.0, le=24.0)
    reserve_soc: Real = Field(0.10, ge=0.0, lt=1.0)
    arrive_soc: Real = Field(0.15, ge=0.0, le=1.0)
    max_charge_soc: Real = Field(0.8, gt=0.0, le=1.0)
    objective: str = "stops"
    speed_factors: list[Real] = Field(default_factory=list)


def _specs(path: Path, table: str, model: type[BaseModel], paths: tuple[str, ...]) -> list:
    out = []
    tables = _load(path).get(table, [])
    if not isinstance(tables, list):
        raise TripsimInputError(f"{table} must be an array of tables ([[{table}]])", path)
    for i, raw in enumerate(tables):
        if not isinstance(raw, dict):
            raise TripsimInputError(f"[[{table}]] #{i + 1} is not a table", path)
        try:
            spec = model.model_validate(raw)
        except pydantic.ValidationError as exc:
            problems = "; ".join(format_validation_error({**e, "loc": (table, str(i), *e["loc"])})
                                 for e in exc.errors())
            raise TripsimInputError(problems, path) from None
        update = {k: path.parent / getattr(spec, k) for k in paths if getattr(spec, k)}
        out.append(spec.model_copy(update=update))
    return out


def read_plans(path: str | Path) -> list[PlanSpec]:
    """Read ``[[plan]]`` tables from a trip list; relative paths resolve beside it."""
    return _specs(Path(path), "plan", PlanSpec,
                  ("route", "dem", "weather", "chargers", "lodging"))


def _load(path: Path) -> dict[str, Any]:
    return read_toml(path, "trips")


def read_fleets(path: str | Path) -> list[FleetSpec]:
    """Read ``[[fleet]]`` tables from a trip list; relative paths resolve beside it."""
    return _specs(Path(path), "fleet", FleetSpec, ("route", "weather", "dem"))


def read_trips(path: str | Path) -> list[TripSpec]:
    """Read ``[[trip]]`` tables from a TOML file; relative paths resolve beside it.

    Raises
    ------
    TripsimInputError
        Naming the trip (by position) and the key at fault.
    """
    trips = _specs(Path(path), "trip", TripSpec, ("route", "dem"))
    if not trips:
        raise TripsimInputError("no [[trip]] tables found", path)
    return trips
