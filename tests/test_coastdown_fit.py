"""Coast-down runs: reading them, checking them, pairing them, the fit's outputs and the CLI.

The accuracy of the fit against independently synthesised runs is in
tests/reference/test_coastdown_fit_reference.py; here runs are made with tripsim's own
coast, which is enough to exercise rejections, pairing and outputs.
"""

import json
import tomllib

import numpy as np
import pandas as pd
import pytest
from conftest import BASE_VEHICLE, DEMO, make_vehicle

from tripsim.claims.coastdown import (
    CoastdownOptions,
    fit_road_load,
    predict_coast,
    reference_air_density,
)
from tripsim.cli import main
from tripsim.coastdown import coast
from tripsim.errors import TripsimInputError
from tripsim.io.coastdown_file import read_coastdown_runs
from tripsim.io.vehicle_file import parse_vehicle
from tripsim.report.coastdown_plots import coastdown_figure
from tripsim.report.coastdown_text import body_snippet, format_road_load

CROSSOVER = str(DEMO / "vehicles" / "harbour_crossover.toml")
RUNS = str(DEMO / "coastdown_runs.csv")
TRUTH = make_vehicle(body={"cd": 0.30, "frontal_area_m2": 2.4, "crr": 0.009})
HEADER = "run,t_s,speed_kph,direction,temp_c,pressure_hpa,wind_mps"


def one_run(name, way, *, headwind=0.0, v0_kph=118.0, v1_kph=12.0, sample_s=0.5,
            noise_kph=0.1, seed=0, wind_mps=1.0):
    rng = np.random.default_rng(seed)
    run = coast(TRUTH, v0_kph / 3.6, temp_c=20.0, pressure_pa=98_210.0,
                headwind_mps=headwind, v_end_mps=v1_kph / 3.6, sample_s=sample_s)
    t = run["time_s"].to_numpy()[:-1]
    v = run["speed_mps"].to_numpy()[:-1] + rng.normal(0.0, noise_kph / 3.6, t.size)
    return pd.DataFrame({"run": name, "t_s": t, "speed_mps": v, "direction": way,
                         "temp_c": 20.0, "pressure_pa": 98_210.0, "wind_mps": wind_mps})


def runs_frame(*frames):
    runs = pd.concat(frames, ignore_index=True)
    runs.attrs["source"] = "runs.csv"
    return runs


def four_good_runs():
    return [one_run(str(i + 1), "N" if i % 2 == 0 else "S", headwind=1.0 if i % 2 == 0
                    else -1.0, seed=i) for i in range(4)]


def write_csv(path, frame, speed_col="speed_kph"):
    out = frame.rename(columns={"pressure_pa": "pressure_hpa"}).copy()
    out["pressure_hpa"] /= 100.0
    if speed_col == "speed_kph":
        out["speed_kph"] = out.pop("speed_mps") * 3.6
    out.to_csv(path, index=False)
    return path


# --------------------------------------------------------------------------------- reading
def test_csv_reader_converts_units_and_keeps_comments_out(tmp_path):
    path = tmp_path / "runs.csv"
    path.write_text("# a comment line\nRun,t_s,Speed_kph,heading_deg,pressure_hpa,grade_pct,"
                    "logger_rpm\n1,0,100,370,1000,0.5,2100\n1,0.5,99.5,10,1000,,2090\n",
                    encoding="utf-8")
    runs = read_coastdown_runs(path)
    assert runs["speed_mps"].tolist() == pytest.approx([100 / 3.6, 99.5 / 3.6])
    assert runs["heading_deg"].tolist() == pytest.approx([10.0, 10.0])
    assert runs["pressure_pa"].iloc[0] == pytest.approx(100_000.0)
    assert runs["grade"].iloc[0] == pytest.approx(0.005) and np.isnan(runs["grade"].iloc[1])
    assert runs.attrs["source"] == str(path)
    assert runs.attrs["notes"] == ["columns ignored: logger_rpm"]


