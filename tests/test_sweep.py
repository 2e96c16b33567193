"""Sweeps on a small LocalCluster (2 worker processes): same numbers, resumable, failures kept.

The runs of a sweep must be the runs one would do by hand: the grid is checked against
``tripsim.simulate`` called run by run with vehicles built independently of the sweep's
vehicle parameters.
"""

import json
import os
import signal
import subprocess
import sys
import time
import tomllib

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO
from sweep_support import EPW, MULE, VEHICLE, cluster_client, simulate_spec, small_gpx

import tripsim
from tripsim.cli import main
from tripsim.drive import DriveOptions
from tripsim.io.sweep_results import done_runs, part_files, read_results
from tripsim.io.vehicle_file import parse_vehicle
from tripsim.simulate import simulate
from tripsim.sweep import execute_sweep, load_spec

DEPARTS = ["2026-01-12T08:00:00", "2026-04-20T12:30:00", "2026-07-06T17:00:00"]


@pytest.fixture(scope="module")
def client():
    return cluster_client()


@pytest.fixture(scope="module")
def route(tmp_path_factory):
    return small_gpx(tmp_path_factory.mktemp("route"))


def _compare(row: pd.Series, summary: dict) -> None:
    for key, value in summary.items():
        if key == "caution":
            continue
        if isinstance(value, dict):
            _compare(row, {f"{key}.{k}": v for k, v in value.items()})
        elif isinstance(value, float):
            assert row[key] == pytest.approx(value, rel=1e-9, abs=1e-9), key
        elif value is None:
            assert row[key] is None or pd.isna(row[key]), key
        else:
            assert row[key] == value, key


def test_grid_equals_simulate_run_by_run(client, route, tmp_path):
    spec = simulate_spec(route, {"vehicle.body.mass_kg": [450.0, 520.0], "depart": DEPARTS,
                                 "drive.speed_factor": [0.9, 1.1]},
                         scenario={"weather": {"source": EPW}})
    lazy = tripsim.sweep(spec, client=client, out=tmp_path / "out")
    rows = lazy.compute().sort_values("run").reset_index(drop=True)
    assert len(rows) == 2 * 3 * 2 and rows["ok"].all() and rows["run"].is_unique
    segments = tripsim.load_segments(route)
    segments.attrs["name"] = route.stem  # runs are named by their scenario's title
    weather = tripsim.read_weather(EPW)
    raw = tomllib.loads((DEMO / "vehicles" / "swift_tern.toml").read_text())
    for _, row in rows.iterrows():
        vehicle = parse_vehicle({**raw, "body": {**raw["body"],
                                                 "mass_kg": row["vehicle.body.mass_kg"]}})
        trip = simulate(segments, vehicle, depart=row["depart"], weather=weather,
                        drive=DriveOptions(speed_factor=row["drive.speed_factor"]),
                        default_speed_kph=50.0)
        summary = trip.summary.to_dict()
        summary["result.depart"] = summary.pop("depart")  # the axis keeps the name
        _compare(row, summary)
    totals = json.loads((tmp_path / "out" / "totals.json").read_text())
    assert totals["ok"] == 12 and totals["failed"] == 0 and totals["workers"] == 2
    assert totals["columns"]["wh_per_km"]["min"] < totals["columns"]["wh_per_km"]["max"]


def _slow_spec(route, **extra):
    """24 runs that share no departure: one task each, about 50 ms a task."""
    return simulate_spec(route, {"drive.speed_factor": [0.8, 0.9, 1.0, 1.1],
                                 "vehicle.body.payload_kg": [80.0, 150.0, 220.0],
                                 "vehicle.battery.usable_kwh": [10.0, 14.0]},
                         scenario={"weather": {"source": EPW}}, batch_runs=1, **extra)


@pytest.fixture(scope="module")
def slow_reference(route):
    """The slow sweep's rows, run in this process."""
    rows = tripsim.sweep(_slow_spec(route), workers=0)
    assert rows["ok"].all()
    return rows


