"""From a scenario to results and files: one path for the command line, demo and service.

:func:`load_inputs` reads what a :class:`~tripsim.scenario.Scenario` names (through
:mod:`tripsim.io`), :func:`run` computes it (simulate, plan, fleet year or claim) and returns a
:class:`RunResult` with its JSON payload, its text and its output files, and
:func:`write_outputs` writes those files all or none.  :func:`execute` does the three in
order, checking every output path before any work starts.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path, PurePath
from typing import Any

import pandas as pd

from tripsim.caution import CAUTION
from tripsim.errors import TripsimInputError
from tripsim.progress import Progress, quiet
from tripsim.scenario import Scenario
from tripsim.vehicle import Vehicle

__all__ = ["EXIT_NO_PLAN", "Inputs", "RunResult", "execute", "load_inputs", "run",
           "write_outputs"]

#: Exit status of a plan that keeps no constraint set (bad input is 2).
EXIT_NO_PLAN = 3

#: Turns a reference in a scenario (a file name, or a stored id in the service) into a path.
Resolver = Callable[[str, str], Path]


def _relative_to(base: Path | None) -> Resolver:
    def resolve(ref: str, flag: str) -> Path:
        path = Path(ref).expanduser()
        return path if base is None or path.is_absolute() else base / path

    return resolve


@dataclass
class Inputs:
    """What a scenario names, read.

    Routes (several for alternatives), vehicle, weather, charging sites and lodgings, and
    the road network's detour function for sites.
    """

    vehicle: Vehicle
    routes: list[pd.DataFrame]
    weather: Any = None
    sites: list[Any] = field(default_factory=list)
    detour: Any = None
    log: Any = None  # a logged drive (--from-log): tripsim.claims.logs.LogDrive
    cycle: Any = None  # a claim's lab cycle: tripsim.claims.logs.LogDrive


@dataclass
class RunResult:
    """A finished run: its payload (JSON-ready), its text, exit status and files to write.

    ``files`` maps each output path to (flag, writer); the writer writes the file's
    content to the path it is given.
    """

    scenario: Scenario
    payload: dict[str, Any]
    text: str
    exit_code: int = 0
    trip: Any = None
    plan: Any = None
    fleet: Any = None
    claim: Any = None
    logged: Any = None  # a logged drive's comparison (--from-log): claims.logs.LoggedDrive
    files: dict[Path, tuple[str, Callable[[Path], None]]] = field(default_factory=dict)


def _vehicle(sc: Scenario, resolve: Resolver) -> Vehicle:
    from tripsim.io.vehicle_file import parse_vehicle, read_vehicle

    if isinstance(sc.vehicle, dict):
        return parse_vehicle(sc.vehicle)
    return read_vehicle(resolve(sc.vehicle, "--vehicle"))


def _routes(sc: Scenario, resolve: Resolver,
            cache: dict[tuple[str, str], Any] | None = None) -> tuple[list[pd.DataFrame], Any]:
    from tripsim.inputs import load_segments

    r = sc.route
    path = resolve(r.file, "ROUTE")
    dem = resolve(r.dem, "--dem") if r.dem else None
    detour = None
    if sc.kind == "plan" and r.is_network and r.waypoints:
        from tripsim.io import read_osm_graph
        from tripsim.roadgraph import network_detour

        key = ("detour", f"{path}|{sorted((r.road_speeds or {}).items())}")
        graph, detour = _kept(cache, key, lambda: _graph_and_detour(
            read_osm_graph(path, highway_kph=r.road_speeds, cache=r.cache), network_detour))
        if r.alternatives > 1:
            return _alternatives(sc, graph, path, dem), detour
    segments = load_segments(path, waypoints=r.waypoints, dem=dem, max_length_m=r.segment_m,
                             smooth_sigma_m=r.smooth_m, cache=r.cache, highway_kph=r.road_speeds)
    segments.attrs["name"] = sc.title
    return [segments], detour


def _graph_and_detour(graph: Any, make: Callable[[Any], Any]) -> tuple[Any, Any]:
    return graph, make(graph)


def _alternatives(sc: Scenario, graph: Any, path: Path, dem: Path | None) -> list[pd.DataFrame]:
    from tripsim.io import read_dem
    from tripsim.roadgraph import alternative_routes
    from tripsim.segments import segment_route

    routes = []
    for route in alternative_routes(graph, sc.route.waypoints, sc.route.alternatives,
                                    name=sc.title, source=str(path)):
        raster = None
        if dem is not None:
            raster = read_dem(dem, bounds_deg=(route.lon_deg.min() - 0.01,
                                               route.lat_deg.min() - 0.01,
                                               route.lon_deg.max() + 0.01,
                                               route.lat_deg.max() + 0.01))
        routes.append(segment_route(route, dem=raster, max_length_m=sc.route.segment_m,
                                    smooth_sigma_m=sc.route.smooth_m))
    return routes


def _span(sc: Scenario, segments: pd.DataFrame) -> tuple[pd.Timestamp, pd.Timestamp]:
    """Time span a clear sky must cover."""
    from tripsim.simulate import DEFAULT_DEPART
    from tripsim.zones import local_time

    if sc.kind == "fleet":
        first = pd.Timestamp(sc.fleet.start_date).tz_localize("UTC") - pd.Timedelta(days=1)
        return first, first + pd.Timedelta(days=sc.fleet.days + 2)
    depart = local_time(sc.depart or DEFAULT_DEPART, segments)
    return depart - pd.Timedelta(hours=1), depart + pd.Timedelta(days=8)


def _kept(cache: dict[tuple[str, str], Any] | None, key: tuple[str, str],
          load: Callable[[], Any]) -> Any:
    """``load()``, or what an earlier call with the same key loaded (when a cache is given)."""
    if cache is None:
        return load()
    if key not in cache:
        cache[key] = load()
    return cache[key]


def load_inputs(sc: Scenario, *, base: Path | None = None,
                resolve: Resolver | None = None,
                cache: dict[tuple[str, str], Any] | None = None) -> Inputs:
    """Read every file a scenario names.

    Parameters
    ----------
    sc : Scenario
        The run.
    base : Path, optional
        Folder that relative file names are taken from (a scenario file's own folder).
    resolve : callable, optional
        ``resolve(reference, flag) -> Path`` for stored inputs (the service); default:
        file names relative to ``base``.
    cache : dict, optional
        Files read by earlier calls (several scenarios on one region read its network,
        chargers and weather once; a sweep reads each route, vehicle, weather and sites
        file once for all its runs, and they share what was read).
    """
    resolve = resolve or _relative_to(base)
    vehicle_key = (str(resolve(sc.vehicle, "--vehicle")) if isinstance(sc.vehicle, str)
                   else repr(sc.vehicle))
    vehicle = _kept(cache, ("vehicle", vehicle_key), lambda: _vehicle(sc, resolve))
    log = _log(sc, resolve) if sc.route.from_log else None
    route_key = ("route", f"{resolve(sc.route.file, 'ROUTE')}|{sc.kind == 'plan'}|"
                 f"{resolve(sc.route.dem, '--dem') if sc.route.dem else None}|"
                 f"{sc.title}|{sc.route.model_dump_json()}")  # the title names the route
    routes, detour = ([log.segments], None) if log is not None else _kept(
        cache, route_key, lambda: _routes(sc, resolve, cache))
    weather = None
    if sc.weather is not None:
        from tripsim.inputs import load_weather

        c = sc.conditions
        if sc.weather.clear_sky:  # tabulated over the span the run needs
            start, end = _span(sc, routes[0])
            if log is not None and log.depart is not None:
                start, end = (log.depart - pd.Timedelta(hours=1),
                              log.depart + pd.Timedelta(days=8))
            weather = load_weather("clear-sky", routes[0], start=start, end=end,
                                   cloud_factor=sc.weather.cloud, temp_c=c.temp_c,
                                   wind_speed_mps=c.wind_speed_mps, wind_from_deg=c.wind_from_deg)
        else:
            source = resolve(sc.weather.source, "--weather")
            weather = _kept(cache, ("weather", str(source)), lambda: load_weather(
                source, routes[0]))
    sites: list[Any] = []
    if sc.plan is not None:
        from tripsim.io.chargers_file import read_chargers, read_lodgings

        chargers = resolve(sc.plan.chargers, "--chargers")
        sites = list(_kept(cache, ("chargers", str(chargers)),
                           lambda: read_chargers(chargers, cache=sc.route.cache)))
        if sc.plan.lodging:
            beds = resolve(sc.plan.lodging, "--lodging")
            sites += _kept(cache, ("lodging", str(beds)), lambda: read_lodgings(beds))
    cycle = None
    if sc.claim is not None and sc.claim.cycle:
        from tripsim.claims.logs import prepare_log
        from tripsim.io.drive_log import read_drive_log

        path = resolve(sc.claim.cycle, "--cycle")
        cycle = _kept(cache, ("cycle", str(path)), lambda: prepare_log(
            read_drive_log(path), name=PurePath(sc.claim.cycle).stem))
    return Inputs(vehicle, routes, weather, sites, detour, log, cycle)


def _log(sc: Scenario, resolve: Resolver) -> Any:
    """A logged drive (``--from-log``): read, then made ready to drive at its speeds."""
    from tripsim.claims.logs import prepare_log
    from tripsim.io import read_dem
    from tripsim.io.drive_log import read_drive_log

    r = sc.route
    samples = read_drive_log(resolve(r.file, "ROUTE"))
    dem = None
    if r.dem and samples.attrs.get("kind") == "positions":
        margin = 0.01
        dem = read_dem(resolve(r.dem, "--dem"), bounds_deg=(
            float(samples["lon_deg"].min()) - margin, float(samples["lat_deg"].min()) - margin,
            float(samples["lon_deg"].max()) + margin, float(samples["lat_deg"].max()) + margin))
    return prepare_log(samples, dem=dem, max_length_m=r.segment_m, smooth_sigma_m=r.smooth_m,
                       name=sc.title)


def run(sc: Scenario, inputs: Inputs | None = None, *, base: Path | None = None,
        progress: Progress = quiet) -> RunResult:
    """Compute a scenario (reading its inputs unless given).

    ``progress(stage, fraction)`` hears how far it is (:mod:`tripsim.progress`).
    """
    if inputs is None:
        progress("reading the inputs", 0.0)
        inputs = load_inputs(sc, base=base)
    return {"simulate": _simulate, "plan": _plan, "fleet": _fleet,
            "claim": _claim}[sc.kind](sc, inputs, progress)


def _claim(sc: Scenario, inputs: Inputs, progress: Progress) -> RunResult:
    from tripsim.claims.range_claim import check_claim
    from tripsim.report.claim_text import format_claim

    progress(f"driving {sc.title} to empty over the weather year", 0.1)
    segments = inputs.routes[0]
    if sc.route.name:  # the verdict names the corridor, not the run
        segments = segments.copy(deep=False)
        segments.attrs = {**segments.attrs, "name": sc.route.name}
    result = check_claim(segments, inputs.vehicle, inputs.weather, sc.claim.to_claim(),
                         sc.claim.options, drive=sc.drive, solar=sc.solar,
                         default_speed_kph=sc.speed_kph, cycle=inputs.cycle)
    out = RunResult(sc, result.to_dict(), format_claim(result), claim=result)
    if sc.outputs.plot:
        out.files[Path(sc.outputs.plot)] = ("--plot", lambda p: _claim_figure(result, p))
    if sc.outputs.samples_csv:
        from tripsim.io.export import write_table

        out.files[Path(sc.outputs.samples_csv)] = ("--samples-csv",
                                                   lambda p: write_table(result.samples, p))
    return out


def _claim_figure(result: Any, path: Path) -> None:
    from tripsim.io.export import save_figure
    from tripsim.report.claim_plots import claim_figure

    save_figure(claim_figure(result), path)


def _simulate(sc: Scenario, inputs: Inputs, progress: Progress) -> RunResult:
    from tripsim.report.text import format_summary
    from tripsim.simulate import simulate

    if inputs.log is not None:
        return _simulate_log(sc, inputs)
    segments = inputs.routes[0]
    trip = simulate(segments, inputs.vehicle, conditions=sc.conditions, drive=sc.drive,
                    depart=sc.depart, start_soc=1.0 if sc.start_soc is None else sc.start_soc,
                    battery_model=sc.battery_model, default_speed_kph=sc.speed_kph,
                    weather=inputs.weather, solar=sc.solar)
    payload = trip.summary.to_dict()
    result = RunResult(sc, payload, format_summary(trip.summary), trip=trip)
    out = sc.outputs
    if out.trace:
        from tripsim.io.export import write_trace

        result.files[Path(out.trace)] = ("--trace", lambda p: write_trace(trip.trace, p))
    if out.plot:
        result.files[Path(out.plot)] = ("--plot", lambda p: _figure(trip, p))
    if out.map:
        from tripsim.report.mapview import trip_map_html

        assets = _map_assets()
        result.files[Path(out.map)] = ("--map", lambda p: _text(
            trip_map_html(trip, title=segments.attrs.get("name", "route"), assets=assets), p))
    return result


def _simulate_log(sc: Scenario, inputs: Inputs) -> RunResult:
    """A logged drive at its recorded speeds, against its battery readings (``--from-log``)."""
    from tripsim.claims.logs import drive_log
    from tripsim.report.claim_text import format_logged_drive
    from tripsim.report.text import format_summary

    logged = drive_log(inputs.log, inputs.vehicle, conditions=sc.conditions,
                       weather=inputs.weather, solar=sc.solar, drive=sc.drive, depart=sc.depart,
                       start_soc=sc.start_soc, battery_model=sc.battery_model)
    trip = logged.trip
    payload = {**trip.summary.to_dict(), "log": logged.to_dict()}
    text = format_summary(trip.summary).replace("\n\ncaution", "\n" + format_logged_drive(
        logged) + "\n\ncaution", 1)
    result = RunResult(sc, payload, text, trip=trip, logged=logged)
    out = sc.outputs
    if out.trace:
        from tripsim.io.export import write_trace

        result.files[Path(out.trace)] = ("--trace", lambda p: write_trace(trip.trace, p))
    if out.plot:
        from tripsim.io.export import save_figure
        from tripsim.report.claim_plots import log_figure

        result.files[Path(out.plot)] = ("--plot", lambda p: save_figure(log_figure(logged), p))
    return result


def _plan(sc: Scenario, inputs: Inputs, progress: Progress) -> RunResult:
    from tripsim.plan.search import plan_trip, speed_factor_rows
    from tripsim.report.text import compare_routes, compare_speeds, format_plan

    spec = sc.plan
    start_soc = 0.9 if sc.start_soc is None else sc.start_soc

    def plan_for(segments: pd.DataFrame, factor: float | None = None) -> Any:
        drive = sc.drive if factor is None else sc.drive.replace(speed_factor=factor)
        return plan_trip(segments, inputs.vehicle, inputs.sites, options=spec.options,
                         depart=sc.depart or "2026-06-21T08:00:00", start_soc=start_soc,
                         conditions=sc.conditions, weather=inputs.weather, solar=sc.solar,
                         drive=drive, default_speed_kph=sc.speed_kph,
                         network_detour=inputs.detour, progress=progress)

    plans = [(seg, plan_for(seg)) for seg in inputs.routes]
    plans.sort(key=lambda sp: _plan_key(sp[1], spec.options.objective))
    segments, plan = plans[0]
    extra = compare_routes(plans)
    comparison = speed_factor_rows(spec.speed_factors, lambda f: plan_for(segments, f),
                                   known={sc.drive.speed_factor: plan})
    extra += compare_speeds(comparison)
    if not plan.feasible and (plan.shortfall or {}).get("reason") == "energy":
        for f in (0.9, 0.8):
            if f < sc.drive.speed_factor and plan_for(segments, f).feasible:
                plan.shortfall.setdefault("fixes", {})["speed_factor"] = f
                break
    payload = {**plan.to_dict(), "route": segments.attrs.get("name", "route"),
               "vehicle": inputs.vehicle.name, "speed_factors": comparison,
               "alternatives": [{"route": s.attrs.get("name"), "feasible": p.feasible,
                                 "charging_stops": p.totals.get("charging_stops"),
                                 "total_h": p.totals.get("total_h")} for s, p in plans]}
    result = RunResult(sc, payload, format_plan(plan, extra), plan=plan,
                       exit_code=0 if plan.feasible else EXIT_NO_PLAN)
    _plan_files(result, sc, plan, segments)
    return result


def _plan_key(plan: Any, objective: str) -> tuple:
    t = plan.totals
    if not plan.feasible:
        return (1, 0, 0.0)
    if objective == "stops":
        return (0, t["charging_stops"], t["total_h"])
    return (0, t["total_h"], t["charging_stops"])


def _plan_files(result: RunResult, sc: Scenario, plan: Any, segments: pd.DataFrame) -> None:
    out = sc.outputs
    if out.map and plan.trip is None:  # refused before anything is written
        raise TripsimInputError("no feasible plan to draw (see the shortfall)", "--map")
    if out.plan_json:
        result.files[Path(out.plan_json)] = ("--plan-json",
                                             lambda p: _json(result.payload, p))
    if out.stops_csv:
        result.files[Path(out.stops_csv)] = ("--stops-csv",
                                             lambda p: _table(plan.stops_table(), p))
    if out.geojson and plan.trip is not None:
        from tripsim.report.geo import plan_geojson

        result.files[Path(out.geojson)] = ("--geojson", lambda p: _json(plan_geojson(plan), p))
    if out.map:
        from tripsim.report.mapview import plan_map_html

        title = segments.attrs.get("name", "route")
        assets = _map_assets()
        result.files[Path(out.map)] = ("--map", lambda p: _text(
            plan_map_html(plan, plan.sites, title=title, assets=assets), p))


def _map_assets() -> Any:
    """Leaflet written into the page, so a saved map opens anywhere offline."""
    from tripsim.io.web_assets import read_leaflet
    from tripsim.report.mapview import MapAssets

    return MapAssets.inline(*read_leaflet())


def _fleet(sc: Scenario, inputs: Inputs, progress: Progress) -> RunResult:
    from tripsim.fleet.schedule import ChargingPolicy, Schedule
    from tripsim.fleet.year import fleet_year
    from tripsim.report.text import format_fleet
    from tripsim.zones import route_zone

    spec = sc.fleet
    segments = inputs.routes[0]
    schedule = Schedule.parse(spec.schedule, zone=route_zone(segments).key)
    year = fleet_year(segments, inputs.vehicle, inputs.weather, schedule=schedule,
                      start_date=pd.Timestamp(spec.start_date), days=spec.days,
                      policy=ChargingPolicy.parse(spec.policy), parking=spec.parking,
                      solar=sc.solar, drive=sc.drive, start_soc=sc.start_soc,
                      target_share=spec.target_share, size_search=spec.size_search,
                      default_speed_kph=sc.speed_kph, progress=progress)
    payload = {**year.totals, "vehicle": inputs.vehicle.name,
               "weather": inputs.weather.source, "policy": spec.policy,
               "schedule": spec.schedule, "caution": CAUTION}
    result = RunResult(sc, payload, format_fleet(year.totals, inputs.vehicle.name), fleet=year)
    if sc.outputs.folder:
        title = f"{inputs.vehicle.name} on {segments.attrs.get('name', 'loop')}"
        result.files[Path(sc.outputs.folder)] = ("--out", lambda p: _fleet_folder(
            year, payload, title, p))
    return result


def _fleet_folder(year: Any, payload: dict[str, Any], title: str, folder: Path) -> None:
    from tripsim.io.export import save_figure, write_json, write_table
    from tripsim.report.plots import fleet_monthly_figure, fleet_soc_figure

    folder.mkdir(parents=True, exist_ok=True)
    write_table(year.daily, folder / "daily.csv")
    write_table(year.runs, folder / "runs.csv")
    write_json(payload, folder / "totals.json")
    save_figure(fleet_soc_figure(year.daily, title), folder / "soc_year.png")
    save_figure(fleet_monthly_figure(year.daily, title), folder / "monthly_solar.png")


def _json(obj: Any, path: Path) -> None:
    from tripsim.io.export import write_json

    write_json(obj, path)


def _table(frame: pd.DataFrame, path: Path) -> None:
    from tripsim.io.export import write_table

    write_table(frame, path)


def _text(text: str, path: Path) -> None:
    from tripsim.io.export import write_text

    write_text(text, path)


def _figure(trip: Any, path: Path) -> None:
    from tripsim.io.export import save_figure
    from tripsim.report.plots import trip_profile_figure

    save_figure(trip_profile_figure(trip.trace, trip.summary), path)


def write_outputs(result: RunResult) -> list[Path]:
    """Write a run's files, all or none (see :func:`tripsim.io.export.write_all`)."""
    return write_results([result])


def execute(sc: Scenario, *, base: Path | None = None,
            progress: Progress = quiet) -> RunResult:
    """Check the outputs, read the inputs, run, and write every output or none."""
    check_outputs(sc, base)
    result = run_at(sc, base=base, progress=progress)
    write_outputs(result)
    return result


def run_at(sc: Scenario, *, base: Path | None = None,
           progress: Progress = quiet) -> RunResult:
    """Run a scenario and place its output files relative to ``base``; nothing is written.

    ``base`` is a scenario file's folder (None from the command line).
    """
    result = run(sc, base=base, progress=progress)
    if base is not None:
        result.files = {(p if p.is_absolute() else base / p): v for p, v in result.files.items()}
    return result


def check_outputs(sc: Scenario, base: Path | None = None, where: str = "") -> list[Path]:
    """Check before any work that each of a scenario's outputs can be written.

    From the command line (``base`` None) an error names the flag (``--map``); in a
    scenario file it names ``where`` and the key (``outputs.map``), with the path as typed.

    Returns
    -------
    list of Path
        The targets, resolved against ``base``.
    """
    from tripsim.io.export import check_output
    from tripsim.scenario import _FLAGS

    targets = []
    for name, value in sc.outputs.named().items():
        path = Path(value)
        label = _FLAGS[name] if base is None else f"{where}outputs.{name}"
        full = path if base is None or path.is_absolute() else base / path
        check_output(full, label, folder=name == "folder", shown=value)
        targets.append(full)
    return targets


def write_results(results: list[RunResult]) -> list[Path]:
    """Write the files of several runs together, all or none."""
    from tripsim.io.export import write_all

    return write_all([(path, flag, writer) for r in results
                      for path, (flag, writer) in r.files.items()])


def _remember_zones() -> None:
    """Keep time-zone answers on disk for the commands that run through here."""
    from tripsim import zones
    from tripsim.io.zone_cache import cached_zone_name

    zones.use_lookup(cached_zone_name)


_remember_zones()
