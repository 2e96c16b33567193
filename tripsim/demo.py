"""``tripsim demo``: the main job, end to end, on the invented Tamsreach region.

For every trip in ``routes_demo/trips.toml`` and every vehicle it names: read
the route (routing on the OSM network where it is one), sample the elevation
raster, simulate under the trip's weather, and write the trace, a profile
figure and a summary.  The region, its roads and its vehicles are invented.
"""

from __future__ import annotations

from pathlib import Path

from tripsim.caution import CAUTION
from tripsim.errors import TripsimInputError
from tripsim.inputs import load_segments, parse_waypoints
from tripsim.io import read_vehicle
from tripsim.io.export import save_figure, to_json_text, write_json, write_trace
from tripsim.io.trips_file import (
    FleetSpec,
    PlanSpec,
    TripSpec,
    read_fleets,
    read_plans,
    read_trips,
)
from tripsim.report.text import compare_speeds, demo_fleet_text, demo_trip_table, format_plan
from tripsim.simulate import Conditions, Trip, simulate
from tripsim.timebase import parse_window_h

__all__ = ["demo_dir", "run_claim_demo", "run_coastdown_demo", "run_demo", "run_log_demo",
           "run_trip_spec"]

_ROW_KEYS = ("distance_km", "duration_h", "battery_wh", "wh_per_km", "wh_per_mi", "regen_wh",
             "aux_wh", "final_soc", "min_soc", "ascent_m", "stranded", "stranded_at_km")


def demo_dir() -> Path:
    """The ``routes_demo`` folder of a source checkout."""
    here = Path(__file__).resolve().parent.parent / "routes_demo"
    if not (here / "trips.toml").is_file():
        raise TripsimInputError("the demo data is not here (run from a source checkout)", here)
    return here


def run_trip_spec(spec: TripSpec, vehicles_dir: Path) -> dict[str, Trip]:
    """Simulate one trip for each of its vehicles."""
    segments = load_segments(
        spec.route, waypoints=parse_waypoints(spec.waypoints) if spec.waypoints else None,
        dem=spec.dem)
    segments.attrs["name"] = spec.name
    cond = Conditions(temp_c=spec.temp_c, wind_speed_mps=spec.wind_speed_mps,
                      wind_from_deg=spec.wind_from_deg)
    out = {}
    for key in spec.vehicles:
        vehicle = read_vehicle(vehicles_dir / f"{key}.toml")
        out[key] = simulate(segments, vehicle, conditions=cond, depart=spec.depart,
                            start_soc=spec.start_soc, default_speed_kph=spec.speed_kph)
    return out


def run_fleet_spec(spec: FleetSpec, vehicles_dir: Path, out: Path) -> dict[str, object]:
    """The fleet year of the spec's vehicle (with figures) and a solar year of each other."""
    from tripsim.fleet.year import ChargingPolicy, Schedule, fleet_year
    from tripsim.io.export import write_table
    from tripsim.io.weather_files import read_weather
    from tripsim.parking import Parking
    from tripsim.report.plots import fleet_monthly_figure, fleet_soc_figure

    segments = load_segments(
        spec.route, waypoints=parse_waypoints(spec.waypoints) if spec.waypoints else None,
        dem=spec.dem)
    weather = read_weather(spec.weather)
    schedule = Schedule.parse(spec.schedule, weather.utc_offset_h)
    parking = Parking(heading_deg=spec.parking_heading_deg, shading=spec.parking_shading)
    common = dict(schedule=schedule, parking=parking, default_speed_kph=spec.speed_kph,
                  target_share=spec.target_share)
    vehicle = read_vehicle(vehicles_dir / f"{spec.vehicle}.toml")
    main = fleet_year(segments, vehicle, weather, policy=ChargingPolicy.parse(spec.policy),
                      **common)
    title = f"{vehicle.name}, {spec.name}"
    save_figure(fleet_soc_figure(main.daily, title), out / f"{spec.name}--soc_year.png")
    save_figure(fleet_monthly_figure(main.daily, title), out / f"{spec.name}--monthly.png")
    write_table(main.daily, out / f"{spec.name}--daily.csv")
    solar_year = {}
    for key in spec.solar_year_vehicles:
        v = read_vehicle(vehicles_dir / f"{key}.toml")
        t = fleet_year(segments, v, weather, size_search=False, **common).totals
        solar_year[key] = {k: t[k] for k in ("solar_kwh", "solar_km", "share_closed",
                                             "days_closed", "days_stranded", "drive_kwh",
                                             "panel_m2")}
    return {"policy": spec.policy, "schedule": spec.schedule, "vehicle": vehicle.name,
            "totals": main.totals, "solar_year_solar_only": solar_year}


