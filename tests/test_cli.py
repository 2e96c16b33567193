import json

import pandas as pd
import pytest
from conftest import DEMO

from tripsim.cli import main

CROSSOVER = str(DEMO / "vehicles" / "harbour_crossover.toml")
GPX = str(DEMO / "harbour_loop.gpx")
JSON_KEYS = {"distance_km", "duration_h", "battery_wh", "regen_wh", "aux_wh", "wh_per_km",
             "wh_per_mi", "start_soc", "final_soc", "min_soc", "breakdown_wh"}


def test_simulate_json_and_outputs(tmp_path, capsys):
    trace, plot = tmp_path / "t.csv", tmp_path / "p.png"
    code = main(["simulate", GPX, "--vehicle", CROSSOVER, "--speed-kph", "50", "--json",
                 "--temp-c", "5", "--wind-speed-mps", "3", "--wind-from-deg", "200",
                 "--depart", "2026-04-02T10:00-02:00", "--trace", str(trace), "--plot", str(plot)])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) >= JSON_KEYS
    assert isinstance(out["breakdown_wh"], dict)
    assert pd.read_csv(trace)["soc"].between(0, 1).all()
    assert plot.stat().st_size > 10_000


def test_human_table(capsys):
    assert main(["simulate", GPX, "--vehicle", CROSSOVER, "--speed-kph", "50"]) == 0
    out = capsys.readouterr().out
    assert "Wh/km" in out and "state of charge" in out and "caution:" in out


def test_osm_waypoints_and_dem(tmp_path, capsys):
    code = main(["simulate", str(DEMO / "tamsreach.osm"), "--vehicle", CROSSOVER, "--waypoints",
                 "41.2,-31.6;41.2899,-30.8834", "--dem", str(DEMO / "tamsreach_dem.tif"), "--json",
                 "--trace", str(tmp_path / "t.geojson")])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert out["elevation_source"] == "dem" and out["ascent_m"] > 50
    doc = json.loads((tmp_path / "t.geojson").read_text())
    assert doc["features"][0]["geometry"]["type"] == "LineString"


def _run(args):
    try:
        return main(args)
    except SystemExit as exc:  # argparse errors
        return exc.code


@pytest.mark.parametrize(("args", "match"), [
    (["simulate", "nope.gpx", "--vehicle", CROSSOVER], "nope.gpx: no such file"),
    (["simulate", GPX, "--vehicle", "nope.toml"], "nope.toml: no such file"),
    (["simulate", GPX, "--vehicle", CROSSOVER], "--speed-kph"),
    (["simulate", GPX, "--vehicle", CROSSOVER, "--speed-kph", "50", "--depart", "2026-13-45"],
     "not an ISO 8601 time"),
    (["simulate", GPX, "--vehicle", CROSSOVER, "--speed-kph", "50", "--start-soc", "2"],
     "--start-soc: 2 is out of range"),
    (["simulate", str(DEMO / "tamsreach.osm"), "--vehicle", CROSSOVER, "--waypoints", "41.2"],
     "waypoint 1"),
    (["simulate", GPX, "--vehicle", CROSSOVER, "--trace", "x.txt"], "expected a file ending"),
    (["simulate"], "required"),
])
def test_bad_input_exits_2_with_one_line(capsys, args, match):
    code = _run(args)
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    assert err[-1].startswith("tripsim: error:") and match in err[-1]
    assert "Traceback" not in "\n".join(err)


def test_failure_leaves_no_partial_output(tmp_path, capsys):
    small_dem = tmp_path / "dem.tif"
    import numpy as np
    import rasterio
    from rasterio.transform import from_origin

    with rasterio.open(small_dem, "w", driver="GTiff", height=4, width=4, count=1,
                       dtype="float32", crs="EPSG:4326",
                       transform=from_origin(-31.7, 41.3, 0.01, 0.01)) as dst:
        dst.write(np.zeros((4, 4), dtype="float32"), 1)
    trace = tmp_path / "t.csv"
    code = main(["simulate", GPX, "--vehicle", CROSSOVER, "--speed-kph", "50", "--dem",
                 str(small_dem), "--trace", str(trace)])
    assert code == 2
    assert "does not cover" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == [small_dem]