@pytest.mark.parametrize(("text", "match"), [
    ("run,t_s\n1,0\n", "lacks column(s) speed_kph (or speed_mps)"),
    ("run,t_s,speed_kph,speed_mps\n1,0,1,1\n", "both speed_kph and speed_mps"),
    ("t_s,speed_kph\n0,1\n", "lacks column(s) run"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n1,1,abc,N,20,1000,1\n",
     "line 3, column speed_kph: 'abc' is not a number"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n1,1,99,N,20,9000,1\n",
     "line 3, column pressure_hpa: 9000 is out of range (expected 500 to 1100)"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n1,0,99,N,20,1000,1\n",
     "line 3, column t_s: 0 does not increase within run 1"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n2,0,99,S,20,1000,1\n1,1,99,N,20,1000,1\n",
     "line 4, column run: run 1 resumes after other runs"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n1,1,99,S,20,1000,1\n",
     "line 3, column direction: 'S' changes within run 1"),
    (f"{HEADER}\n1,0,100,N,20,1000,1\n1,1,99,N,20\n", "line 3: 5 fields, expected 7"),
    (f"{HEADER}\n# only a comment\n", "no data rows"),
    (f"{HEADER}\n1,,100,N,20,1000,1\n", "line 2, column t_s: empty"),
])
def test_csv_reader_errors_name_file_line_and_column(tmp_path, text, match):
    path = tmp_path / "bad.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(TripsimInputError, match="bad.csv") as err:
        read_coastdown_runs(path)
    assert match in str(err.value)
    assert "\n" not in str(err.value)


def test_reader_refuses_unknown_formats_and_missing_files(tmp_path):
    (tmp_path / "runs.txt").write_text("x", encoding="utf-8")
    with pytest.raises(TripsimInputError, match="expected .csv or .gpx"):
        read_coastdown_runs(tmp_path / "runs.txt")
    with pytest.raises(TripsimInputError, match="no such file"):
        read_coastdown_runs(tmp_path / "none.csv")


def _gpx_text(segments):
    body = "".join("<trkseg>" + "".join(
        f'<trkpt lat="{lat:.8f}" lon="{lon:.8f}">' + (f"<time>{t}</time>" if t else "")
        + "</trkpt>" for lat, lon, t in seg) + "</trkseg>" for seg in segments)
    return ('<?xml version="1.0"?><gpx version="1.1" creator="t" '
            f'xmlns="http://www.topografix.com/GPX/1/1"><trk><name>flats</name>{body}'
            "</trk></gpx>")


def test_gpx_runs_one_a_segment_with_speed_and_heading(tmp_path):
    from pyproj import Geod

    geod = Geod(ellps="WGS84")
    t = np.arange(0.0, 60.0)
    s = 30.0 * t - 0.1 * t**2  # 30 m/s falling by 0.2 m/s² each second
    segments = []
    for azimuth in (80.0, 260.0):
        lon, lat, _ = geod.fwd(np.full(t.size, -31.0), np.full(t.size, 41.3),
                               np.full(t.size, azimuth), s)
        stamps = [(pd.Timestamp("2026-05-04T07:00Z") + pd.Timedelta(seconds=x)).isoformat()
                  for x in t]
        segments.append(list(zip(lat, lon, stamps, strict=True)))
    path = tmp_path / "runs.gpx"
    path.write_text(_gpx_text(segments), encoding="utf-8")
    runs = read_coastdown_runs(path)
    assert runs["run"].unique().tolist() == ["flats/1", "flats/2"]
    first = runs[runs["run"] == "flats/1"]
    t_mid = first["t_s"].to_numpy()
    assert first["speed_mps"].to_numpy() == pytest.approx(30.0 - 0.2 * t_mid, abs=1e-3)
    assert first["heading_deg"].to_numpy() == pytest.approx(80.0, abs=0.05)  # a geodesic turns
    assert runs.loc[runs["run"] == "flats/2", "heading_deg"].mean() == pytest.approx(260.0,
                                                                                      abs=0.05)


def test_gpx_tracks_with_the_same_name_stay_apart(tmp_path):
    seg = [(41.3, -31.0 + 0.0003 * i, f"2026-05-04T07:00:{i:02d}Z") for i in range(8)]
    one = _gpx_text([seg]).split("<trk>")[1].split("</trk>")[0]
    text = _gpx_text([seg]).replace("</trk>", f"</trk><trk>{one}</trk>", 1)
    path = tmp_path / "two.gpx"
    path.write_text(text, encoding="utf-8")
    assert read_coastdown_runs(path)["run"].unique().tolist() == ["flats (1)", "flats (2)"]