def run_plan_spec(spec: PlanSpec, vehicles_dir: Path, out: Path) -> tuple[dict, str]:
    """Plan one demo trip: write its map, JSON and stops; return the summary and text."""
    from tripsim.io import read_osm_graph
    from tripsim.io.chargers_file import read_chargers, read_lodgings
    from tripsim.io.export import write_plan, write_text
    from tripsim.io.weather_files import read_weather
    from tripsim.io.web_assets import read_leaflet
    from tripsim.plan.search import PlanOptions, plan_trip, speed_factor_rows, with_speed_factor
    from tripsim.report.mapview import MapAssets, plan_map_html
    from tripsim.roadgraph import network_detour

    segments = load_segments(spec.route, waypoints=parse_waypoints(spec.waypoints)
                             if spec.waypoints else None, dem=spec.dem)
    segments.attrs["name"] = spec.name
    vehicle = read_vehicle(vehicles_dir / f"{spec.vehicle}.toml")
    sites = read_chargers(spec.chargers) + (read_lodgings(spec.lodging) if spec.lodging else [])
    detour = network_detour(read_osm_graph(spec.route)) if spec.waypoints else None
    weather = read_weather(spec.weather) if spec.weather else None
    options = PlanOptions(reserve_soc=spec.reserve_soc, arrive_soc=spec.arrive_soc,
                          max_charge_soc=spec.max_charge_soc, objective=spec.objective,
                          daily_window_h=(parse_window_h(spec.daily_window, "daily_window")
                                          if spec.daily_window else None),
                          max_drive_h=spec.max_drive_h)

    def plan_for(factor: float = 1.0):
        return plan_trip(segments, vehicle, sites, options=options, depart=spec.depart,
                         start_soc=spec.start_soc, weather=weather, network_detour=detour,
                         drive=with_speed_factor(None, factor))

    plan = plan_for()
    speeds = speed_factor_rows(spec.speed_factors, plan_for, known={1.0: plan})
    write_plan(plan.to_dict(), plan.stops_table(), None,
               json_path=out / f"{spec.name}--plan.json",
               stops_csv=out / f"{spec.name}--stops.csv")
    if plan.trip is not None:
        write_text(plan_map_html(plan, plan.sites, title=f"{spec.description} — {vehicle.name}",
                                 assets=MapAssets.inline(*read_leaflet())),
                   out / f"{spec.name}--map.html")
    text = (f"\nplan {spec.name} ({vehicle.name}): {spec.description}\n"
            + format_plan(plan, compare_speeds(speeds)).split("\n\ncaution")[0])
    return {**plan.to_dict(), "vehicle": vehicle.name, "speed_factors": speeds}, text


def run_coastdown_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Fit the demo's coast-down runs: write the figure and the ``[body]`` snippet."""
    from tripsim.claims.coastdown import fit_road_load
    from tripsim.io.coastdown_file import read_coastdown_runs
    from tripsim.io.export import write_text
    from tripsim.report.coastdown_plots import coastdown_figure
    from tripsim.report.coastdown_text import body_snippet, demo_coastdown_text

    vehicle = read_vehicle(here / "vehicles" / "harbour_crossover.toml")
    runs = read_coastdown_runs(here / "coastdown_runs.csv")
    runs.attrs["source"] = "routes_demo/coastdown_runs.csv"
    fit = fit_road_load(runs, vehicle)
    save_figure(coastdown_figure(fit), out / "coastdown--harbour_crossover.png")
    write_text(body_snippet(fit, vehicle), out / "coastdown--harbour_crossover--body.toml")
    result = {**fit.to_dict(), "vehicle_file": {"cda_m2": vehicle.body.drag_area_m2,
                                                "crr": vehicle.body.crr}}
    return result, demo_coastdown_text(result)


