"""Read trip lists (TOML): which route, which vehicles, when, in what weather."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pydantic
from pydantic import BaseModel, ConfigDict, Field

from tripsim.errors import TripsimInputError
from tripsim.io._validation import format_validation_error

__all__ = ["FleetSpec", "TripSpec", "read_fleets", "read_trips"]


class TripSpec(BaseModel):
    """One trip of a trip list.  Paths are relative to the list's folder."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(min_length=1)
    description: str = ""
    route: Path
    waypoints: str | None = None
    dem: Path | None = None
    depart: str = "2026-06-21T08:00:00Z"
    temp_c: float = Field(20.0, ge=-60.0, le=60.0)
    wind_speed_mps: float = Field(0.0, ge=0.0, le=75.0)
    wind_from_deg: float = Field(0.0, ge=-360.0, le=360.0)
    speed_kph: float | None = Field(None, gt=0.0, le=300.0)
    start_soc: float = Field(1.0, gt=0.0, le=1.0)
    vehicles: list[str] = Field(min_length=1)


class FleetSpec(BaseModel):
    """One fleet loop of a trip list (``[[fleet]]``).  Paths are relative to the list."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(min_length=1)
    description: str = ""
    route: Path
    waypoints: str | None = None
    dem: Path | None = None
    weather: Path
    speed_kph: float | None = Field(None, gt=0.0, le=300.0)
    schedule: str = "Mon-Fri@08:00"
    policy: str = "solar-only"
    parking_heading_deg: float = Field(180.0, ge=-360.0, le=360.0)
    parking_shading: float = Field(0.0, ge=0.0, le=1.0)
    target_share: float = Field(0.9, gt=0.0, le=1.0)
    vehicle: str
    solar_year_vehicles: list[str] = Field(default_factory=list)


def _load(path: Path) -> dict:
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise TripsimInputError(f"cannot read the file ({exc.strerror})", path) from None
    except tomllib.TOMLDecodeError as exc:
        raise TripsimInputError(f"not valid TOML: {exc}", path) from None


def read_fleets(path: str | Path) -> list[FleetSpec]:
    """Read ``[[fleet]]`` tables from a trip list; relative paths resolve beside it."""
    path = Path(path)
    out = []
    for i, raw in enumerate(_load(path).get("fleet", [])):
        try:
            spec = FleetSpec.model_validate(raw)
        except pydantic.ValidationError as exc:
            problems = "; ".join(format_validation_error({**e, "loc": ("fleet", str(i), *e["loc"])})
                                 for e in exc.errors())
            raise TripsimInputError(problems, path) from None
        base = path.parent
        out.append(spec.model_copy(update={
            "route": base / spec.route, "weather": base / spec.weather,
            "dem": None if spec.dem is None else base / spec.dem}))
    return out


def read_trips(path: str | Path) -> list[TripSpec]:
    """Read ``[[trip]]`` tables from a TOML file; relative paths resolve beside it.

    Raises
    ------
    TripsimInputError
        Naming the trip (by position) and the key at fault.
    """
    path = Path(path)
    data = _load(path)
    trips = []
    for i, raw in enumerate(data.get("trip", [])):
        try:
            spec = TripSpec.model_validate(raw)
        except pydantic.ValidationError as exc:
            problems = "; ".join(format_validation_error({**e, "loc": ("trip", str(i), *e["loc"])})
                                 for e in exc.errors())
            raise TripsimInputError(problems, path) from None
        base = path.parent
        trips.append(spec.model_copy(update={
            "route": base / spec.route, "dem": None if spec.dem is None else base / spec.dem}))
    if not trips:
        raise TripsimInputError("no [[trip]] tables found", path)
    return trips
