"""``tripsim bench``: measured speed of tripsim, as figures and same-run references.

Nothing here passes or fails: it prints what this machine did, each figure beside a
reference measured in the same run, and the aim it is held to:

* start-up: ``import tripsim`` and a whole ``tripsim simulate`` call as fresh processes
  (median of several), against the same simulation computed warm in this process
  (start-up overhead = cold command − warm compute);
* core: the full model from segments to trace over 100,000 segments, against the memory
  floor (numpy writing the trace's columns once), in time and in bytes;
* planner: a 4,000 km corridor with 1,500 sites (and 16,000 km with 6,000), against the
  same plan without shared charge curves; and the label sweep against a HiGHS MILP of
  the same state graph;
* fleet: a vehicle-year of the README's loop with sizing, against the day-by-day
  simulator; the README's ``tripsim fleet`` command as a process, wall time and memory;
* network: loading the demo OSM network cold and from the cache;
* reading: a 50 MB GPX track of 509,000 points, against reading and decoding its bytes
  (the floor of any reader), in time and in Python memory;
* demo (``--demo``): ``tripsim demo`` as a process;
* sweep: 1,000 simulations and 100 fleet years of the demo loop in this process, on one
  Dask worker and on two, against each other (the speed-up and the cost of a task), with
  what two busy processes got from the machine at the time.

Medians over repeats and the machine's load are printed with the figures, which are
only comparable within one run.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from tripsim.io.export import to_json_text
from tripsim.route import Route
from tripsim.segments import GEOD, segment_route
from tripsim.simulate import Conditions, simulate
from tripsim.vehicle import Vehicle

__all__ = ["bench_core", "bench_demo", "bench_fleet", "bench_fleet_readme", "bench_gpx",
           "bench_network", "bench_planner", "bench_planner_milp", "bench_reference",
           "bench_startup", "bench_sweep", "run_bench", "synthetic_route", "write_track_gpx"]

_BENCH_VEHICLE = {
    "name": "bench crossover",
    "body": {"mass_kg": 1900.0, "payload_kg": 150.0, "cd": 0.28, "frontal_area_m2": 2.5,
             "crr": 0.009, "crr_per_mps": 0.00003},
    "drivetrain": {"efficiency": 0.89, "regen_efficiency": 0.7},
    "battery": {"usable_kwh": 400.0},
    "auxiliary": {"base_w": 400.0},
}


_ROOT = Path(__file__).resolve().parent.parent
_DEMO = _ROOT / "routes_demo"
#: The README's commands, as the benchmark runs them.
README_SIMULATE = ["simulate", str(_DEMO / "harbour_loop.gpx"), "--vehicle",
                   str(_DEMO / "vehicles" / "swift_tern.toml"), "--speed-kph", "50", "--json",
                   "--quiet"]
README_FLEET = ["fleet", str(_DEMO / "harbour_loop.gpx"), "--vehicle",
                str(_DEMO / "vehicles" / "parcel_mule.toml"), "--speed-kph", "50", "--weather",
                str(_DEMO / "tamsreach.epw"), "--schedule", "Mon-Sat@08:00,13:30", "--policy",
                "plug-below:0.3", "--json", "--quiet"]
_RSS_WRAPPER = ("import resource, sys, atexit\n"
                "atexit.register(lambda: sys.stderr.write('maxrss_kb=%d\\n' % "
                "resource.getrusage(resource.RUSAGE_SELF).ru_maxrss))\n"
                "from tripsim.cli import main\n"
                "code = main(sys.argv[1:])\n"
                "sys.stdout.flush()\n"
                "sys.exit(code)\n")


def _process(args: list[str], repeat: int) -> dict[str, float]:
    """Wall time (median, min, max) and peak memory of a fresh Python process per run."""
    walls, rss = [], []
    for _ in range(repeat):
        t0 = time.perf_counter()
        done = subprocess.run([sys.executable, "-c", _RSS_WRAPPER, *args], capture_output=True,
                              text=True, cwd=_ROOT, check=False)
        walls.append(time.perf_counter() - t0)
        if done.returncode not in (0, 3):
            raise RuntimeError(f"benchmark command failed: {done.stderr.strip()[-300:]}")
        for line in done.stderr.splitlines():
            if line.startswith("maxrss_kb="):
                rss.append(int(line.split("=")[1]) / 1024.0)
    return {"median_s": float(np.median(walls)), "min_s": float(np.min(walls)),
            "max_s": float(np.max(walls)), "peak_mb": float(np.max(rss)) if rss else np.nan}


def bench_startup(repeat: int = 5) -> dict[str, Any]:
    """``import tripsim`` and the README's simulate command as fresh processes."""
    from tripsim.runner import run
    from tripsim.scenario import Scenario

    imports = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "import tripsim"], check=True, cwd=_ROOT)
        imports.append(time.perf_counter() - t0)
    baseline = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=True, cwd=_ROOT)
        baseline.append(time.perf_counter() - t0)
    cli = _process(README_SIMULATE, repeat)
    scenario = Scenario.model_validate({
        "kind": "simulate", "route": {"file": str(_DEMO / "harbour_loop.gpx")},
        "vehicle": str(_DEMO / "vehicles" / "swift_tern.toml"), "speed_kph": 50.0})
    run(scenario)  # warm
    warm, _ = _best(lambda: run(scenario), repeat)
    return {"python_s": float(np.median(baseline)), "import_s": float(np.median(imports)),
            "cli_simulate": cli, "warm_compute_s": warm,
            "startup_overhead_s": cli["median_s"] - warm}


