"""The ``tripsim`` command line.

Every sub-command prints a compact table by default and JSON with ``--json``.
Bad input ends with exit status 2 and one line naming the file or option and
the problem; no output file is left half-written.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path

import pandas as pd

from tripsim.caution import CAUTION
from tripsim.drive import DriveOptions
from tripsim.errors import TripsimInputError, TripsimWarning
from tripsim.inputs import load_segments, load_weather, parse_waypoints
from tripsim.io.export import save_figure, to_json_text, write_trace
from tripsim.report.text import (
    compare_routes,
    compare_speeds,
    format_fleet,
    format_plan,
    format_summary,
)
from tripsim.simulate import Conditions, SolarOptions, simulate
from tripsim.timebase import parse_window_h

__all__ = ["main"]

EXIT_BAD_INPUT = 2
_TRACE_SUFFIXES = (".csv", ".parquet", ".geojson", ".json")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2, like every other bad input
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"tripsim: error: {message}\n")


def _check_output(path: str | None, suffixes: Sequence[str], option: str) -> Path | None:
    if path is None:
        return None
    p = Path(path)
    if not p.name.lower().endswith(tuple(suffixes)):
        raise TripsimInputError(f"{p.name}: expected a file ending in {', '.join(suffixes)}",
                                option)
    if not p.parent.exists():
        raise TripsimInputError(f"folder {p.parent} does not exist", option)
    return p


def _depart(text: str | None) -> pd.Timestamp | None:
    if text is None:
        return None
    try:
        ts = pd.Timestamp(text)
    except ValueError:
        raise TripsimInputError(f"{text!r} is not an ISO 8601 time", "--depart") from None
    if ts.tzinfo is None:
        raise TripsimInputError(f"{text!r} has no time zone; add one, e.g. {text}+01:00",
                                "--depart")
    return ts


def _road_speeds(text: str | None) -> dict[str, float] | None:
    if not text:
        return None
    table: dict[str, float] = {}
    for item in text.split(","):
        key, sep, value = item.partition("=")
        try:
            kph = float(value)
        except ValueError:
            kph = -1.0
        if not sep or not key.strip() or not (1.0 <= kph <= 300.0):
            raise TripsimInputError(f"{item.strip()!r}: expected highway=km/h with 1-300 km/h",
                                    "--road-speeds")
        table[key.strip()] = kph
    return table


def _cmd_simulate(args: argparse.Namespace) -> int:
    from tripsim.io import read_vehicle

    trace_out = _check_output(args.trace, _TRACE_SUFFIXES, "--trace")
    plot_out = _check_output(args.plot, (".png", ".svg", ".pdf"), "--plot")
    if (args.wind_speed_mps is None) != (args.wind_from_deg is None) and args.wind_speed_mps:
        raise TripsimInputError("give --wind-speed-mps together with --wind-from-deg", "--wind")
    vehicle = read_vehicle(args.vehicle)
    waypoints = parse_waypoints(args.waypoints) if args.waypoints else None
    segments = load_segments(args.route, waypoints=waypoints, dem=args.dem,
                             max_length_m=args.segment_m, smooth_sigma_m=args.smooth_m,
                             cache=not args.no_cache,
                             highway_kph=_road_speeds(args.road_speeds))
    conditions = Conditions(
        temp_c=args.temp_c,
        pressure_pa=None if args.pressure_hpa is None else args.pressure_hpa * 100.0,
        wind_speed_mps=args.wind_speed_mps or 0.0, wind_from_deg=args.wind_from_deg or 0.0,
    )
    depart = _depart(args.depart) or pd.Timestamp("2026-06-21T08:00:00Z")
    weather = None
    if args.weather:
        weather = load_weather(args.weather, segments, start=depart,
                               end=depart + pd.Timedelta(days=3), cloud_factor=args.cloud,
                               temp_c=args.temp_c, wind_speed_mps=args.wind_speed_mps or 0.0,
                               wind_from_deg=args.wind_from_deg or 0.0)
    trip = simulate(segments, vehicle, conditions=conditions,
                    drive=DriveOptions(speed_factor=args.speed_factor),
                    depart=depart, start_soc=args.start_soc,
                    battery_model=args.battery_model, default_speed_kph=args.speed_kph,
                    weather=weather, solar=SolarOptions(shading=args.shading,
                                                        sky_model=args.sky_model))
    if trace_out is not None:
        write_trace(trip.trace, trace_out)
    if plot_out is not None:
        from tripsim.report.plots import trip_profile_figure

        save_figure(trip_profile_figure(trip.trace, trip.summary), plot_out)
    print(to_json_text(trip.summary.to_dict()) if args.json else format_summary(trip.summary))
    return 0


def _cmd_demo(args: argparse.Namespace) -> int:
    from tripsim.demo import run_demo

    return run_demo(Path(args.out), as_json=args.json, traces=not args.no_traces)


def _cmd_bench(args: argparse.Namespace) -> int:
    from tripsim.bench import run_bench

    return run_bench(km=args.km, segment_m=args.segment_m, as_json=args.json)


def _add_simulate(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("simulate", help="energy, speed and state of charge along a route")
    p.add_argument("route", help="GPX, GeoJSON, or OSM XML road network (with --waypoints)")
    p.add_argument("--vehicle", required=True, help="vehicle TOML file")
    p.add_argument("--waypoints", help='"lat,lon;lat,lon;…" to route through on an OSM network')
    p.add_argument("--dem", help="elevation raster (GeoTIFF); used instead of file elevation")
    p.add_argument("--depart", help="departure, ISO 8601 with time zone (2026-06-21T08:00+02:00)")
    p.add_argument("--temp-c", type=float, default=20.0, help="ambient temperature [°C]")
    p.add_argument("--pressure-hpa", type=float, help="air pressure [hPa] (default: by elevation)")
    p.add_argument("--wind-speed-mps", type=float, help="wind speed at 10 m [m/s]")
    p.add_argument("--wind-from-deg", type=float, help="direction the wind blows from [° from N]")
    p.add_argument("--start-soc", type=float, default=1.0, help="state of charge at departure 0-1")
    p.add_argument("--speed-kph", type=float, help="speed on roads with no known limit [km/h]")
    p.add_argument("--speed-factor", type=float, default=1.0, help="share of the limit driven")
    p.add_argument("--segment-m", type=float, default=25.0, help="longest segment [m]")
    p.add_argument("--smooth-m", type=float, default=40.0, help="elevation smoothing σ [m]; 0 off")
    p.add_argument("--battery-model", choices=("energy", "rint"), default="energy")
    _add_weather_options(p)
    p.add_argument("--road-speeds", help='speeds for OSM roads with no maxspeed tag, by highway '
                   'class: "residential=30,primary=90" [km/h]')
    p.add_argument("--no-cache", action="store_true", help="do not cache the prepared OSM graph")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.add_argument("--trace", help="write the trace: .csv, .parquet or .geojson")
    p.add_argument("--plot", help="write a profile figure: .png (or .svg, .pdf)")
    p.set_defaults(func=_cmd_simulate)


def _add_weather_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--weather", help="EPW, TMY3 (.csv) or TMY2 (.tm2) file, or clear-sky "
                   "(then --temp-c and --wind-* give the air)")
    p.add_argument("--cloud", type=float, default=0.0, help="cloud share 0-1 for clear-sky")
    p.add_argument("--shading", type=float, default=0.0,
                   help="share of sunlight lost along the route (trees, buildings) 0-1")
    p.add_argument("--sky-model", choices=("isotropic", "perez", "haydavies"),
                   default="isotropic", help="sky-diffuse model for the panels")


def _add_fleet(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("fleet", help="a daily loop over a weather year: does it close on solar?")
    p.add_argument("route", help="the loop: GPX, GeoJSON, or OSM XML with --waypoints")
    p.add_argument("--vehicle", required=True, help="vehicle TOML file")
    p.add_argument("--weather", required=True,
                   help="typical year: EPW, TMY3 (.csv) or TMY2 (.tm2), or clear-sky")
    p.add_argument("--waypoints", help='"lat,lon;…" through which the loop runs (OSM)')
    p.add_argument("--dem", help="elevation raster (GeoTIFF)")
    p.add_argument("--schedule", default="Mon-Fri@08:00",
                   help='operating days and departures, local standard time of the weather: '
                   '"Mon-Fri@08:00,13:30"')
    p.add_argument("--policy", default="solar-only",
                   help="solar-only, or plug-below:SOC[:KW[:HOURS]] e.g. plug-below:0.3:7.4:10")
    p.add_argument("--start-date", default="2026-01-01", help="first day (YYYY-MM-DD)")
    p.add_argument("--days", type=int, default=365, help="number of days")
    p.add_argument("--start-soc", type=float,
                   help="SoC on the first morning (default: where the year ends)")
    p.add_argument("--parking-heading", type=float, default=180.0,
                   help="where the nose points while parked [° from N]")
    p.add_argument("--parking-shading", type=float, default=0.0, help="shade while parked 0-1")
    p.add_argument("--shading", type=float, default=0.0, help="shade while driving 0-1")
    p.add_argument("--target", type=float, default=0.9,
                   help="share of operating days that must close, for sizing")
    p.add_argument("--speed-kph", type=float, help="speed on roads with no known limit [km/h]")
    p.add_argument("--json", action="store_true", help="print the totals as JSON")
    p.add_argument("--out", help="folder for daily.csv, runs.csv, totals.json and figures")
    p.set_defaults(func=_cmd_fleet)


def _cmd_fleet(args: argparse.Namespace) -> int:
    from tripsim.fleet.year import ChargingPolicy, Schedule, fleet_year
    from tripsim.io import read_vehicle
    from tripsim.parking import Parking

    out = Path(args.out) if args.out else None
    if out is not None and out.exists() and not out.is_dir():
        raise TripsimInputError("exists and is not a folder", out)
    policy = ChargingPolicy.parse(args.policy)
    parking = Parking(heading_deg=args.parking_heading, shading=args.parking_shading)
    solar = SolarOptions(shading=args.shading)
    vehicle = read_vehicle(args.vehicle)
    waypoints = parse_waypoints(args.waypoints) if args.waypoints else None
    segments = load_segments(args.route, waypoints=waypoints, dem=args.dem)
    try:
        first = pd.Timestamp(args.start_date)
    except ValueError:
        raise TripsimInputError(f"{args.start_date!r} is not a date", "--start-date") from None
    lon = float(segments["lon_deg"].mean())
    start = first.tz_localize(None).tz_localize("UTC") - pd.Timedelta(days=1)
    weather = load_weather(args.weather, segments, start=start,
                           end=start + pd.Timedelta(days=args.days + 2))
    offset = weather.utc_offset_h if weather.periodic else float(round(lon / 15.0))
    schedule = Schedule.parse(args.schedule, offset)
    result = fleet_year(segments, vehicle, weather, schedule=schedule, start_date=first,
                        days=args.days, policy=policy, parking=parking, solar=solar,
                        start_soc=args.start_soc, target_share=args.target,
                        default_speed_kph=args.speed_kph)
    if out is not None:
        _write_fleet(result, out, f"{vehicle.name} on {segments.attrs.get('name', 'loop')}")
    payload = {**result.totals, "vehicle": vehicle.name, "weather": weather.source,
               "policy": args.policy, "schedule": args.schedule, "caution": CAUTION}
    print(to_json_text(payload) if args.json else format_fleet(result.totals, vehicle.name))
    return 0


def _write_fleet(result: object, out: Path, title: str) -> None:
    from tripsim.io.export import write_json, write_table
    from tripsim.report.plots import fleet_monthly_figure, fleet_soc_figure

    out.mkdir(parents=True, exist_ok=True)
    write_table(result.daily, out / "daily.csv")
    write_table(result.runs, out / "runs.csv")
    write_json({**result.totals, "caution": CAUTION}, out / "totals.json")
    save_figure(fleet_soc_figure(result.daily, title), out / "soc_year.png")
    save_figure(fleet_monthly_figure(result.daily, title), out / "monthly_solar.png")


def _add_plan(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("plan", help="charging stops: fewest stops, then the shortest trip")
    p.add_argument("route", help="GPX, GeoJSON, or OSM XML road network (with --waypoints)")
    p.add_argument("--vehicle", required=True, help="vehicle TOML file")
    p.add_argument("--chargers", required=True, help="charging sites: OSM XML or CSV")
    p.add_argument("--waypoints", help='"lat,lon;lat,lon;…" (OSM networks)')
    p.add_argument("--dem", help="elevation raster (GeoTIFF)")
    p.add_argument("--depart", help="departure, ISO 8601 with time zone")
    p.add_argument("--start-soc", type=float, default=0.9, help="SoC at departure 0-1")
    p.add_argument("--temp-c", type=float, default=20.0, help="ambient temperature [°C]")
    p.add_argument("--wind-speed-mps", type=float, help="wind speed at 10 m [m/s]")
    p.add_argument("--wind-from-deg", type=float, help="direction the wind blows from [°]")
    p.add_argument("--speed-kph", type=float, help="speed on roads with no known limit [km/h]")
    _add_weather_options(p)
    p.add_argument("--reserve", type=float, default=0.10, help="never below this SoC")
    p.add_argument("--arrive-soc", type=float, default=0.15, help="at least this on arrival")
    p.add_argument("--max-charge-soc", type=float, default=0.8, help="never charge above")
    p.add_argument("--stop-minutes", type=float, default=5.0, help="fixed time per stop [min]")
    p.add_argument("--objective", choices=("stops", "time"), default="stops",
                   help="stops: fewest stops, then least time; time: least time")
    p.add_argument("--soc-step", type=float, default=0.005, help="SoC grid of the planner")
    p.add_argument("--max-offset-km", type=float, default=2.0,
                   help="ignore sites farther than this from the route [km]")
    p.add_argument("--daily-window", help="driving allowed between, e.g. 08:00-19:00")
    p.add_argument("--max-drive-h", type=float, help="longest driving per day [h]")
    p.add_argument("--lodging", help="CSV of places to sleep (lat, lon, name[, connector, "
                   "power_kw])")
    p.add_argument("--speed-factors", help="compare driver speed factors, e.g. 0.85,0.95,1.05")
    p.add_argument("--alternatives", type=int, default=1,
                   help="plan on this many alternative routes (OSM, two waypoints)")
    p.add_argument("--json", action="store_true", help="print the plan as JSON")
    p.add_argument("--map", help="write the map page: OUT.html")
    p.add_argument("--stops-csv", help="write the stops as CSV")
    p.add_argument("--geojson", help="write route and stops as GeoJSON")
    p.add_argument("--plan-json", help="write the plan as a JSON file")
    p.set_defaults(func=_cmd_plan)


def _factors(text: str | None) -> list[float]:
    if not text:
        return []
    try:
        values = [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise TripsimInputError(f"{text!r}: numbers separated by commas", "--speed-factors"
                                ) from None
    return values


def _cmd_plan(args: argparse.Namespace) -> int:
    from tripsim.plan.search import PlanOptions, plan_trip, speed_factor_rows, with_speed_factor

    for path, opt in ((args.map, "--map"), (args.stops_csv, "--stops-csv"),
                      (args.geojson, "--geojson"), (args.plan_json, "--plan-json")):
        suffixes = {"--map": (".html",), "--stops-csv": (".csv",),
                    "--geojson": (".geojson", ".json"), "--plan-json": (".json",)}[opt]
        _check_output(path, suffixes, opt)
    options = PlanOptions(reserve_soc=args.reserve, arrive_soc=args.arrive_soc,
                          max_charge_soc=args.max_charge_soc, stop_minutes=args.stop_minutes,
                          objective=args.objective, soc_step=args.soc_step,
                          max_offset_m=args.max_offset_km * 1000.0,
                          daily_window_h=(parse_window_h(args.daily_window, "--daily-window")
                                          if args.daily_window else None),
                          max_drive_h=args.max_drive_h)
    if (args.daily_window or args.max_drive_h) and not args.lodging:
        raise TripsimInputError("a daily window needs places to sleep", "--lodging")
    factors = _factors(args.speed_factors)
    routes, detour, vehicle, sites = _plan_inputs(args)
    depart = _depart(args.depart) or pd.Timestamp("2026-06-21T08:00:00Z")
    conditions = Conditions(temp_c=args.temp_c, wind_speed_mps=args.wind_speed_mps or 0.0,
                            wind_from_deg=args.wind_from_deg or 0.0)

    weather = None
    if args.weather:  # read once; a clear sky is tabulated at the first route's middle
        weather = load_weather(args.weather, routes[0], start=depart,
                               end=depart + pd.Timedelta(days=8), cloud_factor=args.cloud,
                               temp_c=args.temp_c, wind_speed_mps=args.wind_speed_mps or 0.0,
                               wind_from_deg=args.wind_from_deg or 0.0)

    def plan_for(segments: pd.DataFrame, factor: float = 1.0) -> object:
        return plan_trip(segments, vehicle, sites, options=options, depart=depart,
                         start_soc=args.start_soc, conditions=conditions, weather=weather,
                         solar=SolarOptions(shading=args.shading, sky_model=args.sky_model),
                         drive=with_speed_factor(None, factor),
                         default_speed_kph=args.speed_kph, network_detour=detour)

    plans = [(seg, plan_for(seg)) for seg in routes]
    plans.sort(key=lambda sp: _plan_key(sp[1], args.objective))
    segments, plan = plans[0]
    extra = compare_routes(plans)
    comparison = speed_factor_rows(factors, lambda f: plan_for(segments, f))
    extra += compare_speeds(comparison)
    if not plan.feasible and plan.shortfall is not None and "fixes" in plan.shortfall:
        for f in (0.9, 0.8):
            if plan_for(segments, f).feasible:
                plan.shortfall["fixes"]["speed_factor"] = f
                break
    _write_plan_outputs(args, plan, segments)
    payload = {**plan.to_dict(), "route": segments.attrs.get("name", "route"),
               "vehicle": vehicle.name, "speed_factors": comparison,
               "alternatives": [{"route": s.attrs.get("name"), "feasible": p.feasible,
                                 "charging_stops": p.totals.get("charging_stops"),
                                 "total_h": p.totals.get("total_h")} for s, p in plans]}
    print(to_json_text(payload) if args.json else format_plan(plan, extra))
    return 0


def _plan_key(plan: object, objective: str) -> tuple:
    t = plan.totals
    if not plan.feasible:
        return (1, 0, 0.0)
    if objective == "stops":
        return (0, t["charging_stops"], t["total_h"])
    return (0, t["total_h"], t["charging_stops"])


def _plan_inputs(args: argparse.Namespace) -> tuple:
    from tripsim.io import read_osm_graph, read_vehicle
    from tripsim.io.chargers_file import read_chargers, read_lodgings
    from tripsim.roadgraph import alternative_routes, network_detour
    from tripsim.segments import segment_route

    vehicle = read_vehicle(args.vehicle)
    sites = list(read_chargers(args.chargers))
    if args.lodging:
        sites += read_lodgings(args.lodging)
    waypoints = parse_waypoints(args.waypoints) if args.waypoints else None
    name = Path(args.route).name.lower()
    detour = None
    if name.endswith((".osm", ".osm.bz2", ".osm.gz", ".osm.xml")) and waypoints:
        G = read_osm_graph(args.route)
        detour = network_detour(G)
        if args.alternatives > 1:
            from tripsim.io import read_dem

            routes = []
            for r in alternative_routes(G, waypoints, args.alternatives, name=Path(args.route).stem,
                                        source=args.route):
                dem = None
                if args.dem:
                    dem = read_dem(args.dem, bounds_deg=(r.lon_deg.min() - 0.01,
                                                         r.lat_deg.min() - 0.01,
                                                         r.lon_deg.max() + 0.01,
                                                         r.lat_deg.max() + 0.01))
                routes.append(segment_route(r, dem=dem))
            return routes, detour, vehicle, sites
    segments = load_segments(args.route, waypoints=waypoints, dem=args.dem)
    return [segments], detour, vehicle, sites


def _write_plan_outputs(args: argparse.Namespace, plan: object, segments: pd.DataFrame) -> None:
    from tripsim.io.export import write_plan, write_text
    from tripsim.report.geo import plan_geojson

    if args.map and plan.trip is None:  # refuse before writing anything
        raise TripsimInputError("no feasible plan to draw (see the shortfall)", "--map")
    write_plan(plan.to_dict(), plan.stops_table(),
               plan_geojson(plan) if plan.trip is not None else None,
               json_path=args.plan_json, stops_csv=args.stops_csv, geojson_path=args.geojson)
    if args.map:
        from tripsim.report.mapview import plan_map_html

        title = f"{segments.attrs.get('name', 'route')}"
        write_text(plan_map_html(plan, plan.sites, title=title), args.map)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``tripsim``."""
    parser = _Parser(prog="tripsim", description="Electric-vehicle trips on real roads: energy, "
                     "state of charge, solar gain and charging stops.",
                     epilog=f"caution: {CAUTION}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    _add_simulate(sub)
    _add_fleet(sub)
    _add_plan(sub)
    p = sub.add_parser("demo", help="run the main job on the invented demo region")
    p.add_argument("--out", default="demo_out", help="folder for the demo's outputs")
    p.add_argument("--no-traces", action="store_true", help="write summaries and figures only")
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=_cmd_demo)
    p = sub.add_parser("bench", help="measure the simulator's speed")
    p.add_argument("--km", type=float, default=1000.0, help="route length for the core benchmark")
    p.add_argument("--segment-m", type=float, default=10.0)
    p.add_argument("--json", action="store_true")
    p.set_defaults(func=_cmd_bench)
    return parser


def _show_warning(message: Warning | str, category: type[Warning], filename: str, lineno: int,
                  file: object = None, line: str | None = None) -> None:
    """Input warnings on one line, like errors; others as Python prints them."""
    if issubclass(category, TripsimWarning):
        print(f"tripsim: warning: {message}", file=sys.stderr)
    else:
        sys.stderr.write(warnings.formatwarning(message, category, filename, lineno, line))


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    args = build_parser().parse_args(argv)
    func: Callable[[argparse.Namespace], int] = args.func
    with warnings.catch_warnings():
        warnings.showwarning = _show_warning
        try:
            return func(args)
        except TripsimInputError as exc:
            print(f"tripsim: error: {exc}", file=sys.stderr)
            return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
