"""``tripsim bench``: measured speed of the simulator, as figures and same-run ratios.

Nothing here passes or fails: it prints what this machine did.

1. core: the full model from segments to trace (speed profile, road load, powertrain,
   state of charge, trace table) over a long synthetic route, against the memory-bound
   floor measured in the same run (numpy filling the trace's output columns once);
2. reference: the same physics integrated by ``scipy.integrate.solve_ivp`` on a shorter
   route, against the simulator on that route;
3. network: loading and routing on the demo OSM network, cold and from the cache;
4. reading: a 50 MB GPX track of half a million points (time and peak memory).
"""

from __future__ import annotations

import os
import tempfile
import time
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

__all__ = ["bench_core", "bench_fleet", "bench_gpx", "bench_network", "bench_planner",
           "bench_planner_milp", "bench_reference", "run_bench", "synthetic_route",
           "write_track_gpx"]

_BENCH_VEHICLE = {
    "name": "bench crossover",
    "body": {"mass_kg": 1900.0, "payload_kg": 150.0, "cd": 0.28, "frontal_area_m2": 2.5,
             "crr": 0.009, "crr_per_mps": 0.00003},
    "drivetrain": {"efficiency": 0.89, "regen_efficiency": 0.7},
    "battery": {"usable_kwh": 400.0},
    "auxiliary": {"base_w": 400.0},
}


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
    return {
        "segments": n, "trace_columns": n_cols, "segmenting_s": t_seg,
        "simulate_s": t_sim, "segments_per_s": n / t_sim, "floor_s": t_floor,
        "ratio_to_floor": t_sim / t_floor, "wh_per_km": trip.summary.wh_per_km,
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
    with tempfile.TemporaryDirectory() as tmp:
        old = os.environ.get("TRIPSIM_CACHE_DIR")
        os.environ["TRIPSIM_CACHE_DIR"] = tmp
        try:
            t_cold, G = _best(lambda: read_osm_graph(demo, cache=True), 1)
            t_cached, _ = _best(lambda: read_osm_graph(demo, cache=True), repeat)
        finally:
            if old is None:
                os.environ.pop("TRIPSIM_CACHE_DIR")
            else:
                os.environ["TRIPSIM_CACHE_DIR"] = old
    wps = [(41.2, -31.6), (41.238669, -30.030016), (41.2, -29.331582)]
    t_route, route = _best(lambda: route_through(G, wps), repeat)
    return {"nodes": G.number_of_nodes(), "edges": G.number_of_edges(), "load_cold_s": t_cold,
            "load_cached_s": t_cached, "route_s": t_route, "route_points": route.n_points}


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

    About 105 bytes a point (509,000 points make 53 MB).  Returns the file size in bytes.
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


def bench_gpx(points: int = 509_000) -> dict[str, Any]:
    """Read a big GPX track: wall time, and the peak of Python memory while reading.

    The peak (tracemalloc) counts the file's bytes, its text and the point arrays; the
    process's own size is in the test ``tests/test_io_gpx_big.py``.
    """
    import tracemalloc

    from tripsim.io.gpx import read_gpx

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "track.gpx"
        size = write_track_gpx(path, points)
        t_read, route = _best(lambda: read_gpx(path), 1)
        tracemalloc.start()
        try:
            read_gpx(path)
            peak = tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
    return {"points": route.n_points, "file_mb": size / 2**20, "read_s": t_read,
            "peak_python_mb": peak / 2**20}


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
    return {"km": km, "segments": len(segments), "sites": len(nodes), "soc_step": step,
            "plan_s": t_plan, "sweep_s": t_dp, "feasible": plan.feasible,
            "charging_stops": plan.totals.get("charging_stops"), "rounds": plan.rounds}


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


def run_bench(*, km: float = 1000.0, segment_m: float = 10.0, as_json: bool = False) -> int:
    """Run the benchmarks and print their figures."""
    results = {"machine": {"cpus": os.cpu_count(), "numpy": np.__version__,
                           "pandas": pd.__version__},
               "core": bench_core(km, segment_m), "reference": bench_reference(),
               "network": bench_network(), "fleet": bench_fleet(),
               "planner": bench_planner(), "planner_vs_milp": bench_planner_milp(),
               "gpx": bench_gpx()}
    if as_json:
        print(to_json_text(results))
        return 0
    c, r, g = results["core"], results["reference"], results["network"]
    print(f"core: {c['segments']:,} segments ({km:g} km at {segment_m:g} m), "
          f"{c['trace_columns']} trace columns")
    print(f"  simulate        {1000 * c['simulate_s']:8.2f} ms   "
          f"({c['segments_per_s'] / 1e6:.2f} M segments/s)")
    print(f"  memory floor    {1000 * c['floor_s']:8.2f} ms   ratio {c['ratio_to_floor']:.1f}×")
    print(f"  segmenting      {1000 * c['segmenting_s']:8.2f} ms   (route → segments, not in the "
          "ratio)")
    print(f"reference: {r['km']:g} km accelerate-cruise-brake, {r['segments']} segments")
    print(f"  simulate        {1000 * r['simulate_s']:8.2f} ms")
    print(f"  solve_ivp       {1000 * r['solve_ivp_s']:8.2f} ms   ratio "
          f"{r['ratio_ivp_to_simulate']:.0f}× slower; wheel energy differs by "
          f"{r['wheel_energy_diff_pct']:+.3f} %")
    if g:
        print(f"network: demo OSM, {g['nodes']} nodes / {g['edges']} edges after preparation")
        print(f"  load cold       {1000 * g['load_cold_s']:8.1f} ms")
        print(f"  load cached     {1000 * g['load_cached_s']:8.1f} ms")
        print(f"  route 3 points  {1000 * g['route_s']:8.1f} ms")
    f = results["fleet"]
    if f:
        print(f"fleet: {f['days']} days of a {f['km']:.0f} km loop, {f['segments']:,} segments, "
              "hourly weather, 7 m² of panels")
        print(f"  one vehicle-year  {f['year_s']:8.3f} s   (with battery and panel sizing "
              f"{f['year_with_sizing_s']:.2f} s)")
        print(f"  plain simulator   {f['plain_per_day_s']:8.3f} s a day → "
              f"{f['plain_year_s_extrapolated']:.0f} s a year; ratio "
              f"{f['ratio_plain_to_year']:.0f}×")
        print(f"  agreement with the plain simulator: drive energy within "
              f"{f['drive_energy_max_diff_pct']:.2f} %, driving solar within "
              f"{f['drive_solar_max_diff_pct']:.2f} %; sun grid error ≤ "
              f"{f['sun_grid_error_deg']:.3f}°")
    p, m = results["planner"], results["planner_vs_milp"]
    print(f"planner: {p['km']:.0f} km corridor, {p['segments']:,} segments, {p['sites']} sites, "
          f"{100 * p['soc_step']:.1f} % SoC grid")
    print(f"  whole plan        {p['plan_s']:8.3f} s   ({p['rounds']} round(s), "
          f"{p['charging_stops']} stops; label sweep alone {p['sweep_s']:.3f} s)")
    print(f"  vs MILP (HiGHS), {m['sites']} sites at {100 * m['soc_step']:.0f} %: sweep "
          f"{1000 * m['sweep_s']:.1f} ms, MILP {m['milp_s']:.2f} s, ratio "
          f"{m['ratio_milp_to_sweep']:.0f}×, same optimum: {m['same_optimum']}")
    x = results["gpx"]
    print(f"reading: GPX of {x['points']:,} points, {x['file_mb']:.0f} MB: {x['read_s']:.2f} s, "
          f"peak Python memory {x['peak_python_mb']:.0f} MB")
    return 0