def bench_fleet_readme(repeat: int = 3, compare_days: int = 10) -> dict[str, Any] | None:
    """The README's fleet year in process (with sizing) against the day-by-day simulator.

    Also the README's fleet command as a process.
    """
    from tripsim.runner import load_inputs, run
    from tripsim.scenario import Scenario
    from tripsim.simulate import simulate as plain

    if not (_DEMO / "tamsreach.epw").is_file():
        return None
    scenario = Scenario.model_validate({
        "kind": "fleet", "route": {"file": str(_DEMO / "harbour_loop.gpx")},
        "vehicle": str(_DEMO / "vehicles" / "parcel_mule.toml"), "speed_kph": 50.0,
        "weather": {"source": str(_DEMO / "tamsreach.epw")},
        "fleet": {"schedule": "Mon-Sat@08:00,13:30", "policy": "plug-below:0.3"}})
    inputs = load_inputs(scenario)
    run(scenario, inputs)  # warm
    t_year, result = _best(lambda: run(scenario, inputs), repeat)
    departs = result.fleet.runs["depart"].iloc[:compare_days]
    t0 = time.perf_counter()
    for d in departs:
        plain(inputs.routes[0], inputs.vehicle, weather=inputs.weather, depart=d,
              default_speed_kph=50.0)
    per_run = (time.perf_counter() - t0) / len(departs)
    n_runs = len(result.fleet.runs)
    cli = _process(README_FLEET, repeat)
    return {"runs": n_runs, "segments": len(inputs.routes[0]), "year_s": t_year,
            "plain_per_run_s": per_run, "plain_year_s": per_run * n_runs,
            "ratio_plain_to_year": per_run * n_runs / t_year, "cli": cli}


def bench_demo() -> dict[str, Any]:
    """``tripsim demo`` as a process (into a temporary folder)."""
    with tempfile.TemporaryDirectory() as tmp:
        return _process(["demo", "--out", tmp, "--no-traces"], 1)


def _load() -> float:
    try:
        return float(os.getloadavg()[0])
    except OSError:
        return float("nan")


def _best(fn: Callable[[], Any], repeat: int) -> tuple[float, Any]:
    best, out = np.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def synthetic_route(km: float, *, seed: int = 7) -> Route:
    """A long invented route: rolling hills, bends, changing limits, a stop every ~5 km."""
    rng = np.random.default_rng(seed)
    n = max(3, int(km * 10) + 1)  # a vertex every 100 m
    heading = 90.0 + np.cumsum(rng.normal(0.0, 2.0, n - 1))
    lon, lat = [7.0], [45.0]
    for h in heading:
        x, y, _ = GEOD.fwd(lon[-1], lat[-1], h, 100.0)
        lon.append(x)
        lat.append(y)
    s = np.arange(n) * 0.1
    ele = 300 + 80 * np.sin(s / 7.0) + 25 * np.sin(s / 1.3) + rng.normal(0, 0.5, n)
    limits = rng.choice([50.0, 80.0, 100.0, 120.0], size=n - 1, p=[0.15, 0.3, 0.3, 0.25])
    limits = np.repeat(limits[::20], 20)[: n - 1]  # limits hold for 2 km
    stops = np.zeros(n, dtype=np.int8)
    stops[rng.choice(np.arange(1, n - 1), size=max(1, int(km / 5)), replace=False)] = 3
    return Route(lat_deg=np.array(lat), lon_deg=np.array(lon), elevation_m=ele,
                 speed_limit_kph=limits, stop_kind=stops, name=f"synthetic {km:g} km")


def bench_core(km: float = 1000.0, segment_m: float = 10.0, repeat: int = 5) -> dict[str, Any]:
    """Time the full model from segments to trace, and the memory floor."""
    vehicle = Vehicle.model_validate(_BENCH_VEHICLE)
    t_seg, segments = _best(lambda: segment_route(synthetic_route(km), max_length_m=segment_m), 1)
    cond = Conditions(temp_c=12.0, wind_speed_mps=5.0, wind_from_deg=250.0)
    simulate(segments, vehicle, conditions=cond)  # compile and warm up
    t_sim, trip = _best(lambda: simulate(segments, vehicle, conditions=cond), repeat)
    n, n_cols = len(segments), trip.trace.shape[1]
    source = np.random.default_rng(1).random(n)

    def floor() -> list[np.ndarray]:
        return [source.copy() for _ in range(n_cols)]

    t_floor, _ = _best(floor, repeat * 4)
    tracemalloc.start()
    simulate(segments, vehicle, conditions=cond)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    floor_bytes = n * 8 * n_cols
    return {
        "segments": n, "trace_columns": n_cols, "segmenting_s": t_seg,
        "simulate_s": t_sim, "segments_per_s": n / t_sim, "floor_s": t_floor,
        "ratio_to_floor": t_sim / t_floor, "peak_mb": peak / 1e6,
        "floor_mb": floor_bytes / 1e6, "memory_ratio": peak / floor_bytes,
        "wh_per_km": trip.summary.wh_per_km,
    }