def run_claim_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Check the demo's range claims (``claims.toml``): write their figures; return results."""
    from tripsim.claims.logs import prepare_log
    from tripsim.claims.range_claim import Claim, ClaimOptions, check_claim
    from tripsim.io.claim_file import read_claim_specs
    from tripsim.io.drive_log import read_drive_log
    from tripsim.io.weather_files import read_weather
    from tripsim.report.claim_plots import claim_figure
    from tripsim.report.claim_text import demo_claim_text

    results, texts = {}, []
    for spec in read_claim_specs(here / "claims.toml"):
        segments = load_segments(spec.route, waypoints=parse_waypoints(spec.waypoints)
                                 if spec.waypoints else None, dem=spec.dem)
        segments.attrs["name"] = spec.corridor or spec.name
        claim = Claim(distance_km=spec.claim_km, speed_kph=spec.stated_speed_kph,
                      temp_c=spec.stated_temp_c, climate=spec.stated_climate,
                      payload_kg=spec.stated_payload_kg)
        cycle = (prepare_log(read_drive_log(spec.cycle), name=spec.cycle.stem)
                 if spec.cycle else None)
        result = check_claim(segments, read_vehicle(here / "vehicles" / f"{spec.vehicle}.toml"),
                             read_weather(spec.weather), claim,
                             ClaimOptions(depart_time=spec.depart_time,
                                          sensitivity_samples=spec.sensitivity_samples),
                             default_speed_kph=spec.speed_kph, cycle=cycle)
        save_figure(claim_figure(result), out / f"claim--{spec.name}.png")
        payload = result.to_dict()
        results[spec.name] = payload
        texts.append(demo_claim_text(payload))
    return results, "\n".join(texts)


def run_log_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Drive the demo's logged drives at their recorded speeds; compare and calibrate."""
    from tripsim.claims.logs import drive_log, prepare_log
    from tripsim.io.claim_file import read_log_specs
    from tripsim.io.drive_log import read_drive_log
    from tripsim.io.weather_files import read_weather
    from tripsim.report.claim_plots import log_figure
    from tripsim.report.claim_text import demo_log_text

    results, texts = {}, []
    for spec in read_log_specs(here / "claims.toml"):
        log = prepare_log(read_drive_log(spec.log), name=spec.name)
        logged = drive_log(log, read_vehicle(here / "vehicles" / f"{spec.vehicle}.toml"),
                           weather=read_weather(spec.weather) if spec.weather else None)
        save_figure(log_figure(logged), out / f"log--{spec.name}.png")
        payload = {**logged.to_dict(), "source": f"routes_demo/{spec.log.name}",
                   "summary": logged.trip.summary.to_dict()}
        results[spec.name] = payload
        texts.append(demo_log_text(payload))
    return results, "\n".join(texts)


def run_demo(out: Path, *, as_json: bool = False, traces: bool = True) -> int:
    """Run every demo trip; write outputs under ``out``; print a table (or JSON).

    With ``traces=False`` only the summary and the figures are written (the small
    results committed in ``routes_demo/results``).
    """
    here = demo_dir()
    out.mkdir(parents=True, exist_ok=True)
    rows: list[dict[str, object]] = []
    summaries: dict[str, dict[str, object]] = {}
    for spec in read_trips(here / "trips.toml"):
        for key, trip in run_trip_spec(spec, here / "vehicles").items():
            stem = f"{spec.name}--{key}"
            if traces:
                write_trace(trip.trace, out / f"{stem}.parquet")
            if key == spec.vehicles[0]:
                from tripsim.report.plots import trip_profile_figure

                save_figure(trip_profile_figure(trip.trace, trip.summary), out / f"{stem}.png")
            s = trip.summary.to_dict()
            summaries[stem] = s
            rows.append({"trip": spec.name, "vehicle": s["vehicle"],
                         **{k: s[k] for k in _ROW_KEYS}})
    fleets = {spec.name: run_fleet_spec(spec, here / "vehicles", out)
              for spec in read_fleets(here / "trips.toml")}
    plans, plan_texts = {}, []
    for spec in read_plans(here / "trips.toml"):
        plans[spec.name], text = run_plan_spec(spec, here / "vehicles", out)
        plan_texts.append(text)
    coastdown, coastdown_text = run_coastdown_demo(here, out)
    claims, claims_text = run_claim_demo(here, out)
    logs, logs_text = run_log_demo(here, out)
    result = {"caution": CAUTION, "trips": summaries, "fleets": fleets, "plans": plans,
              "coastdown": coastdown, "claims": claims, "logs": logs}
    write_json(result, out / "summary.json")
    if as_json:
        print(to_json_text(result))
    else:
        print("tripsim demo — the invented Tamsreach region\n")
        print(demo_trip_table(rows))
        for name, f in fleets.items():
            print(demo_fleet_text(name, f))
        for text in plan_texts:
            print(text)
        print(coastdown_text)
        print(claims_text)
        print(logs_text)
        print(f"\noutputs in {out.resolve()}/ (summary.json, profiles as .png, plan maps as "
              f"--map.html{', traces as .parquet' if traces else ''})")
        print(f"\ncaution: {CAUTION}")
    return 0