def test_road_speeds_override(capsys):
    args = ["simulate", str(DEMO / "tamsreach.osm"), "--vehicle", CROSSOVER, "--waypoints",
            "41.2,-31.6;41.1955,-31.5866", "--json", "--no-cache"]
    assert main(args) == 0
    base = json.loads(capsys.readouterr().out)
    assert main([*args, "--road-speeds", "residential=15"]) == 0
    slow = json.loads(capsys.readouterr().out)
    assert slow["duration_h"] > base["duration_h"]
    assert main([*args, "--road-speeds", "residential"]) == 2
    assert "--road-speeds" in capsys.readouterr().err


FLEET_KEYS = {"days", "days_closed", "share_closed", "days_stranded", "grid_kwh", "solar_kwh",
              "solar_km", "min_battery_kwh_for_target", "min_panel_m2_for_target"}


def test_simulate_with_weather_reports_solar(capsys):
    args = ["simulate", GPX, "--vehicle", str(DEMO / "vehicles" / "swift_tern.toml"),
            "--speed-kph", "50", "--depart", "2026-06-21T11:00-02:00", "--json"]
    assert main([*args, "--weather", str(DEMO / "tamsreach.epw")]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["solar_wh"] > 0 and out["solar_km"] > 0
    assert main([*args, "--weather", "clear-sky", "--cloud", "0.2"]) == 0
    assert json.loads(capsys.readouterr().out)["solar_wh"] > 0
    assert main([*args[:-1], "--weather", "clear-sky"]) == 0
    assert "solar gain" in capsys.readouterr().out


def test_fleet_json_and_outputs(tmp_path, capsys):
    out = tmp_path / "fleet"
    code = main(["fleet", GPX, "--vehicle", str(DEMO / "vehicles" / "parcel_mule.toml"),
                 "--weather", str(DEMO / "tamsreach.epw"), "--speed-kph", "50",
                 "--schedule", "Mon-Fri@08:00", "--policy", "plug-below:0.3", "--json",
                 "--out", str(out), "--days", "60"])
    assert code == 0
    totals = json.loads(capsys.readouterr().out)
    assert set(totals) >= FLEET_KEYS
    assert {p.name for p in out.iterdir()} == {"daily.csv", "runs.csv", "totals.json",
                                               "soc_year.png", "monthly_solar.png"}


@pytest.mark.parametrize(("extra", "match"), [
    (["--schedule", "Mon@8"], "--schedule"),
    (["--policy", "grid"], "--policy"),
    (["--weather", "nope.epw"], "nope.epw: no such file"),
    (["--start-date", "someday"], "--start-date"),
])
def test_fleet_bad_input(capsys, extra, match):
    args = ["fleet", GPX, "--vehicle", CROSSOVER, "--weather", str(DEMO / "tamsreach.epw"),
            "--speed-kph", "50", "--days", "7"]
    assert _run([*args, *extra]) == 2
    assert match in capsys.readouterr().err


def test_fleet_refuses_an_open_route(capsys):
    args = ["fleet", str(DEMO / "old_coast_road.geojson"), "--vehicle", CROSSOVER, "--weather",
            str(DEMO / "tamsreach.epw"), "--days", "7"]
    assert _run(args) == 2
    assert "does not close" in capsys.readouterr().err


PLAN_KEYS = {"feasible", "charging_stops", "overnight_stops", "days", "drive_h", "charge_h",
             "total_h", "arrival_soc", "min_soc", "stops", "shortfall"}
PASS_ROUTE = ["plan", str(DEMO / "tamsreach.osm"), "--vehicle",
              str(DEMO / "vehicles" / "parcel_mule.toml"), "--chargers",
              str(DEMO / "tamsreach.osm"), "--waypoints",
              "41.2,-31.6;41.238669,-30.030016;41.2,-29.331582", "--dem",
              str(DEMO / "tamsreach_dem.tif"), "--depart", "2026-07-14T08:00-02:00",
              "--start-soc", "0.8"]


def test_plan_json_map_and_files(tmp_path, capsys):
    page, stops, geo = tmp_path / "m.html", tmp_path / "s.csv", tmp_path / "p.geojson"
    assert main([*PASS_ROUTE, "--json", "--map", str(page), "--stops-csv", str(stops),
                 "--geojson", str(geo), "--speed-factors", "0.9,1.0"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) >= PLAN_KEYS
    assert out["feasible"] and out["charging_stops"] == len(out["stops"]) >= 1
    assert out["shortfall"] is None and len(out["speed_factors"]) == 2
    assert page.read_text().count("tripsim-stop-item") == len(out["stops"])
    assert len(pd.read_csv(stops)) == len(out["stops"])
    kinds = [f["properties"]["feature"] for f in json.loads(geo.read_text())["features"]]
    assert kinds.count("route") == 1 and kinds.count("stop") == len(out["stops"])


def test_plan_infeasible_reports_shortfall(tmp_path, capsys):
    sites = tmp_path / "few.csv"
    sites.write_text("lat,lon,name,connector,power_kw\n41.2005,-31.5995,Quay,type2_combo,150\n")
    args = [*PASS_ROUTE[:5], str(sites), *PASS_ROUTE[6:]]
    assert main([*args, "--json"]) == 3  # no plan: its own exit status
    out = json.loads(capsys.readouterr().out)
    assert out["feasible"] is False and out["shortfall"]["shortfall_wh"] > 0
    assert main(args) == 3
    assert "would close it" in capsys.readouterr().out


@pytest.mark.parametrize(("extra", "match"), [
    (["--reserve", "0.9"], "below the maximum charge"),
    (["--daily-window", "08:00-19:00"], "--lodging"),
    (["--daily-window", "8-19", "--lodging", str(DEMO / "lodgings.csv")], "HH:MM-HH:MM"),
    (["--objective", "cheap"], "invalid choice"),
    (["--map", "x.png"], "expected a file ending in .html"),
])
def test_plan_bad_input(capsys, extra, match):
    assert _run([*PASS_ROUTE, *extra]) == 2
    assert match in capsys.readouterr().err


@pytest.mark.parametrize("command", ["simulate", "plan", "fleet", "run", "coastdown", "claim",
                                     "sweep", "demo", "bench", "serve"])
def test_help_shows_every_default(command, capsys):
    """Issue: `--help` shows every default (an option with one says it in its help)."""
    import argparse

    from tripsim.cli import build_parser

    parser = build_parser(command)
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    p = sub.choices[command]
    defaults = _scenario_defaults()  # flags whose default the scenario holds
    checked = 0
    for action in p._actions:
        if not action.option_strings or action.option_strings == ["-h", "--help"]:
            continue
        flag = action.option_strings[-1]
        default = (action.default if action.default not in (None, argparse.SUPPRESS)
                   else defaults.get(flag))
        if default in (None, False, True, "") or default == []:  # switches; none to show
            continue
        own = " ".join(p._get_formatter()._format_action(action).split())
        assert "default" in own, (command, own)
        checked += 1
    assert checked >= (0 if command in ("run", "demo", "sweep") else 2), command


def _scenario_defaults() -> dict[str, object]:
    """Flag → the default of the scenario field it sets (None where it has none)."""
    from pydantic_core import PydanticUndefined

    from tripsim.options import Options
    from tripsim.scenario import Scenario

    out: dict[str, object] = {}

    def walk(model: type) -> None:
        for info in model.model_fields.values():
            extra = info.json_schema_extra if isinstance(info.json_schema_extra, dict) else {}
            flag = extra.get("cli")
            if flag and flag.startswith("--"):
                value = None if info.default is PydanticUndefined else info.default
                out.setdefault(flag, value)
            for candidate in getattr(info.annotation, "__args__", (info.annotation,)):
                if isinstance(candidate, type) and issubclass(candidate, Options):
                    walk(candidate)

    walk(Scenario)
    return out


def test_fleet_help_says_what_closed_on_solar_means(capsys):
    with pytest.raises(SystemExit):
        main(["fleet", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "Closed on solar: a day closes on solar alone when, with no charging at all" in text
    assert "(default: Mon-Fri@08:00)" in text and "(default: solar-only)" in text