def bench_reference(km: float = 5.0, repeat: int = 3) -> dict[str, Any]:
    """Time solve_ivp on the same accelerate-cruise-brake physics as the simulator."""
    from scipy.integrate import solve_ivp

    from tripsim import roadload
    from tripsim.air import air_density

    vehicle = Vehicle.model_validate(_BENCH_VEHICLE)
    n = 2
    lon, lat, _ = GEOD.fwd([7.0, 7.0], [45.0, 45.0], [90.0, 90.0], [0.0, km * 1000.0])
    route = Route(lat_deg=np.array(lat), lon_deg=np.array(lon), elevation_m=np.zeros(n),
                  speed_limit_kph=np.array([100.0]))
    segments = segment_route(route)
    simulate(segments, vehicle)
    t_sim, trip = _best(lambda: simulate(segments, vehicle), repeat)
    m, m_eff = vehicle.mass_kg, vehicle.inertial_mass_kg
    rho, cda, crr = air_density(20.0, 101325.0), vehicle.body.drag_area_m2, vehicle.body.crr
    v_top, a, b = 100 / 3.6, 1.2, 1.8
    length = float(segments["length_m"].sum())

    def rhs(_t: float, y: np.ndarray) -> list[float]:
        s, v = y[0], max(y[1], 0.0)
        brake_from = length - v_top**2 / (2 * b)
        acc = (-b if s >= brake_from else (a if v < v_top else 0.0))
        f = roadload.aero_force_n(rho, cda, v * v) + roadload.rolling_force_n(m, crr, 0.0, v,
                                                                              vehicle.body.crr_per_mps)
        return [v, acc, (f + m_eff * acc) * v]

    def stop(_t: float, y: np.ndarray) -> float:
        return y[1] - 1e-3 if y[0] > 1.0 else 1.0

    stop.terminal = True  # type: ignore[attr-defined]
    t_ivp, sol = _best(lambda: solve_ivp(rhs, (0, 3600), [0.0, 1e-6, 0.0], method="DOP853",
                                       rtol=1e-9, atol=1e-9, events=stop, max_step=1.0), repeat)
    tr = trip.trace
    wheel_j = float(np.sum(tr["f_total_n"] * tr["slope_length_m"]))
    return {"km": km, "segments": len(segments), "simulate_s": t_sim, "solve_ivp_s": t_ivp,
            "ratio_ivp_to_simulate": t_ivp / t_sim,
            "wheel_energy_diff_pct": 100.0 * (wheel_j / float(sol.y[2, -1]) - 1.0)}


def bench_network(repeat: int = 3) -> dict[str, Any] | None:
    """Time loading the demo OSM network (cold and cached) and routing across it."""
    from tripsim.io import read_osm_graph
    from tripsim.roadgraph import route_through

    demo = Path(__file__).resolve().parent.parent / "routes_demo" / "tamsreach.osm"
    if not demo.is_file():
        return None
    t0 = time.perf_counter()
    import osmnx  # noqa: F401  (loaded only to build a graph: timed apart from the load)

    t_import = time.perf_counter() - t0
    colds = []
    for _ in range(2):  # each time into an empty cache
        with tempfile.TemporaryDirectory() as tmp:
            old = os.environ.get("TRIPSIM_CACHE_DIR")
            os.environ["TRIPSIM_CACHE_DIR"] = tmp
            try:
                t_cold, G = _best(lambda: read_osm_graph(demo, cache=True), 1)
                colds.append(t_cold)
                t_cached, _ = _best(lambda: read_osm_graph(demo, cache=True), repeat)
            finally:
                if old is None:
                    os.environ.pop("TRIPSIM_CACHE_DIR")
                else:
                    os.environ["TRIPSIM_CACHE_DIR"] = old
    t_cold = min(colds)
    wps = [(41.2, -31.6), (41.238669, -30.030016), (41.2, -29.331582)]
    t_route, route = _best(lambda: route_through(G, wps), repeat)
    return {"nodes": G.number_of_nodes(), "edges": G.number_of_edges(), "load_cold_s": t_cold,
            "load_cached_s": t_cached, "osmnx_import_s": t_import, "route_s": t_route,
            "route_points": route.n_points}


_FLEET_VEHICLE = {
    "name": "bench van",
    "body": {"mass_kg": 2300.0, "payload_kg": 500.0, "cd": 0.35, "frontal_area_m2": 4.0,
             "crr": 0.009},
    "drivetrain": {"efficiency": 0.88, "regen_efficiency": 0.68},
    "battery": {"usable_kwh": 90.0},
    "auxiliary": {"base_w": 450.0},
    "panels": [{"name": "roof", "area_m2": 5.0, "efficiency": 0.21, "tilt_deg": 0.0},
               {"name": "left", "area_m2": 1.0, "efficiency": 0.21, "tilt_deg": 90.0,
                "azimuth_deg": 270.0}],
}


def write_track_gpx(path: Path, points: int, *, seed: int = 11) -> int:
    """Write an invented GPX track like a logger's: a point a second with elevation and time.

    About 105 bytes a point (509,000 points make 50 MB).  Returns the file size in bytes.
    """
    rng = np.random.default_rng(seed)
    heading = np.cumsum(rng.normal(0.0, 0.02, points))
    step = 15.0 / 111_320.0  # about 15 m a second, in degrees of latitude
    lat = 41.2 + np.cumsum(step * np.cos(heading))
    lon = -31.6 + np.cumsum(step * np.sin(heading) / np.cos(np.radians(41.2)))
    ele = 100.0 + 40.0 * np.sin(np.arange(points) / 900.0)
    start = pd.Timestamp("2026-04-02T08:00:00Z")
    times = (start + pd.to_timedelta(np.arange(points), unit="s")).strftime("%Y-%m-%dT%H:%M:%SZ")
    with Path(path).open("w", encoding="utf-8") as fh:
        fh.write('<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="tripsim '
                 'bench (invented)" xmlns="http://www.topografix.com/GPX/1/1">\n<trk><name>'
                 "bench track</name><trkseg>\n")
        for a, b, e, t in zip(lat, lon, ele, times, strict=True):
            fh.write(f'  <trkpt lat="{a:.7f}" lon="{b:.7f}"><ele>{e:.1f}</ele><time>{t}</time>'
                     "</trkpt>\n")
        fh.write("</trkseg></trk>\n</gpx>\n")
    return Path(path).stat().st_size


def _peak_mb(fn: Callable[[], Any]) -> float:
    tracemalloc.start()
    try:
        fn()
        return tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


