"""The ``tripsim`` command line.

Every sub-command prints a compact table by default and JSON with ``--json``.
Bad input ends with exit status 2 and one line naming the file or option and
the problem; no output file is left half-written.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

import pandas as pd

from tripsim.caution import CAUTION
from tripsim.drive import DriveOptions
from tripsim.errors import TripsimInputError
from tripsim.io.export import save_figure, to_json_text, write_trace
from tripsim.simulate import Conditions, SolarOptions, simulate
from tripsim.summary import Summary
from tripsim.trips import load_segments, load_weather, parse_waypoints

__all__ = ["main"]

EXIT_BAD_INPUT = 2
_TRACE_SUFFIXES = (".csv", ".parquet", ".geojson", ".json")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # one line, exit 2, like every other bad input
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"tripsim: error: {message}\n")


def _hours(h: float) -> str:
    minutes = round(h * 60)
    return f"{minutes // 60} h {minutes % 60:02d} min"


def format_summary(s: Summary) -> str:
    """Human-readable table of a trip summary."""
    b = s.breakdown_wh
    parts = " · ".join(f"{k.removesuffix('_wh').replace('_', ' ')} {v / 1000:.2f}"
                       for k, v in b.items() if abs(v) >= 0.5)
    soc_line = (f"{100 * s.start_soc:.0f}% → EMPTY at km {s.stranded_at_km:.1f} "
                f"(short by {s.shortfall_wh / 1000:.2f} kWh)" if s.stranded else
                f"{100 * s.start_soc:.0f}% → {100 * s.final_soc:.1f}%  "
                f"(lowest {100 * s.min_soc:.1f}% at km {s.min_soc_km:.1f})")
    rows = [
        f"{s.route}  ·  {s.vehicle}",
        f"  distance       {s.distance_km:9.1f} km     time    {_hours(s.duration_h)}"
        f"  (avg {s.avg_speed_kph:.0f} km/h)",
        f"  battery energy {s.battery_wh / 1000:9.2f} kWh    {s.wh_per_km:.0f} Wh/km · "
        f"{s.wh_per_mi:.0f} Wh/mi",
        f"  regenerated    {s.regen_wh / 1000:9.2f} kWh    auxiliary {s.aux_wh / 1000:.2f} kWh",
        *([f"  solar gain     {s.solar_wh / 1000:9.2f} kWh    = {s.solar_km:.1f} km of driving"]
          if s.solar_wh > 0 else []),
        f"  state of charge {soc_line}",
        f"  range at this rate {s.range_km:.0f} km   climb {s.ascent_m:.0f} m "
        f"(unsmoothed {s.ascent_raw_m:.0f} m, elevation: {s.elevation_source})",
        f"  breakdown kWh  {parts}",
        f"  depart {s.depart}  arrive {s.arrive}",
        "",
        f"caution: {CAUTION}",
    ]
    return "\n".join(rows)


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
        from tripsim.plots import trip_profile_figure

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


def format_fleet(totals: dict, name: str) -> str:
    """Human-readable fleet totals."""
    def opt(value: float | None, unit: str) -> str:
        return "not reachable in the search range" if value is None else f"{value:.1f} {unit}"

    return "\n".join([
        f"{name}: {totals['loop_km']:.1f} km loop, {totals['days']} operating days",
        f"  closed on solar alone  {totals['days_closed']} days "
        f"({100 * totals['share_closed']:.0f} %)   stranded {totals['days_stranded']} days",
        f"  consumption            {totals['drive_kwh']:.0f} kWh over {totals['km']:.0f} km "
        f"({totals['wh_per_km_before_solar']:.0f} Wh/km before solar)",
        f"  solar                  {totals['solar_kwh']:.0f} kWh = {totals['solar_km']:.0f} km"
        f"   grid {totals['grid_kwh']:.0f} kWh",
        f"  to close {100 * totals['target_share']:.0f} % of days on solar: battery "
        f"{opt(totals['min_battery_kwh_for_target'], 'kWh')} (now "
        f"{totals['battery_kwh']:.0f}), or panels {opt(totals['min_panel_m2_for_target'], 'm²')}"
        f" (now {totals['panel_m2']:.1f})",
        "",
        f"caution: {CAUTION}",
    ])


def _cmd_fleet(args: argparse.Namespace) -> int:
    from tripsim.fleet import ChargingPolicy, Schedule, fleet_year
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
    from tripsim.plots import fleet_monthly_figure, fleet_soc_figure

    out.mkdir(parents=True, exist_ok=True)
    write_table(result.daily, out / "daily.csv")
    write_table(result.runs, out / "runs.csv")
    write_json({**result.totals, "caution": CAUTION}, out / "totals.json")
    save_figure(fleet_soc_figure(result.daily, title), out / "soc_year.png")
    save_figure(fleet_monthly_figure(result.daily, title), out / "monthly_solar.png")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of ``tripsim``."""
    parser = _Parser(prog="tripsim", description="Electric-vehicle trips on real roads: energy, "
                     "state of charge, solar gain and charging stops.",
                     epilog=f"caution: {CAUTION}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    _add_simulate(sub)
    _add_fleet(sub)
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


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    args = build_parser().parse_args(argv)
    func: Callable[[argparse.Namespace], int] = args.func
    try:
        return func(args)
    except TripsimInputError as exc:
        print(f"tripsim: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
