"""One description of a run — a simulation, a plan, a fleet year or a claim — validated once.

A :class:`Scenario` names its inputs (route, vehicle, weather, chargers, lodgings, by
file or, in the service, by stored id), the conditions and departure, the driver, and
the options of its kind.  The command line builds one from its flags, ``tripsim run``
reads one from a TOML file (:mod:`tripsim.io.scenario_file`), the HTTP service takes
one as JSON, and a sweep takes a grid of them: one validation, one set of messages.
Every field knows the flag it is typed by, so a message names ``--stop-minutes`` on the
command line and ``[plan.options] stop_minutes`` in a file.
"""

from __future__ import annotations

import datetime as dt
from pathlib import PurePath
from typing import Annotated, Any, Literal

import pandas as pd
from pydantic import AfterValidator, Field, ValidationError, model_validator

from tripsim.claims.options import Claim, ClaimOptions
from tripsim.drive import DriveOptions
from tripsim.energy import Conditions, SolarOptions
from tripsim.errors import TripsimInputError
from tripsim.fleet.schedule import ChargingPolicy, Schedule
from tripsim.options import Count, Number, OptionConflict, Options, describe_error, option
from tripsim.parking import Parking
from tripsim.plan.options import PlanOptions

__all__ = [
    "KINDS",
    "ClaimSpec",
    "FleetSpec",
    "OutputSpec",
    "PlanSpec",
    "RouteSpec",
    "Scenario",
    "WeatherSpec",
    "scenario_error",
]

KINDS = ("simulate", "plan", "fleet", "claim")
Latitude = Annotated[Number, Field(ge=-90.0, le=90.0)]
Longitude = Annotated[Number, Field(ge=-180.0, le=180.0)]
SpeedFactor = Annotated[Number, Field(ge=0.2, le=2.0)]
RoadSpeed = Annotated[Number, Field(ge=1.0, le=200.0)]


class RouteSpec(Options):
    """Where the vehicle drives: a route file, or a road network with waypoints."""

    file: str = option(..., cli="ROUTE", min_length=1,
                       description="GPX, GeoJSON, or an OSM XML road network")
    waypoints: list[tuple[Latitude, Longitude]] | None = option(
        None, cli="--waypoints", min_length=2, max_length=100,
        description="points to route through on an OSM network, (lat, lon) in degrees")
    dem: str | None = option(None, cli="--dem", description="elevation raster (GeoTIFF)")
    segment_m: Number = option(25.0, ge=1.0, le=500.0, cli="--segment-m",
                               description="longest segment [m]")
    smooth_m: Number = option(40.0, ge=0.0, le=2000.0, cli="--smooth-m",
                              description="elevation smoothing σ [m]; 0 off")
    road_speeds: dict[str, RoadSpeed] | None = option(
        None, cli="--road-speeds",
        description="speeds for OSM roads with no maxspeed tag, by highway class [km/h]")
    cache: bool = option(True, cli="--no-cache", description="cache the prepared OSM graph")
    alternatives: Count = option(1, ge=1, le=5, cli="--alternatives",
                                 description="plan on this many alternative routes")
    name: str | None = option(None, cli="--name", description="the route's name in reports")
    from_log: bool = option(False, cli="--from-log",
                            description="the route file is a logged drive (time-stamped GPX "
                            "or CSV, or a speed-time trace): drive it at its recorded speeds")

    @property
    def is_network(self) -> bool:
        """True for an OSM XML road network (routed through ``waypoints``)."""
        return self.file.lower().endswith((".osm", ".osm.bz2", ".osm.gz", ".osm.xml"))

    @model_validator(mode="after")
    def _network_needs_waypoints(self) -> RouteSpec:
        if self.alternatives > 1 and not (self.is_network and self.waypoints
                                          and len(self.waypoints) == 2):
            got = (f"{PurePath(self.file).name} is a fixed route" if not self.is_network else
                   "no --waypoints given" if not self.waypoints else
                   f"{len(self.waypoints)} waypoints given")
            raise OptionConflict("--alternatives", "alternative routes need an OSM road "
                                 f"network and exactly two --waypoints ({got})")
        return self


class WeatherSpec(Options):
    """Weather in time: a typical-year file (EPW, TMY3, TMY2) or a clear sky."""

    source: str = option(..., cli="--weather", min_length=1,
                         description='EPW, TMY3 (.csv) or TMY2 (.tm2) file, or "clear-sky"')
    cloud: Number = option(0.0, ge=0.0, le=1.0, cli="--cloud",
                           description="cloud share for clear-sky, 0-1")

    @property
    def clear_sky(self) -> bool:
        """True for a tabulated clear sky."""
        return self.source == "clear-sky"

    @model_validator(mode="after")
    def _cloud_needs_clear_sky(self) -> WeatherSpec:
        if self.cloud > 0.0 and not self.clear_sky:
            raise OptionConflict("--cloud", "applies only with --weather clear-sky (a weather "
                                 "file brings its own sky)")
        return self


