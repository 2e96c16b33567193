"""Logged drives: reading logs and traces, preparing them, comparing, the command line."""

import json

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, make_vehicle, straight_route

from tripsim.claims.logs import drive_log, log_from_trace, prepare_log
from tripsim.cli import main
from tripsim.errors import TripsimInputError
from tripsim.io.drive_log import read_drive_log
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate

CROSSOVER = str(DEMO / "vehicles" / "harbour_crossover.toml")
LOG = str(DEMO / "drive_log.csv")
CYCLE = str(DEMO / "lab_cycle.csv")


def write(tmp_path, text, name="log.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_read_csv_with_clock_and_percent_soc(tmp_path):
    path = write(tmp_path, "# a comment\nT,lat,lon,speed_kph,soc,extra\n"
                 "2026-05-04T08:00:00+02:00,45.0,7.0,0,80.5,x\n"
                 "2026-05-04T08:00:02+02:00,45.0001,7.0,18,80.4,y\n"
                 "2026-05-04T08:00:03+02:00,45.0002,7.0,36,,z\n")
    log = read_drive_log(path)
    assert log["t_s"].tolist() == [0.0, 2.0, 3.0]
    assert log.attrs["kind"] == "positions"
    assert log.attrs["start"] == pd.Timestamp("2026-05-04T08:00:00+02:00")
    assert log["soc"].iloc[0] == pytest.approx(0.805) and np.isnan(log["soc"].iloc[2])
    assert log["speed_mps"].iloc[2] == pytest.approx(10.0)
    assert any("percent" in n for n in log.attrs["notes"])
    assert any("extra" in n for n in log.attrs["notes"])


def test_read_trace_in_seconds(tmp_path):
    log = read_drive_log(write(tmp_path, "t_s,speed_kph,grade_pct\n0,0,1\n1,3.6,1\n2,7.2,\n"))
    assert log.attrs["kind"] == "trace" and log.attrs["start"] is None
    assert log["grade"].iloc[0] == pytest.approx(0.01)


@pytest.mark.parametrize(("text", "match"), [
    ("t,lat,speed_kph\n0,45,1\n1,45,1\n2,45,1\n", "lat without lon"),
    ("t_s,elevation_m\n0,1\n1,1\n2,1\n", "needs speed_kph"),
    ("t,speed_kph\n0,1\n2,1\n1,1\n", "line 4, column t: time does not increase"),
    ("t,speed_kph\n0,1\n1,-5\n2,1\n", "line 3, column speed_kph: -5 is out of range"),
    ("t,speed_kph\n0,1\n1,1\n", "2 data rows"),
    ("t,speed_kph\n2026-05-04T08:00:00Z,1\n2026-05-04T08:00:01,1\n2026-05-04T08:00:02Z,1\n",
     "mixes times with and without a UTC offset"),
    ("t,speed_kph\nmonday,1\ntuesday,1\nfriday,1\n", "not an ISO 8601 time"),
    ("t,lat,lon,speed_kph,grade_pct\n0,45,7,1,1\n1,45,7,1,1\n2,45,7,1,1\n",
     "grade_pct applies to speed–time traces"),
])
def test_bad_logs_name_file_line_and_column(tmp_path, text, match):
    with pytest.raises(TripsimInputError, match=match) as err:
        read_drive_log(write(tmp_path, text))
    assert str(err.value).startswith(str(tmp_path / "log.csv"))


def test_read_timed_gpx(tmp_path):
    pts = "".join(f'<trkpt lat="45.0" lon="{7.0 + 0.0002 * k}"><ele>{100 + k}</ele>'
                  f"<time>2026-05-04T06:00:{k:02d}Z</time></trkpt>" for k in range(6))
    path = write(tmp_path, '<?xml version="1.0"?><gpx version="1.1" creator="t" '
                 'xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg>'
                 f"{pts}</trkseg></trk></gpx>", "log.gpx")
    log = read_drive_log(path)
    assert len(log) == 6 and log["elevation_m"].iloc[-1] == 105.0
    prepared = prepare_log(log)
    assert prepared.segments["length_m"].sum() == pytest.approx(
        5 * 0.0002 * 111_320 * np.cos(np.radians(45.0)), rel=0.02)


def test_trace_steps_are_segments_and_waits_go_forward():
    t = np.arange(0.0, 13.0)
    v = np.array([0, 0, 0, 2, 4, 4, 2, 0, 0, 0, 2, 2, 0], dtype=float)
    samples = pd.DataFrame({"t_s": t, "speed_mps": v})
    samples.attrs = {"kind": "trace", "start": None, "source": "trace"}
    log = prepare_log(samples)
    seg = log.segments
    assert seg["slope_length_m"].sum() == pytest.approx(np.trapezoid(v, t))
    assert log.recorded.time_s.sum() == pytest.approx(12.0)
    assert log.recorded.time_s[0] == pytest.approx(3.0)  # two idle seconds, then moving
    assert log.recorded.time_s[5] == pytest.approx(3.0)  # two seconds at the light, then one
    assert np.allclose(log.recorded.v_nodes_mps, [0, 2, 4, 4, 2, 0, 2, 2, 0])
    assert seg.attrs["positions"] is False


def test_stationary_wander_adds_no_distance():
    """A receiver at rest wanders by metres; the log's path does not."""
    rng = np.random.default_rng(2)
    t = np.arange(0.0, 200.0)
    speed = np.clip((t - 100.0) * 2.0, 0.0, 10.0)  # waits, then accelerates to 10 m/s
    east = np.r_[0.0, np.cumsum(0.5 * (speed[1:] + speed[:-1]))]  # metres east
    lat = 45.0 + rng.normal(0.0, 3.0, t.size) / 111_195.0
    lon = 7.0 + (east + rng.normal(0.0, 3.0, t.size)) / (111_195.0 * np.cos(np.radians(45)))
    samples = pd.DataFrame({"t_s": t, "lat_deg": lat, "lon_deg": lon, "speed_mps": speed})
    samples.attrs = {"kind": "positions", "start": None, "source": "wander"}
    log = prepare_log(samples)
    assert log.segments["slope_length_m"].sum() == pytest.approx(np.trapezoid(speed, t),
                                                                  rel=2e-3)
    assert log.node_t_s[1] - log.node_t_s[0] > 99.0  # the wait belongs to the first segment
    assert log.segments["heading_deg"].between(70.0, 110.0).mean() > 0.95


def test_a_simulated_trip_logged_and_driven_again_uses_the_same_energy():
    segments = segment_route(straight_route(8000.0, n_points=9, speed_kph=70.0, stops=[3, 6]))
    vehicle = make_vehicle()
    trip = simulate(segments, vehicle, conditions=Conditions(temp_c=12.0), start_soc=0.8,
                    depart="2026-05-04T08:00:00+02:00")
    log = prepare_log(log_from_trace(trip.trace, start_soc=0.8))
    again = drive_log(log, vehicle, conditions=Conditions(temp_c=12.0))
    assert again.trip.summary.battery_wh == pytest.approx(trip.summary.battery_wh, rel=0.005)
    assert again.trip.summary.duration_h == pytest.approx(trip.summary.duration_h, abs=1e-3)
    assert again.comparison.end["diff_pct"] == pytest.approx(0.0, abs=0.5)
    assert log.depart == pd.Timestamp("2026-05-04T08:00:00+02:00")


def test_log_without_battery_readings_is_driven_only(tmp_path):
    samples = read_drive_log(CYCLE)
    log = prepare_log(samples)
    result = drive_log(log, make_vehicle())
    assert result.comparison is None and result.fit is None
    assert result.trip.summary.range_km > 0
    with pytest.raises(TripsimInputError, match="--weather: a speed–time trace has no place"):
        from tripsim.weather import constant_weather

        drive_log(log, make_vehicle(), weather=constant_weather())


def test_cli_simulate_from_log(tmp_path, capsys):
    plot = tmp_path / "log.png"
    code = main(["simulate", LOG, "--from-log", "--vehicle", CROSSOVER, "--weather",
                 str(DEMO / "tamsreach.epw"), "--json", "--plot", str(plot)])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    log = out["log"]
    assert log["basis"] == "soc" and len(log["comparison"]["checkpoints"]) >= 5
    fit = log["fit"]
    assert fit["aux_base_w_ci"][0] < fit["aux_base_w"] < fit["aux_base_w_ci"][1]
    assert abs(fit["end_diff_pct_after"]) < abs(fit["end_diff_pct_before"])
    assert out["depart"].endswith("-02:00") and plot.stat().st_size > 20_000


def test_cli_lab_cycle_range(capsys):
    assert main(["simulate", CYCLE, "--from-log", "--vehicle", CROSSOVER, "--temp-c",
                 "23"]) == 0
    out = capsys.readouterr().out
    assert "speed–time trace" in out and "range at this consumption" in out


@pytest.mark.parametrize(("args", "match"), [
    (["--from-log", "--waypoints", "41.2,-31.6;41.3,-30.9"], "--from-log"),
    (["--from-log", "--depart", "2026-05-04T08:00+02:00"], "--depart: the log's own clock"),
])
def test_cli_from_log_bad_input(capsys, args, match):
    try:
        code = main(["simulate", LOG, "--vehicle", CROSSOVER, *args])
    except SystemExit as exc:
        code = exc.code
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and match in err[0]