def bench_gpx(points: int = 509_000) -> dict[str, Any]:
    """Read a big GPX track, against reading and decoding its bytes (time, Python memory).

    The process's own resident size is bounded in ``tests/test_io_gpx_big.py``.
    """
    from tripsim.io.gpx import read_gpx

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "track.gpx"
        size = write_track_gpx(path, points)
        t_read, route = _best(lambda: read_gpx(path), 1)
        t_floor, _ = _best(lambda: path.read_bytes().decode("utf-8"), 1)
        peak = _peak_mb(lambda: read_gpx(path))
        floor = _peak_mb(lambda: path.read_bytes().decode("utf-8"))
    return {"points": route.n_points, "file_mb": size / 2**20, "read_s": t_read,
            "floor_s": t_floor, "peak_python_mb": peak, "floor_mb": floor}


def _loop(km: float) -> pd.DataFrame:
    half = synthetic_route(km / 2.0, seed=3)
    lat = np.r_[half.lat_deg, half.lat_deg[-2::-1]]
    lon = np.r_[half.lon_deg, half.lon_deg[-2::-1]]
    ele = np.r_[half.elevation_m, half.elevation_m[-2::-1]]
    stops = np.r_[half.stop_kind, half.stop_kind[-2::-1]]
    limits = np.r_[half.speed_limit_kph, half.speed_limit_kph[::-1]]
    loop = Route(lat_deg=lat, lon_deg=lon, elevation_m=ele, speed_limit_kph=limits,
                 stop_kind=stops, name=f"synthetic {km:g} km loop")
    return segment_route(loop, max_length_m=25.0)


def bench_fleet(km: float = 150.0, days: int = 365, compare_days: int = 20,
                repeat: int = 2) -> dict[str, Any] | None:
    """Time one vehicle-year of a loop against the plain simulator day by day."""
    from tripsim.fleet.year import Schedule, fleet_year
    from tripsim.io.weather_files import read_weather
    from tripsim.simulate import simulate as plain

    epw = Path(__file__).resolve().parent.parent / "routes_demo" / "tamsreach.epw"
    if not epw.is_file():
        return None
    weather = read_weather(epw)
    loop = _loop(km)
    vehicle = Vehicle.model_validate(_FLEET_VEHICLE)
    sched = Schedule.parse("Mon-Sun@06:00", weather.utc_offset_h)
    kw = dict(schedule=sched, days=days, size_search=False, start_soc=1.0)
    fleet_year(loop, vehicle, weather, **{**kw, "days": 3})  # compile and warm up
    t_year, result = _best(lambda: fleet_year(loop, vehicle, weather, **kw), repeat)
    t_sizing, sized = _best(lambda: fleet_year(loop, vehicle, weather,
                                               **{**kw, "size_search": True}), 1)
    departs = result.runs["depart"].iloc[:compare_days]
    t0 = time.perf_counter()
    trips = [plain(loop, vehicle, weather=weather, depart=d) for d in departs]
    t_plain = (time.perf_counter() - t0) / len(trips)
    drive_plain = np.array([(t.trace["demand_wh"] + t.trace["solar_power_w"]
                             * (t.trace["time_s"] + t.trace["dwell_s"]) / 3600.0).sum()
                            for t in trips])
    solar_plain = np.array([(t.trace["solar_power_w"] * (t.trace["time_s"] + t.trace["dwell_s"])
                             / 3600.0).sum() for t in trips])
    drive_fleet = result.runs["drive_wh"].to_numpy()[: len(trips)]
    solar_fleet = result.runs["solar_drive_wh"].to_numpy()[: len(trips)]
    return {
        "segments": len(loop), "km": float(loop["length_m"].sum() / 1000), "days": days,
        "year_s": t_year, "year_with_sizing_s": t_sizing, "plain_per_day_s": t_plain,
        "plain_year_s_extrapolated": t_plain * days,
        "ratio_plain_to_year": t_plain * days / t_year,
        "drive_energy_max_diff_pct": float(np.max(np.abs(drive_fleet / drive_plain - 1)) * 100),
        "drive_solar_max_diff_pct": float(np.max(np.abs(solar_fleet / np.maximum(solar_plain,
                                                                                   1e-9) - 1))
                                          * 100),
        "sun_grid_error_deg": _sun_grid_error(),
        "share_closed": result.totals["share_closed"],
        "min_panel_m2_for_target": sized.totals["min_panel_m2_for_target"],
    }


def _sun_grid_error() -> float:
    """Largest zenith error of the 10-minute SPA grid against SPA, over a year at 7-min steps."""
    from tripsim.solar import sun_position, sun_table
    from tripsim.timebase import epoch_seconds

    t = pd.date_range("2026-01-01", "2026-12-31 23:00", freq="7min", tz="UTC")
    seconds = epoch_seconds(t)
    table = sun_table(41.2, -31.6, float(seconds[0]), float(seconds[-1]))
    exact = sun_position(t, 41.2, -31.6)
    grid = table.at(seconds)
    up = exact.zenith_deg < 88.0
    return float(np.max(np.abs(grid.zenith_deg - exact.zenith_deg)[up]))


_PLAN_VEHICLE = {
    "name": "bench tourer",
    "body": {"mass_kg": 2000.0, "payload_kg": 200.0, "cd": 0.26, "frontal_area_m2": 2.5,
             "crr": 0.008},
    "drivetrain": {"efficiency": 0.9, "regen_efficiency": 0.7},
    "battery": {"usable_kwh": 75.0},
    "auxiliary": {"base_w": 400.0},
    "charging": {"ac_max_kw": 11.0, "dc_max_kw": 200.0, "efficiency": 0.92,
                 "connectors": ["type2", "type2_combo"],
                 "curve": {"x": [0.0, 0.1, 0.5, 0.8, 1.0], "y": [120.0, 200.0, 150.0, 70.0, 15.0]}},
}