def _schedule(text: str) -> str:
    Schedule.parse(text)  # raises with --schedule named
    return text


def _policy(text: str) -> str:
    ChargingPolicy.parse(text)
    return text


class PlanSpec(Options):
    """Charging stops: where the sites and beds are, and the planner's options."""

    chargers: str = option(..., cli="--chargers", min_length=1,
                           description="charging sites: OSM XML or CSV")
    lodging: str | None = option(None, cli="--lodging",
                                 description="CSV of places to sleep (lat, lon, name, ...)")
    options: PlanOptions = Field(default_factory=PlanOptions)
    speed_factors: list[SpeedFactor] = option([], cli="--speed-factors", max_length=12,
                                              description="driver speed factors to compare")

    @model_validator(mode="after")
    def _beds_for_days(self) -> PlanSpec:
        if (self.options.daily_window_h is not None or self.options.max_drive_h is not None) \
                and not self.lodging:
            flag = "--daily-window" if self.options.daily_window_h else "--max-drive-h"
            raise OptionConflict("--lodging", f"{flag} limits the days: give places to sleep")
        return self


class FleetSpec(Options):
    """A loop driven on a schedule over a weather year."""

    schedule: Annotated[str, AfterValidator(_schedule)] = option(
        "Mon-Fri@08:00", cli="--schedule",
        description='operating days and departures, local time of the loop: '
        '"Mon-Fri@08:00,13:30"')
    policy: Annotated[str, AfterValidator(_policy)] = option(
        "solar-only", cli="--policy",
        description="solar-only, or plug-below:SOC[:KW[:HOURS]]")
    start_date: dt.date = option(dt.date(2026, 1, 1), cli="--start-date",
                                 description="first day (YYYY-MM-DD)")
    days: Count = option(365, ge=1, le=3660, cli="--days", description="number of days")
    parking: Parking = Field(default_factory=Parking)
    target_share: Number = option(0.9, gt=0.0, le=1.0, cli="--target",
                                  description="share of operating days that must close, "
                                  "for the sizing")
    size_search: bool = option(True, cli="--no-sizing",
                               description="search the battery and panel size that closes "
                               "the target")


class ClaimSpec(Options):
    """A range claim checked over a weather year (:mod:`tripsim.claims.range_claim`).

    The claimed distance in km or in miles (one of the two), the conditions the claim
    states, an optional lab cycle to set beside it, and how it is checked
    (:class:`~tripsim.claims.options.ClaimOptions`: sampling, corridor, start charge,
    reserve, the driver's speed factor, payload, tyres, ageing).
    """

    km: Number | None = option(None, gt=0.0, le=20_000.0, cli="--claim-km",
                               description="the claimed range [km]")
    mi: Number | None = option(None, gt=0.0, le=12_000.0, cli="--claim-mi",
                               description="the claimed range [mi]")
    stated_speed_kph: Number | None = option(None, ge=5.0, le=300.0, cli="--stated-speed-kph",
                                             description="the claim's speed [km/h]")
    stated_temp_c: Number | None = option(None, ge=-50.0, le=55.0, cli="--stated-temp-c",
                                          description="the claim's temperature [°C]")
    stated_climate: bool | None = option(None, cli="--stated-climate",
                                         description="climate control on in the claim")
    stated_payload_kg: Number | None = option(None, ge=0.0, le=40_000.0,
                                              cli="--stated-payload-kg",
                                              description="the claim's payload [kg]")
    cycle: str | None = option(None, cli="--cycle", min_length=1,
                               description="a lab cycle (speed-time CSV) to set beside it")
    options: ClaimOptions = Field(default_factory=ClaimOptions)

    @model_validator(mode="after")
    def _one_distance(self) -> ClaimSpec:
        if (self.km is None) == (self.mi is None):
            raise OptionConflict("--claim-km", "give the claimed range once: in km or in "
                                 "miles, one of the two")
        return self

    def to_claim(self) -> Claim:
        """The claim in the model's terms (distance in km, the unit it was stated in)."""
        from tripsim.units import M_PER_MI

        km, unit = (self.km, "km") if self.km is not None else (self.mi * M_PER_MI / 1000.0,
                                                                 "mi")
        return Claim(distance_km=km, unit=unit, speed_kph=self.stated_speed_kph,
                     temp_c=self.stated_temp_c, climate=self.stated_climate,
                     payload_kg=self.stated_payload_kg)