def _same_rows(got: pd.DataFrame, want: pd.DataFrame) -> None:
    got = got.sort_values("run").reset_index(drop=True)[want.columns]
    pd.testing.assert_frame_equal(got, want.reset_index(drop=True), check_dtype=False)


def test_a_killed_worker_loses_nothing_and_reruns_nothing(client, route, slow_reference,
                                                          tmp_path):
    pids = list(client.run(os.getpid).values())
    killed = []

    def kill_once(stage: str, fraction: float) -> None:
        if not killed and "runs" in stage and fraction > 0:
            os.kill(pids[0], signal.SIGKILL)
            killed.append(stage)

    sweep = load_spec(_slow_spec(route))
    totals, _ = execute_sweep(sweep, client=client, out=tmp_path / "out", progress=kill_once)
    assert killed and totals["ran_now"] == 24 and totals["ok"] == 24, totals["failures"]
    rows = read_results(tmp_path / "out")
    assert rows["run"].tolist() == list(range(24))  # each run once
    _same_rows(rows, slow_reference)
    again, _ = execute_sweep(sweep, client=client, out=tmp_path / "out")
    assert again["ran_now"] == 0 and again["from_earlier_passes"] == 24
    client.wait_for_workers(2, timeout=60)


def test_an_interrupted_sweep_resumes_where_it_stopped(client, route, slow_reference,
                                                       tmp_path):
    seen = []

    def stop_after_three(stage: str, fraction: float) -> None:
        if "runs" in stage and fraction > 0:
            seen.append(stage)
            if len(seen) == 3:
                raise KeyboardInterrupt

    sweep = load_spec(_slow_spec(route))
    with pytest.raises(KeyboardInterrupt):
        execute_sweep(sweep, client=client, out=tmp_path / "out", progress=stop_after_three)
    before = done_runs(tmp_path / "out")
    assert len(before) == 3  # the three batches written; those in flight are lost
    totals, _ = execute_sweep(sweep, client=client, out=tmp_path / "out")
    assert totals["from_earlier_passes"] == 3 and totals["ran_now"] == 21
    rows = read_results(tmp_path / "out")
    assert rows["run"].tolist() == list(range(24))
    _same_rows(rows, slow_reference)


def test_a_killed_client_loses_only_runs_in_flight(client, route, slow_reference, tmp_path):
    spec = tmp_path / "slow.toml"
    spec.write_text(_toml(_slow_spec(route)))
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "tripsim.cli", "sweep", str(spec), "--out",
                             str(out), "--scheduler", client.scheduler.address, "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    while not (out / "runs").is_dir() or not part_files(out):
        assert proc.poll() is None and time.monotonic() < deadline
        time.sleep(0.02)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    left = done_runs(out)
    assert 0 < len(left) < 24
    totals, _ = execute_sweep(load_spec(spec), client=client, out=out)
    assert totals["ran_now"] == 24 - len(left)
    rows = read_results(out)
    assert rows["run"].tolist() == list(range(24))
    _same_rows(rows, slow_reference)


def _toml(spec: dict) -> str:
    def value(v):
        if isinstance(v, dict):
            return "{ " + ", ".join(f'"{k}" = {value(x)}' for k, x in v.items()) + " }"
        return json.dumps(v)

    lines = [f'{k} = {value(v)}' for k, v in spec.items() if not isinstance(v, dict)]
    for table in ("scenario", "axes"):
        lines.append(f"[{table}]")
        lines += [f'"{k}" = {value(v)}' for k, v in spec[table].items()]
    return "\n".join(lines) + "\n"