def _corridor(km: float, n_sites: int, seed: int = 5) -> tuple[pd.DataFrame, list[Any]]:
    from tripsim.plan.sites import Site

    rng = np.random.default_rng(seed)
    route = synthetic_route(km, seed=seed)
    segments = segment_route(route, max_length_m=25.0)
    end = len(segments) - 1
    picks = np.sort(rng.choice(np.arange(1, end), size=n_sites, replace=False))
    sites = []
    for i, p in enumerate(picks):
        lat, lon = float(segments["lat_deg"].iloc[p]), float(segments["lon_deg"].iloc[p])
        off = rng.uniform(50.0, 1500.0)
        lon2, lat2, _ = GEOD.fwd(lon, lat, rng.uniform(0, 360), off)
        kw = float(rng.choice([22.0, 50.0, 150.0, 300.0]))
        conn = "type2" if kw == 22.0 else "type2_combo"
        sites.append(Site(f"b{i}", f"bench site {i}", float(lat2), float(lon2),
                          {conn: (2, kw)}))
    return segments, sites


def bench_planner(km: float = 4000.0, n_sites: int = 1500, step: float = 0.005,
                  repeat: int = 2) -> dict[str, Any]:
    """Plan a long corridor with many sites; time the whole plan and the label sweep."""
    from tripsim.plan.search import PlanOptions, _build_nodes, _solve, plan_trip
    from tripsim.plan.sites import snap_sites

    segments, sites = _corridor(km, n_sites)
    vehicle = Vehicle.model_validate(_PLAN_VEHICLE)
    opts = PlanOptions(soc_step=step)
    depart = pd.Timestamp("2026-06-01T06:00Z")
    plan_trip(segments.iloc[:2000].copy(), vehicle, sites[:5], options=opts, depart=depart)
    t_plan, plan = _best(lambda: plan_trip(segments, vehicle, sites, options=opts,
                                           depart=depart), repeat)
    trace = plan.trip.trace if plan.trip is not None else simulate(segments, vehicle).trace
    snapped = snap_sites(sites, segments, max_offset_m=opts.max_offset_m)
    nodes = _build_nodes(snapped, vehicle, trace, vehicle.battery.usable_kwh)
    t_dp, _ = _best(lambda: _solve(trace, nodes, vehicle, opts, vehicle.battery.usable_kwh * 1e3,
                                   0.9, depart, np.zeros(len(nodes))), repeat)
    cap = vehicle.battery.usable_kwh
    t_nodes, _ = _best(lambda: _build_nodes(snapped, vehicle, trace, cap), repeat)
    t_nodes_each, unshared = _best(lambda: _build_nodes(snapped, vehicle, trace, cap,
                                                        share_curves=False), 1)
    t_dp_each, _ = _best(lambda: _solve(trace, unshared, vehicle, opts, cap * 1e3, 0.9, depart,
                                        np.zeros(len(nodes))), 1)
    unshared_s = t_plan + (t_nodes_each - t_nodes) + (t_dp_each - t_dp)
    return {"km": km, "segments": len(segments), "sites": len(nodes), "soc_step": step,
            "plan_s": t_plan, "sweep_s": t_dp, "plan_curves_per_site_s": unshared_s,
            "feasible": plan.feasible, "charging_stops": plan.totals.get("charging_stops"),
            "rounds": plan.rounds}