_SUFFIXES = {"trace": (".csv", ".parquet", ".geojson", ".json"),
             "plot": (".png", ".svg", ".pdf"), "map": (".html",), "stops_csv": (".csv",),
             "geojson": (".geojson", ".json"), "plan_json": (".json",),
             "samples_csv": (".csv",)}
_FLAGS = {"trace": "--trace", "plot": "--plot", "map": "--map", "stops_csv": "--stops-csv",
          "geojson": "--geojson", "plan_json": "--plan-json", "folder": "--out",
          "samples_csv": "--samples-csv"}
_FOR_KIND = {"trace": ("simulate",), "plot": ("simulate", "claim"), "map": ("simulate", "plan"),
             "stops_csv": ("plan",), "geojson": ("plan",), "plan_json": ("plan",),
             "folder": ("fleet",), "samples_csv": ("claim",)}


class OutputSpec(Options):
    """Files a run writes, all or none (see :mod:`tripsim.io.export`)."""

    trace: str | None = option(None, cli="--trace",
                               description="the trace: .csv, .parquet or .geojson")
    plot: str | None = option(None, cli="--plot",
                              description="a profile figure: .png (or .svg, .pdf)")
    map: str | None = option(None, cli="--map", description="the map page: OUT.html")
    stops_csv: str | None = option(None, cli="--stops-csv", description="the stops as CSV")
    geojson: str | None = option(None, cli="--geojson",
                                 description="route and stops as GeoJSON")
    plan_json: str | None = option(None, cli="--plan-json",
                                   description="the plan as a JSON file")
    folder: str | None = option(None, cli="--out",
                                description="folder for the fleet's tables, totals and figures")
    samples_csv: str | None = option(None, cli="--samples-csv",
                                     description="a claim's sampled departures as CSV")

    @model_validator(mode="after")
    def _suffixes(self) -> OutputSpec:
        for name, suffixes in _SUFFIXES.items():
            value = getattr(self, name)
            if value is not None and not PurePath(value).name.lower().endswith(suffixes):
                raise OptionConflict(_FLAGS[name], f"{PurePath(value).name}: expected a file "
                                     f"ending in {', '.join(suffixes)}")
        return self

    def named(self) -> dict[str, str]:
        """The outputs asked for, by field name."""
        return {k: v for k, v in self.model_dump().items() if v is not None}


