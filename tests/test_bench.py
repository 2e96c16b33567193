"""The benchmark code runs (tiny sizes); its figures are printed by ``tripsim bench``."""

from tripsim.bench import bench_core, bench_reference, synthetic_route


def test_synthetic_route_has_stops_and_limits():
    r = synthetic_route(20.0)
    assert (r.stop_kind == 3).sum() == 4
    assert set(r.speed_limit_kph) <= {50.0, 80.0, 100.0, 120.0}


def test_bench_functions_report_figures():
    core = bench_core(km=5.0, segment_m=10.0, repeat=1)
    assert core["segments"] >= 500 and core["ratio_to_floor"] > 0
    ref = bench_reference(km=1.0, repeat=1)
    assert abs(ref["wheel_energy_diff_pct"]) < 0.5


def test_fleet_bench_runs_small():
    from tripsim.bench import bench_fleet

    f = bench_fleet(km=20.0, days=10, compare_days=2, repeat=1)
    assert f["drive_energy_max_diff_pct"] < 1.0
    assert f["sun_grid_error_deg"] < 0.1


def test_planner_benches_run_small():
    from tripsim.bench import bench_planner, bench_planner_milp

    p = bench_planner(km=300.0, n_sites=30, step=0.02, repeat=1)
    assert p["feasible"] and p["sites"] > 0
    m = bench_planner_milp(km=400.0, n_sites=12, step=0.05)
    assert m["same_optimum"]


def test_startup_bench_times_fresh_processes():
    from tripsim.bench import bench_startup

    s = bench_startup(repeat=1)
    assert s["import_s"] > 0 and s["cli_simulate"]["median_s"] > s["warm_compute_s"] > 0
    assert s["cli_simulate"]["peak_mb"] > 10


def test_gpx_bench_runs_small():
    from tripsim.bench import bench_gpx

    g = bench_gpx(points=2000)
    assert g["points"] == 2000 and g["peak_python_mb"] >= g["floor_mb"] > 0