def test_a_bad_run_is_a_row_with_its_error(client, route, tmp_path):
    spec = simulate_spec(route, {"route.file": [str(tmp_path / "missing.gpx"), str(route)],
                                 "vehicle": [VEHICLE, MULE]},
                         scenario={"battery_model": "rint"}, batch_runs=1)
    rows = tripsim.sweep(spec, client=client)
    assert len(rows) == 4
    assert rows["ok"].tolist() == [False, False, True, False]
    assert "missing.gpx: no such file" in rows["error"][0]
    assert "needs [battery] internal_resistance_ohm" in rows["error"][3]
    assert rows["wh_per_km"][2] > 0 and np.isnan(rows["wh_per_km"][0])
    totals = rows.attrs["totals"]
    assert totals["failed"] == 3 and {f["runs"] for f in totals["failures"]} == {1, 2}
    # on disk: the first part holds a failure only, yet the folder reads as one table
    execute_sweep(load_spec(spec), client=client, out=tmp_path / "out")
    plain = pd.read_parquet(tmp_path / "out" / "runs").sort_values("run")
    assert list(plain.columns) == list(read_results(tmp_path / "out").columns)
    assert plain["wh_per_km"].notna().tolist() == [False, False, True, False]


def test_same_seed_same_rows_anywhere(client, route):
    spec = simulate_spec(route, {"conditions.temp_c": {"dist": "uniform", "low": -5, "high": 30},
                                 "drive.speed_factor": {"dist": "normal", "mean": 1.0, "sd": 0.05,
                                                        "low": 0.85, "high": 1.15},
                                 "vehicle.battery.usable_kwh": [10.0, 14.0]},
                         draws={"n": 5, "method": "monte-carlo"}, seed=11)
    here = tripsim.sweep(spec, workers=0)
    there = tripsim.sweep(spec, client=client)
    pd.testing.assert_frame_equal(here, there)
    assert here["conditions.temp_c"].nunique() == 5 and len(here) == 10
    other = tripsim.sweep({**spec, "seed": 12}, workers=0)
    assert not np.allclose(here["wh_per_km"], other["wh_per_km"])


def test_fleet_years_and_traces(client, tmp_path):
    spec = {"scenario": {"kind": "fleet", "vehicle": MULE, "speed_kph": 50.0,
                         "route": {"file": str(DEMO / "harbour_loop.gpx")},
                         "weather": {"source": EPW},
                         "fleet": {"schedule": "Mon-Fri@08:00", "days": 14,
                                   "size_search": False}},
            "axes": {"vehicle.battery.usable_kwh": [30.0, 60.0]}, "traces": True}
    rows = tripsim.sweep(spec, client=client, out=tmp_path / "out").compute()
    assert rows["ok"].all() and rows["battery_kwh"].tolist() == [30.0, 60.0]
    direct = tripsim.sweep({**spec, "axes": {}}, workers=0)
    assert direct["km"][0] == pytest.approx(rows["km"].iloc[0], rel=1e-12)
    daily = pd.read_parquet(tmp_path / "out" / rows["trace"].iloc[0])
    assert len(daily) == 14 and "soc_end" in daily


def test_cli_sweep_json(client, route, tmp_path, capsys):
    spec = tmp_path / "s.toml"
    spec.write_text(_toml(simulate_spec(route, {"conditions.temp_c": [0.0, 20.0]})))
    out = tmp_path / "out"
    args = ["sweep", str(spec), "--out", str(out), "--scheduler", client.scheduler.address]
    assert main([*args, "--json"]) == 0
    totals = json.loads(capsys.readouterr().out)
    assert totals["runs"] == totals["ok"] == 2 and totals["parts"] >= 1
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "0 runs in" in text and "2 done before" in text and "caution:" in text
    other = tmp_path / "other.toml"
    other.write_text(_toml(simulate_spec(route, {"conditions.temp_c": [5.0]})))
    assert main(["sweep", str(other), "--out", str(out)]) == 2
    assert "holds the results of another sweep" in capsys.readouterr().err
    assert main([*args, "--workers", "2"]) == 2
    assert "--workers: starts a local cluster" in capsys.readouterr().err


def test_sweep_bench_runs_small():
    from tripsim.bench import bench_sweep

    b = bench_sweep(runs=20, years=1, days=7, workers=(1,), plain=2, repeat={"simulate": 1})
    sim, fleet = b["simulate"], b["fleet"]
    assert sim["runs"] == 20 and sim["failed"] == 0 and sim["w1"]["same_rows"]
    assert fleet["runs"] == 1 and fleet["w1"]["same_rows"]
    assert sim["one_by_one_per_run_s"] > 0 and "task_overhead_ms" in sim