@pytest.mark.parametrize(("points", "match"), [
    ([(41.3, -31.0, "2026-05-04T07:00:00Z")] * 3, "3 points; a run needs 5"),
    ([(41.3, -31.0 + 0.001 * i, None) for i in range(6)], "point 1: no <time>"),
    ([(41.3, -31.0 + 0.001 * i, "2026-05-04T07:00:00Z") for i in range(6)],
     "point 2: time does not increase"),
])
def test_gpx_errors(tmp_path, points, match):
    path = tmp_path / "bad.gpx"
    path.write_text(_gpx_text([points]), encoding="utf-8")
    with pytest.raises(TripsimInputError, match="bad.gpx") as err:
        read_coastdown_runs(path)
    assert match in str(err.value)


# --------------------------------------------------------------------------------- fitting
def test_bad_runs_are_rejected_and_named_with_their_reason():
    blip = one_run("5", "N", seed=5)
    late = blip["t_s"] > 30.0
    blip.loc[late, "speed_mps"] += np.clip((blip.loc[late, "t_s"] - 30.0) / 2.0, 0, 1) * 2.5
    rising = one_run("rising", "N", v0_kph=110.0)
    rising["speed_mps"] = rising["speed_mps"].to_numpy()[::-1]
    runs = runs_frame(*four_good_runs(), one_run("short", "N", v0_kph=110.0, v1_kph=95.0),
                      blip, one_run("windy", "S", wind_mps=6.0), rising,
                      one_run("6", "S", seed=6), one_run("7", "S", seed=7))
    fit = fit_road_load(runs, make_vehicle())
    reasons = {r["run"]: r["reason"] for r in fit.runs_rejected}
    assert fit.runs_used == ["1", "2", "3", "4"] and len(fit.pairs) == 2
    assert reasons["short"].startswith("too short: speed falls only")
    assert reasons["5"].startswith("speed not falling: it rises")
    assert reasons["windy"].startswith("wind above the limit: mean 6.0 m/s")
    assert reasons["rising"].startswith("speed not falling (")
    assert reasons["6"] == "unpaired: the next valid run went the same way"
    assert reasons["7"] == "unpaired: no valid run in the other direction follows it"


def test_pairs_are_consecutive_runs_in_opposite_directions():
    ways = ["N", "N", "S", "N", "S", "S"]
    runs = runs_frame(*(one_run(str(i), w, seed=i) for i, w in enumerate(ways)))
    fit = fit_road_load(runs, make_vehicle())
    assert fit.pairs["runs"].tolist() == [["1", "2"], ["3", "4"]]
    assert {r["run"]: r["reason"] for r in fit.runs_rejected} == {
        "0": "unpaired: the next valid run went the same way",
        "5": "unpaired: no valid run in the other direction follows it"}


def test_fewer_than_two_pairs_is_an_error_naming_the_rejected_runs():
    runs = runs_frame(one_run("a", "N"), one_run("b", "S"), one_run("c", "N", wind_mps=7.0),
                      one_run("d", "S"))
    with pytest.raises(TripsimInputError) as err:
        fit_road_load(runs, make_vehicle())
    text = str(err.value)
    assert text.startswith("runs.csv: 1 valid pair(s)")
    assert "run c: wind above the limit" in text and "run d: unpaired" in text


def test_runs_pair_by_heading_when_there_is_no_direction_column():
    frames = []
    for i, frame in enumerate(four_good_runs()):
        frame = frame.drop(columns="direction")
        frame["heading_deg"] = 91.0 if i % 2 == 0 else 268.0
        frames.append(frame)
    frames.append(four_good_runs()[0].drop(columns="direction").assign(run="odd",
                                                                       heading_deg=180.0))
    fit = fit_road_load(runs_frame(*frames), make_vehicle())
    assert len(fit.pairs) == 2
    assert fit.runs_rejected[0]["run"] == "odd"
    assert "neither along nor against" in fit.runs_rejected[0]["reason"]
    with pytest.raises(TripsimInputError, match="give a direction or heading_deg column"):
        fit_road_load(runs_frame(*(f.drop(columns="direction") for f in four_good_runs())),
                      make_vehicle())


def test_more_than_two_direction_labels_is_an_error():
    frames = four_good_runs()
    frames[3] = frames[3].assign(direction="E")
    with pytest.raises(TripsimInputError, match="expected two labels .* found 3: E, N, S"):
        fit_road_load(runs_frame(*frames), make_vehicle())