class Scenario(Options):
    """One run: what to compute, on which inputs, in which conditions.

    ``start_soc`` None means the kind's default: 1.0 for a simulation, 0.9 for a plan,
    and for a fleet year the energy the year ends with.
    """

    kind: Literal["simulate", "plan", "fleet", "claim"] = option("simulate", cli="COMMAND")
    name: str | None = option(None, cli="--name", description="a name for reports")
    description: str | None = option(None, cli="--description", max_length=500,
                                     description="what the run is, in a few words")
    route: RouteSpec
    vehicle: str | dict[str, Any] = option(..., cli="--vehicle",
                                           description="vehicle TOML file")
    depart: str | None = option(
        None, cli="--depart", description="departure, ISO 8601; without an offset, local "
        "time of the route; default 2026-06-21 08:00 local")
    start_soc: Number | None = option(None, gt=0.0, le=1.0, cli="--start-soc",
                                      description="state of charge at departure, 0-1")
    battery_model: Literal["energy", "rint"] = option("energy", cli="--battery-model")
    speed_kph: Number | None = option(None, ge=1.0, le=200.0, cli="--speed-kph",
                                      description="speed on roads with no known limit [km/h]")
    conditions: Conditions = Field(default_factory=Conditions)
    weather: WeatherSpec | None = None
    solar: SolarOptions = Field(default_factory=SolarOptions)
    drive: DriveOptions = Field(default_factory=DriveOptions)
    plan: PlanSpec | None = None
    fleet: FleetSpec | None = None
    claim: ClaimSpec | None = None
    outputs: OutputSpec = Field(default_factory=OutputSpec)

    @model_validator(mode="after")
    def _departure(self) -> Scenario:
        if self.depart is not None:
            try:
                ts = pd.Timestamp(self.depart)
            except (ValueError, TypeError):
                ts = None
            if ts is None or pd.isna(ts):
                raise OptionConflict("--depart", f"{self.depart!r} is not an ISO 8601 time")
        return self

    @model_validator(mode="after")
    def _fits_its_kind(self) -> Scenario:
        if self.kind == "plan" and self.plan is None:
            raise OptionConflict("--chargers", "a plan needs charging sites")
        if self.kind == "fleet":
            if self.fleet is None:
                raise OptionConflict("--schedule", "a fleet year needs a schedule")
            if self.weather is None:
                raise OptionConflict("--weather", "a fleet year needs a weather year")
            if self.depart is not None:
                raise OptionConflict("--depart", "a fleet year departs on its --schedule")
        if self.kind != "plan" and self.plan is not None:
            raise OptionConflict("--chargers", f"charging sites apply to plans, not to "
                                 f"{self.kind}")
        if self.kind != "fleet" and self.fleet is not None:
            raise OptionConflict("--schedule", f"a schedule applies to fleet years, not to "
                                 f"{self.kind}")
        if self.battery_model == "rint" and self.kind != "simulate":
            raise OptionConflict("--battery-model", "the internal-resistance model is for "
                                 "simulations")
        if self.route.alternatives > 1 and self.kind != "plan":
            raise OptionConflict("--alternatives", "alternative routes apply to plans")
        for name in self.outputs.named():
            if self.kind not in _FOR_KIND[name]:
                raise OptionConflict(_FLAGS[name], f"is not an output of {self.kind}")
        return self

    @model_validator(mode="after")
    def _claim_fits(self) -> Scenario:
        if self.kind == "claim":
            if self.claim is None:
                raise OptionConflict("--claim-km", "a claim needs its claimed range")
            if self.weather is None or self.weather.clear_sky:
                raise OptionConflict("--weather", "a claim is checked over a typical weather "
                                     "year: an EPW, TMY3 or TMY2 file")
            if self.depart is not None:
                raise OptionConflict("--depart", "a claim samples its departures "
                                     "(--depart-time, --draws)")
            if self.start_soc is not None:
                raise OptionConflict("--start-soc", "a claim's start charge is one of its "
                                     "options ([claim.options] start_soc)")
            if self.drive.speed_factor != 1.0:
                raise OptionConflict("--speed-factor", "a claim's speed factor is one of its "
                                     "options ([claim.options] speed_factor)")
        if self.kind != "claim" and self.claim is not None:
            raise OptionConflict("--claim-km", f"a claimed range applies to claims, not to "
                                 f"{self.kind}")
        return self

    @model_validator(mode="after")
    def _log_is_simulated(self) -> Scenario:
        if self.route.from_log and (self.kind != "simulate" or self.route.waypoints):
            raise OptionConflict("--from-log", "drives a logged drive in a simulation, "
                                 "without --waypoints")
        return self

    @property
    def title(self) -> str:
        """The run's name, or its route's."""
        return self.name or self.route.name or PurePath(self.route.file).stem


def scenario_error(exc: ValidationError | OptionConflict, *, flags: bool,
                   source: str | None = None, kind: str | None = None) -> TripsimInputError:
    """One line for the first problem of a scenario: by flag, or by table and key in a file.

    ``kind`` (the scenario's) chooses among keys that share a flag: ``--reserve`` is
    ``[claim.options] reserve_soc`` in a claim and ``[plan.options] reserve_soc`` in a plan.
    """
    if isinstance(exc, OptionConflict):
        where, what = exc.where, exc.what
        if not flags:
            where = flag_key(where, kind)
    else:
        where, what = describe_error(exc.errors()[0], Scenario, flags=flags)
    if not flags and "." in where:
        table, _, key = where.rpartition(".")
        where = f"[{table}] {key}"
    return TripsimInputError(what, f"{source}: {where}" if source else where)


def flag_key(flag: str, kind: str | None = None) -> str:
    """The scenario key a flag sets (dotted), preferring the tables of ``kind``.

    The flag itself when no key has it.
    """
    keys = [k for k, v in _field_flags().items() if v == flag]
    own = [k for k in keys if kind and k.split(".")[0] == kind]
    return (own or keys or [flag])[0]


def file_source(source: str, kind: str | None) -> str:
    """A problem's source as a scenario file names it.

    ``--corridor`` in a claim is ``[claim.options] corridor``; anything else is kept.
    """
    if not source.startswith("--"):
        return source
    key = flag_key(source, kind)
    if key == source or "." not in key:
        return key
    table, _, name = key.rpartition(".")
    return f"[{table}] {name}"


def _field_flags() -> dict[str, str]:
    """Dotted field name → flag, for turning a flag in a conflict back into a file key."""
    out: dict[str, str] = {}

    def walk(model: type[Options], prefix: str) -> None:
        for name, info in model.model_fields.items():
            extra = info.json_schema_extra if isinstance(info.json_schema_extra, dict) else {}
            if extra.get("cli"):
                out.setdefault(prefix + name, extra["cli"])
            annotation = info.annotation
            for candidate in getattr(annotation, "__args__", (annotation,)):
                if isinstance(candidate, type) and issubclass(candidate, Options):
                    walk(candidate, f"{prefix}{name}.")

    walk(Scenario, "")
    return out