def _milp(trace: pd.DataFrame, nodes: list[Any], opts: Any, cap_wh: float,
          start_soc: float) -> tuple[float, float, float]:
    """The same discretised problem as a shortest path, solved by HiGHS (scipy.optimize.milp).

    Returns (stops, seconds, solve time).  Arcs: start/departure → arrival (drive),
    departure → destination, arrival → departure (charge); cost stops·10⁶ + seconds.
    """
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import coo_matrix

    from tripsim.plan.search import _route_arrays

    arr = _route_arrays(trace, nodes)
    n_grid = round(1 / opts.soc_step) + 1
    top = int(np.floor(opts.max_charge_soc / opts.soc_step + 1e-9))
    q = opts.soc_step * cap_wh
    he, ht = arr.half_e, arr.half_t
    k_all = len(nodes) + 2
    grid = np.arange(n_grid) * opts.soc_step
    hours = [None] + [n.curve.cumulative_h(grid) for n in nodes]

    def a_id(j, g):  # arrival states, then departure states, then start and destination
        return (j - 1) * n_grid + g

    n_a = len(nodes) * n_grid
    start, dest = 2 * n_a, 2 * n_a + 1
    tails, heads, costs = [], [], []
    r_wh, arrive = opts.reserve_soc * cap_wh, max(opts.arrive_soc, opts.reserve_soc) * cap_wh
    sources = [(0, None, start_soc * cap_wh, start)] + [
        (k, g, g * q, n_a + a_id(k, g)) for k in range(1, k_all - 1) for g in range(top + 1)]
    for k, _g, soc_wh, node in sources:
        begin = soc_wh - he[k]
        peak = -np.inf
        for j in range(k + 1, k_all):
            peak = max(peak, arr.span_max[j - 1])
            if begin - (peak - arr.e_node[k]) < r_wh - 1e-6:
                break
            dt = arr.t_node[j] - arr.t_node[k] + ht[k] + ht[j]
            left = begin - (arr.e_node[j] - arr.e_node[k]) - he[j]
            if j == k_all - 1:
                if left >= arrive - 1e-6:
                    tails.append(node), heads.append(dest), costs.append(dt)
            elif left >= r_wh - 1e-6:
                a = min(int(np.floor(left / q + 1e-9)), n_grid - 1)
                tails.append(node), heads.append(a_id(j, a)), costs.append(dt)
    for j in range(1, k_all - 1):
        for a in range(n_grid):
            for g in range(a + 1, top + 1):
                tails.append(a_id(j, a)), heads.append(n_a + a_id(j, g))
                costs.append(1e6 + opts.stop_minutes * 60 + (hours[j][g] - hours[j][a]) * 3600)
    n_nodes, n_arcs = 2 * n_a + 2, len(tails)
    cols = np.arange(n_arcs)
    incidence = coo_matrix((np.r_[np.ones(n_arcs), -np.ones(n_arcs)],
                            (np.r_[tails, heads], np.r_[cols, cols])), shape=(n_nodes, n_arcs))
    rhs = np.zeros(n_nodes)
    rhs[start], rhs[dest] = 1.0, -1.0
    t0 = time.perf_counter()
    res = milp(np.asarray(costs), constraints=LinearConstraint(incidence.tocsr(), rhs, rhs),
               integrality=np.ones(n_arcs), bounds=Bounds(0, 1))
    t_solve = time.perf_counter() - t0
    if not res.success:
        return np.nan, np.nan, t_solve
    return float(res.fun // 1e6), float(res.fun % 1e6), t_solve


def bench_planner_milp(km: float = 1200.0, n_sites: int = 100, step: float = 0.02
                       ) -> dict[str, Any]:
    """The label sweep against HiGHS on the same 100-site instance and SoC grid."""
    from tripsim.plan.search import PlanOptions, _best_destination, _build_nodes, _solve
    from tripsim.plan.sites import snap_sites

    segments, sites = _corridor(km, n_sites, seed=11)
    vehicle = Vehicle.model_validate(_PLAN_VEHICLE)
    opts = PlanOptions(soc_step=step)
    trace = simulate(segments, vehicle).trace
    nodes = _build_nodes(snap_sites(sites, segments), vehicle, trace, 75.0)
    depart = pd.Timestamp("2026-06-01T06:00Z")
    _solve(trace, nodes, vehicle, opts, 75_000.0, 0.9, depart, np.zeros(len(nodes)))
    t_dp, out = _best(lambda: _solve(trace, nodes, vehicle, opts, 75_000.0, 0.9, depart,
                                     np.zeros(len(nodes))), 3)
    sweep = out[0]
    slot = _best_destination(sweep, True)
    dp = (float(sweep.arrival.stops[-1, 0, slot]), float(sweep.arrival.clock[-1, 0, slot]))
    stops, seconds, t_milp = _milp(trace, nodes, opts, 75_000.0, 0.9)
    return {"sites": len(nodes), "soc_step": step, "sweep_s": t_dp, "milp_s": t_milp,
            "ratio_milp_to_sweep": t_milp / t_dp, "same_optimum": bool(
                dp[0] == stops and abs(dp[1] - seconds) < 1e-3), "stops": dp[0],
            "hours": dp[1] / 3600}


def _sweep_specs(runs: int, years: int, days: int) -> dict[str, dict[str, Any]]:
    """The two benchmark sweeps on the demo loop (the harbour loop, its weather year)."""
    demo = Path(__file__).resolve().parent.parent / "routes_demo"
    factors = [round(0.8 + 0.4 * k / 9, 4) for k in range(10)]
    dates = max(1, runs // len(factors))
    first = pd.Timestamp("2026-01-01")
    base = {"speed_kph": 50.0, "route": {"file": str(demo / "harbour_loop.gpx")},
            "weather": {"source": str(demo / "tamsreach.epw")}}
    side = max(1, round(years ** 0.5))
    return {
        "simulate": {"name": "bench-simulate", "scenario": {
            "kind": "simulate", "vehicle": str(demo / "vehicles" / "swift_tern.toml"), **base},
            "axes": {"drive.speed_factor": factors, "depart.date": [
                (first + pd.Timedelta(days=int(k * 364 / dates))).date().isoformat()
                for k in range(dates)]}},
        "fleet": {"name": "bench-fleet", "scenario": {
            "kind": "fleet", "vehicle": str(demo / "vehicles" / "parcel_mule.toml"), **base,
            "fleet": {"schedule": "Mon-Sat@08:00,13:30", "days": days, "size_search": False}},
            "axes": {"vehicle.battery.usable_kwh": [40.0 + 80.0 * k / max(side - 1, 1)
                                                    for k in range(side)],
                     "vehicle.panel_area_m2": [2.0 + 7.0 * k / max(side - 1, 1)
                                               for k in range(max(1, years // side))]}},
    }


def bench_sweep(runs: int = 1000, years: int = 100, *, days: int = 365,
                workers: tuple[int, ...] = (1, 2), plain: int = 50,
                repeat: dict[str, int] | None = None) -> dict[str, Any] | None:
    """Sweeps of the demo loop in this process and on 1 and 2 Dask workers.

    ``runs`` simulations (10 speed factors × departure days of the weather year) and
    ``years`` fleet years (battery × panel sizes).  For each: seconds (the best of
    ``repeat`` passes, taken in turn with the other set-ups, so that other load on the
    machine falls on all alike), runs and tasks a second, the speed-up over this
    process, the cost of a task (the extra seconds on one worker over this process, per
    task) and the CPU seconds inside the tasks.  ``plain`` simulations are also run one
    by one with ``runner.run`` (no departures shared) for comparison.
    """
    from tripsim.sweep import load_spec
    from tripsim.sweep.cluster import dask_client
    from tripsim.sweep.tasks import warm_up

    specs = _sweep_specs(runs, years, days)
    if not Path(specs["simulate"]["scenario"]["route"]["file"]).is_file():
        return None
    repeat = {"simulate": 3, "fleet": 1, **(repeat or {})}
    warm_up()
    sweeps = {kind: load_spec(spec) for kind, spec in specs.items()}
    out: dict[str, Any] = {"cpus": os.cpu_count(), "load_1min_start": _load(),
                           "two_processes_start": _two_processes()}
    best: dict[tuple[str, int], dict[str, Any]] = {}
    for kind, spec in specs.items():
        _timed_sweep(load_spec({**spec, "axes": {k: v[:1] for k, v in spec["axes"].items()}}),
                     None)  # imports, kernels and sun tables of this process
        _keep_best(best, kind, 0, _timed_sweep(sweeps[kind], None))
    for n in workers:
        t0 = time.perf_counter()
        with dask_client(n, dashboard=False) as client:
            client.run(warm_up)
            started = time.perf_counter() - t0
            for kind, sweep in sweeps.items():
                for _ in range(repeat[kind]):
                    _keep_best(best, kind, n, {**_timed_sweep(sweep, client),
                                               "start_s": started})
                    if n == workers[0] and repeat[kind] > 1:  # this process, in turn
                        _keep_best(best, kind, 0, _timed_sweep(sweep, None))
    for kind, sweep in sweeps.items():
        here = best[(kind, 0)]
        figures: dict[str, Any] = {
            "runs": sweep.n_runs, "in_process_s": here["s"], "in_process_tasks": here["tasks"],
            "in_process_task_cpu_s": here["cpu_s"], "failed": here["failed"]}
        for n in workers:
            w = best[(kind, n)]
            figures[f"w{n}"] = {"s": w["s"], "start_s": w["start_s"], "tasks": w["tasks"],
                                "task_cpu_s": w["cpu_s"], "runs_per_s": sweep.n_runs / w["s"],
                                "tasks_per_s": w["tasks"] / w["s"], "speedup": here["s"] / w["s"],
                                "same_rows": _same(w["rows"], here["rows"])}
        if 1 in workers:
            w1 = figures["w1"]
            figures["task_overhead_ms"] = 1000.0 * (w1["s"] - here["s"]) / max(w1["tasks"], 1)
        if 1 in workers and 2 in workers:
            figures["speedup_2_over_1"] = figures["w1"]["s"] / figures["w2"]["s"]
        out[kind] = figures
    if plain:
        out["simulate"].update(_one_by_one(sweeps["simulate"], plain))
    out["load_1min_end"] = _load()
    out["two_processes_end"] = _two_processes()
    return out


def _busy(n: int) -> int:
    total = 0
    for i in range(n):
        total += i
    return total


def _two_processes(n: int = 5_000_000) -> float:
    """How much faster two processes of a busy loop run than one after the other, just now.

    2.0 on two idle cores; less when other work holds a core (this machine is shared).
    """
    from concurrent.futures import ProcessPoolExecutor

    t0 = time.perf_counter()
    _busy(n)
    _busy(n)
    alone = time.perf_counter() - t0
    with ProcessPoolExecutor(2) as pool:
        list(pool.map(_busy, [10, 10]))
        t0 = time.perf_counter()
        list(pool.map(_busy, [n, n]))
        both = time.perf_counter() - t0
    return alone / both


def _timed_sweep(sweep: Any, client: Any) -> dict[str, Any]:
    from tripsim.sweep import execute_sweep

    t0 = time.perf_counter()
    totals, rows = execute_sweep(sweep, client=client)
    return {"s": time.perf_counter() - t0, "tasks": totals["tasks_now"],
            "cpu_s": totals["task_cpu_s"], "failed": totals["failed"], "rows": rows}


def _keep_best(best: dict[tuple[str, int], dict[str, Any]], kind: str, n: int,
               got: dict[str, Any]) -> None:
    if (kind, n) not in best or got["s"] < best[(kind, n)]["s"]:
        best[(kind, n)] = got


def _same(a: pd.DataFrame | None, b: pd.DataFrame | None) -> bool:
    """The same rows (the error column aside, which holds None or text)."""
    if a is None or b is None or a.shape != b.shape:
        return False
    return bool(a.drop(columns=["error"]).equals(b.drop(columns=["error"])))


def _one_by_one(sweep: Any, n: int) -> dict[str, float]:
    """Seconds a run when the first ``n`` runs go one by one through ``runner.run``."""
    from tripsim.runner import load_inputs, run
    from tripsim.sweep.tasks import scenario_data

    first = sweep.plan.iloc[:n]
    names = tuple(first.columns)
    scenarios = [sweep.base.model_validate(scenario_data(sweep.base_data, names, tuple(row)))
                 for row in first.itertuples(index=False)]
    inputs = load_inputs(scenarios[0], cache={})
    run(scenarios[0], inputs)
    t0 = time.perf_counter()
    for sc in scenarios:
        run(sc, inputs)
    return {"one_by_one_per_run_s": (time.perf_counter() - t0) / len(scenarios)}


def _sweep_rows(s: dict[str, Any]) -> None:
    """The sweep's rows of the table: 2 workers against this process and 1 worker."""
    print(_row("  (sweep: two busy processes)", f"{s['two_processes_start']:.2f}× "
               f"/ {s['two_processes_end']:.2f}×", "what 2 processes got from the machine",
               "2.0 on idle cores"))
    for kind, label in (("simulate", "simulations"), ("fleet", "fleet years")):
        f = s.get(kind)
        if not f:
            continue
        here = f["in_process_s"]
        print(_row(f"sweep {f['runs']:,} {label}, this process", f"{here:.2f} s",
                   f"{f['runs'] / here:.1f} runs/s, {f['in_process_tasks']} batches", "–"))
        for n in (1, 2):
            w = f.get(f"w{n}")
            if w:
                print(_row(f"  on {n} worker{'s' if n > 1 else ''}", f"{w['s']:.2f} s",
                           f"{w['tasks']} tasks, {w['tasks_per_s']:.2f} tasks/s, "
                           f"{w['speedup']:.2f}× this process",
                           "≥ 1.8× on 2 cores" if n == 2 else "–"))
        if "speedup_2_over_1" in f:
            print(_row("  2 workers over 1, a task's cost", f"{f['speedup_2_over_1']:.2f}×",
                       f"{f['task_overhead_ms']:+.0f} ms a task over this process",
                       "≥ 1.8×"))
        if "one_by_one_per_run_s" in f:
            print(_row("  one by one (runner.run)", f"{1000 * f['one_by_one_per_run_s']:.1f} ms "
                       "a run", f"{1000 * here / f['runs']:.1f} ms a run in the sweep's "
                       "batches", "–"))


def _row(what: str, figure: str, reference: str, aim: str) -> str:
    return f"  {what:<34s} {figure:<22s} {reference:<40s} {aim}"


def run_bench(*, km: float = 1000.0, segment_m: float = 10.0, as_json: bool = False,
              demo: bool = False) -> int:
    """Run the benchmarks and print their figures (see the module notes)."""
    results: dict[str, Any] = {
        "machine": {"cpus": os.cpu_count(), "load_1min": _load(), "numpy": np.__version__,
                    "pandas": pd.__version__, "python": sys.version.split()[0]},
        "startup": bench_startup(), "core": bench_core(km, segment_m),
        "reference": bench_reference(), "network": bench_network(),
        "fleet": bench_fleet_readme(), "fleet_synthetic": bench_fleet(),
        "planner": bench_planner(), "planner_large": bench_planner(16000.0, 6000, repeat=1),
        "planner_vs_milp": bench_planner_milp(), "gpx": bench_gpx(),
        "demo": bench_demo() if demo else None, "sweep": bench_sweep(),
    }
    results["machine"]["load_1min_after"] = _load()
    if as_json:
        print(to_json_text(results))
        return 0
    m = results["machine"]
    print(f"tripsim bench: {m['cpus']} cpus, load {m['load_1min']:.1f} before and "
          f"{m['load_1min_after']:.1f} after; python {m['python']}, numpy {m['numpy']}")
    print(_row("what", "figure", "reference (same run)", "aim"))
    st = results["startup"]
    cli = st["cli_simulate"]
    print(_row("import tripsim", f"{st['import_s']:.2f} s", f"bare python {st['python_s']:.2f} s",
               "≤ 1.0 s"))
    print(_row("CLI simulate, README loop", f"{cli['median_s']:.2f} s ({cli['peak_mb']:.0f} MB)",
               f"warm compute {1000 * st['warm_compute_s']:.0f} ms → start-up "
               f"{st['startup_overhead_s']:.2f} s", "≤ 1.2 s"))
    c = results["core"]
    print(_row(f"simulate {c['segments']:,} segments", f"{1000 * c['simulate_s']:.1f} ms",
               f"floor {1000 * c['floor_s']:.1f} ms → {c['ratio_to_floor']:.1f}×", "≤ 8 ms"))
    print(_row("  its memory", f"{c['peak_mb']:.0f} MB",
               f"floor {c['floor_mb']:.0f} MB → {c['memory_ratio']:.1f}×", "≤ 4× floor"))
    for key in ("planner", "planner_large"):
        p = results[key]
        print(_row(f"plan {p['km']:.0f} km, {p['sites']} sites", f"{p['plan_s']:.2f} s",
                   f"curves per site {p['plan_curves_per_site_s']:.2f} s; sweep "
                   f"{p['sweep_s']:.2f} s", "≤ 0.25 s" if key == "planner" else "≤ 1 s"))
    mi = results["planner_vs_milp"]
    print(_row(f"  sweep, {mi['sites']} sites", f"{1000 * mi['sweep_s']:.1f} ms",
               f"HiGHS MILP {mi['milp_s']:.2f} s, same optimum {mi['same_optimum']}", "–"))
    f = results["fleet"]
    if f:
        print(_row(f"fleet year, {f['runs']} runs, sizing", f"{f['year_s']:.2f} s",
                   f"day by day {f['plain_year_s']:.0f} s → {f['ratio_plain_to_year']:.0f}×",
                   "≤ 0.25 s"))
        print(_row("CLI fleet, README example", f"{f['cli']['median_s']:.2f} s "
                   f"({f['cli']['peak_mb']:.0f} MB)", "", "≤ 3 s, ≤ 300 MB"))
    g = results["network"]
    if g:
        print(_row("OSM load, demo network", f"{1000 * g['load_cold_s']:.0f} ms",
                   f"cached {1000 * g['load_cached_s']:.1f} ms; osmnx import "
                   f"{g['osmnx_import_s']:.2f} s (only to build)", "≤ 300 ms; cached ~3 ms"))
    x = results["gpx"]
    print(_row(f"read GPX, {x['points']:,} points",
               f"{x['read_s']:.2f} s ({x['peak_python_mb']:.0f} MB)",
               f"bytes + decode {x['floor_s']:.2f} s ({x['floor_mb']:.0f} MB)",
               "≤ 10 s, ≤ 500 MB"))
    r = results["reference"]
    print(_row(f"solve_ivp, {r['km']:g} km", f"{1000 * r['solve_ivp_s']:.0f} ms",
               f"simulate {1000 * r['simulate_s']:.1f} ms (wheel energy "
               f"{r['wheel_energy_diff_pct']:+.3f} %)", "–"))
    fs = results["fleet_synthetic"]
    if fs:
        print(_row(f"fleet year, {fs['km']:.0f} km loop", f"{fs['year_s']:.2f} s",
                   f"day by day {fs['plain_year_s_extrapolated']:.0f} s; agreement "
                   f"{fs['drive_energy_max_diff_pct']:.1e} %", "–"))
    if results["demo"]:
        d = results["demo"]
        print(_row("tripsim demo", f"{d['median_s']:.1f} s ({d['peak_mb']:.0f} MB)", "",
                   "≤ 8 s"))
    if results["sweep"]:
        _sweep_rows(results["sweep"])
    return 0