def test_fit_recovers_the_runs_vehicle_and_reports_every_field():
    fit = fit_road_load(runs_frame(*four_good_runs()), make_vehicle())
    assert fit.cda_m2 == pytest.approx(TRUTH.body.drag_area_m2, rel=0.01)
    assert fit.crr == pytest.approx(TRUTH.body.crr, rel=0.01)
    assert fit.f2_n_per_mps2 == pytest.approx(0.5 * reference_air_density() * fit.cda_m2)
    for key in ("f0_n", "f1_n_per_mps", "f2_n_per_mps2", "cda_m2", "crr", "crr_per_mps"):
        lo, hi = fit.intervals[key]
        assert lo < getattr(fit, key) < hi
    out = fit.to_dict()
    assert {"f0_n", "f1_n_per_mps", "f2_n_per_mps2", "cda_m2", "cda_m2_ci", "crr", "crr_ci",
            "runs_used", "runs_rejected"} <= set(out)
    assert out["runs_used"] == ["1", "2", "3", "4"] and out["runs_rejected"] == []
    assert "Estimates only" in out["caution"]
    json.dumps(out)  # plain data


def test_more_noise_gives_wider_intervals_and_no_f1_holds_it_at_zero():
    quiet = fit_road_load(runs_frame(*four_good_runs()), make_vehicle())
    noisy = fit_road_load(runs_frame(*(one_run(str(i), "NS"[i % 2], noise_kph=0.6, seed=i)
                                       for i in range(4))), make_vehicle())
    width = {f: f.intervals["cda_m2"][1] - f.intervals["cda_m2"][0] for f in (quiet, noisy)}
    assert width[noisy] > 2 * width[quiet]
    two_term = fit_road_load(runs_frame(*four_good_runs()), make_vehicle(),
                             CoastdownOptions(fit_f1=False))
    assert two_term.f1_n_per_mps == 0.0 and two_term.intervals["crr_per_mps"] == (0.0, 0.0)
    assert two_term.cda_m2 == pytest.approx(TRUTH.body.drag_area_m2, rel=0.01)


def test_effective_and_test_mass_come_from_the_vehicle_unless_given():
    runs = runs_frame(*four_good_runs())
    v = make_vehicle(body={"rotating_mass_factor": 1.06})
    fit = fit_road_load(runs, v)
    assert fit.test_mass_kg == v.mass_kg
    # the rotating parts belong to the empty vehicle; payload adds mass only
    assert fit.effective_mass_kg == pytest.approx(1.06 * v.body.mass_kg + v.body.payload_kg)
    assert fit.effective_mass_kg == pytest.approx(v.inertial_mass_kg)
    tested = fit_road_load(runs, v, CoastdownOptions(test_mass_kg=v.mass_kg + 100.0))
    assert tested.effective_mass_kg == pytest.approx(v.inertial_mass_kg + 100.0)
    heavier = fit_road_load(runs, v, CoastdownOptions(effective_mass_kg=1.1 * v.mass_kg))
    assert heavier.effective_mass_kg == pytest.approx(1.1 * v.mass_kg)
    # the same decelerations with more inertia: proportionally larger forces
    assert heavier.f2_n_per_mps2 == pytest.approx(
        fit.f2_n_per_mps2 * 1.1 * v.mass_kg / v.inertial_mass_kg, rel=0.01)
    factor = tomllib.loads(body_snippet(heavier, v))["body"]["rotating_mass_factor"]
    assert factor == pytest.approx(1.0 + (1.1 * v.mass_kg - v.mass_kg) / v.body.mass_kg,
                                   abs=1e-4)


def test_bad_options_name_the_option():
    with pytest.raises(TripsimInputError, match="--min-kph"):
        CoastdownOptions(min_kph=120.0, max_kph=100.0)
    with pytest.raises(TripsimInputError, match="--confidence"):
        CoastdownOptions(confidence=1.5)


def test_missing_air_state_is_said_in_the_notes():
    frames = [f.drop(columns=["temp_c", "pressure_pa"]) for f in four_good_runs()]
    fit = fit_road_load(runs_frame(*frames), make_vehicle())
    assert any("no air temperature" in n for n in fit.notes)
    assert any("no air pressure" in n for n in fit.notes)


# ---------------------------------------------------------------------------------- outputs
def _vehicle_with_body(snippet: str, base: dict) -> object:
    body = tomllib.loads(snippet)["body"]
    return parse_vehicle({**base, "body": body})


@pytest.mark.parametrize("style", ["cd", "cda"])
def test_body_snippet_is_a_valid_body_table_with_the_fit(style):
    body = {"cd": 0.28, "frontal_area_m2": 2.3} if style == "cd" else {
        "cda_m2": 0.62, "cd": None, "frontal_area_m2": None}
    vehicle = make_vehicle(body=body)
    fit = fit_road_load(runs_frame(*four_good_runs()), vehicle)
    snippet = body_snippet(fit, vehicle)
    new = _vehicle_with_body(snippet, BASE_VEHICLE)
    assert new.body.drag_area_m2 == pytest.approx(fit.cda_m2, rel=1e-3)
    assert new.body.crr == pytest.approx(fit.crr, rel=1e-3)
    assert new.body.mass_kg == vehicle.body.mass_kg
    assert ("cd =" in snippet) == (style == "cd")
    assert snippet.startswith("# road load from coast-down runs")


def test_text_and_figure():
    vehicle = make_vehicle()
    fit = fit_road_load(runs_frame(*four_good_runs(), one_run("w", "N", wind_mps=9.0)),
                        vehicle)
    text = format_road_load(fit, vehicle)
    assert "Cd·A" in text and "run w: wind above the limit" in text and "caution:" in text
    fig = coastdown_figure(fit)
    assert len(fig.axes) == 2
    assert fig.axes[0].get_lines()  # runs and the reference curve


# -------------------------------------------------------------------------------------- CLI
def test_cli_fit_json_snippet_and_plot(tmp_path, capsys):
    snippet, plot = tmp_path / "body.toml", tmp_path / "fit.png"
    code = main(["coastdown", RUNS, "--vehicle", CROSSOVER, "--json", "--snippet", str(snippet),
                 "--plot", str(plot)])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert {"f0_n", "f1_n_per_mps", "f2_n_per_mps2", "cda_m2", "cda_m2_ci", "crr", "crr_ci",
            "runs_used", "runs_rejected", "body_snippet"} <= set(out)
    assert {r["run"] for r in out["runs_rejected"]} == {"5", "6", "9", "10", "11"}
    assert snippet.read_text(encoding="utf-8") == out["body_snippet"]
    assert plot.stat().st_size > 20_000


def test_cli_prediction_table(capsys):
    assert main(["coastdown", "--vehicle", CROSSOVER, "--from-kph", "100"]) == 0
    out = capsys.readouterr().out
    assert "coast of Harbour Crossover from 100 to 15 km/h" in out and "caution:" in out
    pred = predict_coast(parse_vehicle({**BASE_VEHICLE}), 100.0, 15.0)
    assert [m["speed_kph"] for m in pred["milestones"]] == [90, 80, 70, 60, 50, 40, 30, 20, 15]
    assert pred["milestones"][-1]["time_s"] == pytest.approx(pred["time_s"])


def _run(args):
    try:
        return main(args)
    except SystemExit as exc:
        return exc.code


@pytest.mark.parametrize(("args", "match"), [
    (["coastdown", "--vehicle", CROSSOVER], "give RUNS to fit the road load, or --from-kph"),
    (["coastdown", RUNS, "--vehicle", CROSSOVER, "--from-kph", "100"], "--from-kph: predicts"),
    (["coastdown", RUNS, "--vehicle", CROSSOVER, "--snippet", "x.txt"], "--snippet: x.txt"),
    (["coastdown", "nope.csv", "--vehicle", CROSSOVER], "nope.csv: no such file"),
    (["coastdown", RUNS, "--vehicle", CROSSOVER, "--min-drop-kph", "101"],
     "valid pair(s) of runs in opposite directions"),
    (["coastdown", "--vehicle", CROSSOVER, "--from-kph", "10", "--to-kph", "20"],
     "--from-kph: coast from 10 to 20 km/h"),
    (["coastdown", "--vehicle", CROSSOVER, "--from-kph", "100", "--grade-pct", "-3"],
     "--to-kph: the vehicle does not slow to 15 km/h"),
])
def test_cli_bad_input_exits_2_with_one_line(capsys, args, match):
    assert _run(args) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1].startswith("tripsim: error:") and match in err[-1]


def test_cli_writes_nothing_when_the_fit_fails(tmp_path, capsys):
    bad = tmp_path / "runs.csv"
    write_csv(bad, runs_frame(one_run("a", "N"), one_run("b", "S")))
    snippet, plot = tmp_path / "body.toml", tmp_path / "fit.png"
    assert main(["coastdown", str(bad), "--vehicle", CROSSOVER, "--snippet", str(snippet),
                 "--plot", str(plot)]) == 2
    assert "1 valid pair(s)" in capsys.readouterr().err
    assert not snippet.exists() and not plot.exists()
