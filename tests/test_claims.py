"""Range claims: the corridor, the samples, the drive to empty (one model), results, CLI."""

import json

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, make_vehicle, straight_route

from tripsim.claims import range_claim
from tripsim.claims.range_claim import (
    Claim,
    ClaimOptions,
    RangeSetup,
    breakdown_to_empty,
    check_claim,
    corridor_lap,
    drive_to_empty,
    sample_departures,
)
from tripsim.cli import main
from tripsim.drive import DriveOptions
from tripsim.errors import TripsimInputError
from tripsim.io.weather_files import read_weather
from tripsim.route import Route, StopKind
from tripsim.segments import segment_route
from tripsim.simulate import simulate
from tripsim.timebase import epoch_seconds
from tripsim.weather import constant_weather

CROSSOVER = str(DEMO / "vehicles" / "harbour_crossover.toml")
EPW = str(DEMO / "tamsreach.epw")
GPX = str(DEMO / "harbour_loop.gpx")
FLAT_CAPACITY = {"capacity_vs_temp": {"x": [-40.0, 60.0], "y": [1.0, 1.0]}}


@pytest.fixture(scope="module")
def weather():
    return read_weather(DEMO / "tamsreach.epw")


@pytest.fixture(scope="module")
def hill():
    """A 6 km road over a hill with two signals, near the demo's weather station."""
    route = straight_route(6000.0, lat0=41.2, lon0=-31.6, azimuth_deg=70.0, n_points=7,
                           speed_kph=80.0, stops=[2, 4])
    ele = 20.0 + 60.0 * np.sin(np.linspace(0.0, np.pi, route.n_points))
    return segment_route(Route(lat_deg=route.lat_deg, lon_deg=route.lon_deg, elevation_m=ele,
                               speed_limit_kph=route.speed_limit_kph,
                               stop_kind=route.stop_kind))


def test_out_and_back_lap(hill):
    lap, kind = corridor_lap(hill)
    n = len(hill)
    assert kind == "out-and-back" and len(lap) == 2 * n
    assert lap["length_m"].sum() == pytest.approx(2 * hill["length_m"].sum())
    back = lap.iloc[n:]
    assert np.allclose(back["grade"].to_numpy(), -hill["grade"].to_numpy()[::-1])
    assert np.allclose((back["heading_deg"].to_numpy() - hill["heading_deg"].to_numpy()[::-1])
                       % 360.0, 180.0)
    assert lap["stop_kind_end"].iloc[n - 1] == StopKind.END  # the turn
    assert lap["stop_kind_end"].iloc[-1] == StopKind.END
    # a signal passed going out is passed again coming back, at the same place
    out_signals = np.flatnonzero(hill["stop_kind_end"].to_numpy() == StopKind.SIGNALS)
    back_signals = np.flatnonzero(back["stop_kind_end"].to_numpy() == StopKind.SIGNALS)
    out_m = hill["start_m"].to_numpy()[out_signals] + hill["length_m"].to_numpy()[out_signals]
    total = hill["length_m"].sum()
    back_m = back["start_m"].to_numpy()[back_signals] - total + back["length_m"].to_numpy()[
        back_signals]
    assert np.allclose(np.sort(total - back_m), np.sort(out_m))
    assert np.allclose(lap["start_m"].to_numpy()[1:], np.cumsum(lap["length_m"])[:-1])


def test_loop_detection_and_speed_cap(hill):
    loop = pd.concat([hill, _reversed_segments(hill)], ignore_index=True)
    lap, kind = corridor_lap(loop)
    assert kind == "loop" and len(lap) == len(loop)
    assert lap["stop_kind_end"].iloc[-1] == StopKind.NONE  # lap after lap through the line
    with pytest.raises(TripsimInputError, match="--corridor: the route ends 6.00 km"):
        corridor_lap(hill, "loop")
    capped, _ = corridor_lap(hill, speed_cap_kph=50.0)
    assert capped["speed_limit_kph"].max() == 50.0


def _reversed_segments(seg):
    back = range_claim._reversed(seg[list(range_claim._COURSE_COLUMNS)])
    return back.assign(highway="", stop_end=False)


def test_departures_every_day_or_seeded_draws(hill):
    days = sample_departures(hill, ClaimOptions(depart_time="07:30"))
    assert len(days) == 365 and (days.hour == 7).all() and (days.minute == 30).all()
    assert days[0].strftime("%Y-%m-%d") == f"{range_claim.CALENDAR_YEAR}-01-01"
    draws = sample_departures(hill, ClaimOptions(draws=50, seed=9, hours="10:00-14:00"))
    again = sample_departures(hill, ClaimOptions(draws=50, seed=9, hours="10:00-14:00"))
    assert draws.equals(again) and draws.is_monotonic_increasing
    assert ((draws.hour >= 10) & (draws.hour < 14)).all() or (draws.hour == 14).sum() <= 1
    assert not draws.equals(sample_departures(hill, ClaimOptions(draws=50, seed=10)))


@pytest.mark.parametrize("reserve", [0.0, 0.2])
def test_drive_to_empty_is_a_simulation_of_the_strung_laps(hill, weather, reserve):
    """One model: the range is where simulate, driving the same laps, reaches the reserve."""
    vehicle = make_vehicle(battery={"usable_kwh": 4.0, **FLAT_CAPACITY},
                           panels=[{"area_m2": 2.0, "efficiency": 0.2}])
    lap, _ = corridor_lap(hill)
    depart = pd.Timestamp("2026-05-04T10:00", tz="Etc/GMT+2")
    setup = RangeSetup(vehicle=vehicle, drive=DriveOptions(), weather=weather,
                       start_soc=0.9, reserve_soc=reserve)
    runs = drive_to_empty(lap, setup, np.array([epoch_seconds(depart)]), max_km=200.0)
    strung = range_claim._laps(lap, float(runs.course_km[0])).assign(highway="",
                                                                       stop_end=False)
    strung.attrs = {"name": "strung", "source": "laps"}
    trip = simulate(strung, vehicle, weather=weather, depart=depart, start_soc=0.9)
    soc = trip.trace["soc"].to_numpy()
    end_km = (trip.trace["start_m"] + trip.trace["length_m"]).to_numpy() / 1000.0
    if reserve == 0.0:
        assert trip.summary.stranded
        assert runs.range_km[0] == pytest.approx(trip.summary.stranded_at_km, abs=1e-6)
    else:  # simulate's state of charge crosses the reserve in the segment where it ends
        i = int(np.argmax(soc < reserve))
        assert end_km[i - 1] <= runs.range_km[0] <= end_km[i] + 1e-9
    assert runs.solar_wh[0] > 0.0


@pytest.mark.parametrize(("warming", "factor"), [(0.0, 0.91), (25.0, 0.965)])
def test_capacity_at_the_pack_temperature(hill, warming, factor):
    """Default curve: 0.91 at -10 °C; a pack kept warm works at 5 °C (0.965), cold once."""
    vehicle = make_vehicle(battery={"usable_kwh": 3.0},
                           auxiliary={"battery_heat_w_per_k": warming})
    lap, _ = corridor_lap(hill)
    cold = RangeSetup(vehicle=vehicle, drive=DriveOptions(), weather=constant_weather(temp_c=-10),
                      capacity_factor=0.9)
    runs = drive_to_empty(lap, cold, np.array([1.78e9]), max_km=100.0)
    assert runs.pack_temp_c[0] == pytest.approx(-10.0)
    assert runs.available_wh[0] == pytest.approx(3000.0 * 0.9 * factor)


def test_batches_do_not_change_results(hill, weather, monkeypatch):
    vehicle = make_vehicle(battery={"usable_kwh": 3.0})
    lap, _ = corridor_lap(hill)
    setup = RangeSetup(vehicle=vehicle, drive=DriveOptions(), weather=weather)
    depart = np.asarray(epoch_seconds(sample_departures(hill, ClaimOptions(draws=12))))
    one = drive_to_empty(lap, setup, depart, max_km=100.0)
    monkeypatch.setattr(range_claim, "CHUNK_SEGMENTS", 3000)
    many = drive_to_empty(lap, setup, depart, max_km=100.0)
    assert np.allclose(one.range_km, many.range_km, rtol=0, atol=1e-6)  # 1 mm
    assert np.ptp(one.range_km) > 0.05  # each departure has its own weather


def test_samples_beyond_max_km_are_at_least(hill):
    vehicle = make_vehicle()
    lap, _ = corridor_lap(hill)
    setup = RangeSetup(vehicle=vehicle, drive=DriveOptions(), weather=constant_weather())
    runs = drive_to_empty(lap, setup, np.array([1.78e9]), max_km=30.0)
    assert runs.at_least[0] and runs.range_km[0] == 30.0


def test_breakdown_adds_up_to_the_energy_asked(hill, weather):
    vehicle = make_vehicle(battery={"usable_kwh": 4.0})
    lap, _ = corridor_lap(hill)
    setup = RangeSetup(vehicle=vehicle, drive=DriveOptions(), weather=weather, start_soc=0.8)
    runs = drive_to_empty(lap, setup, np.array([1.78e9]), max_km=100.0)
    b = breakdown_to_empty(lap, setup, 1.78e9, float(runs.course_km[0]),
                           float(runs.range_km[0]))
    terms = sum(v for k, v in b.items() if k != "asked_wh")
    assert terms == pytest.approx(b["asked_wh"], rel=1e-9)
    assert b["asked_wh"] == pytest.approx(runs.available_wh[0], rel=1e-6)  # never full
    assert b["grade_wh"] != 0.0 and b["aux_wh"] > 0.0


@pytest.fixture(scope="module")
def small_claim(hill, weather):
    vehicle = make_vehicle(battery={"usable_kwh": 6.0})
    claim = Claim(distance_km=30.0 * 1.609344, unit="mi", speed_kph=70.0, temp_c=10.0,
                  climate=True)
    opts = ClaimOptions(draws=24, sensitivity_samples=6)
    return check_claim(hill, vehicle, weather, claim, opts)


def test_claim_result_payload(small_claim):
    d = small_claim.to_dict()
    for key in ("claim_km", "samples", "range_km_p10", "range_km_p50", "range_km_p90",
                "share_meeting_claim", "wh_per_km_p50", "worst", "best",
                "breakdown_at_median_wh", "sensitivity", "verdict", "by_month", "stated"):
        assert key in d
    assert d["samples"] == 24 and d["claim"]["unit"] == "mi"
    assert d["range_mi_p50"] == pytest.approx(d["range_km_p50"] / 1.609344)
    assert d["range_km_p10"] <= d["range_km_p50"] <= d["range_km_p90"]
    assert d["worst"]["range_km"] <= d["range_km_p10"] and d["best"]["range_km"] >= d[
        "range_km_p90"]
    assert d["stated"]["temp_c"] == 10.0 and d["stated"]["climate"] is True
    assert d["used"]["speed_cap_kph"] == 70.0
    assert sum(m["samples"] for m in d["by_month"]) == 24
    rows = {r["option"]: r for r in d["sensitivity"]}
    assert set(rows) == {k for k, *_ in range_claim.SENSITIVITY}
    assert rows["speed_factor"]["range_km_low"] > rows["speed_factor"]["range_km_high"]
    assert rows["crr"]["range_km_low"] > rows["crr"]["range_km_high"]
    assert rows["capacity_factor"]["range_km_low"] < rows["capacity_factor"]["range_km_high"]
    assert rows["reserve_soc"]["range_km_low"] > rows["reserve_soc"]["range_km_high"]


def test_verdict_says_what_was_tested_never_true_or_false(small_claim):
    text = small_claim.verdict()
    n = int(small_claim.samples["meets_claim"].sum())
    assert f"on {n} of 24 departures" in text
    assert "Not tested" in text and "mi" in text
    words = set(text.lower().replace(".", " ").replace(",", " ").split())
    assert not words & {"true", "false", "valid", "invalid", "proven"}


def test_claim_options_refuse_nonsense():
    with pytest.raises(TripsimInputError, match="--reserve"):
        ClaimOptions(start_soc=0.5, reserve_soc=0.5)
    with pytest.raises(TripsimInputError, match="--hours"):
        ClaimOptions(hours="14:00-10:00")
    with pytest.raises(TripsimInputError, match="--claim-km"):
        Claim(distance_km=float("nan"))


def _run(args):
    try:
        return main(args)
    except SystemExit as exc:
        return exc.code


def test_cli_claim_json_and_files(tmp_path, capsys):
    plot, table = tmp_path / "claim.png", tmp_path / "samples.csv"
    code = main(["claim", GPX, "--vehicle", CROSSOVER, "--weather", EPW, "--claim-km", "380",
                 "--speed-kph", "60", "--draws", "6", "--sensitivity-samples", "2",
                 "--stated-climate", "off", "--json", "--plot", str(plot),
                 "--samples-csv", str(table), "--cycle", str(DEMO / "lab_cycle.csv")])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert out["claim_km"] == 380 and out["samples"] == 6
    assert out["lab_cycle"]["range_km"] > 0 and "Estimates only" in out["caution"]
    assert plot.stat().st_size > 20_000 and len(pd.read_csv(table)) == 6


def test_cli_claim_text(capsys):
    assert main(["claim", GPX, "--vehicle", CROSSOVER, "--weather", EPW, "--claim-mi", "240",
                 "--speed-kph", "60", "--draws", "4", "--sensitivity-samples", "0"]) == 0
    out = capsys.readouterr().out
    assert "range claim: 240 mi" in out and "verdict:" in out and "caution:" in out


@pytest.mark.parametrize(("args", "match"), [
    (["--claim-km", "300", "--reserve", "1.2"], "--reserve"),
    (["--claim-km", "300", "--start-soc", "0.3", "--reserve", "0.4"], "--reserve"),
    (["--claim-mi", "-3"], "--claim-mi"),
    (["--claim-km", "300", "--depart-time", "25:00"], "--depart-time"),
    (["--claim-km", "300", "--plot", "x.txt"], "--plot"),
    (["--claim-km", "300", "--claim-mi", "200"], "not allowed with"),
])
def test_cli_claim_bad_input(capsys, args, match):
    code = _run(["claim", GPX, "--vehicle", CROSSOVER, "--weather", EPW, "--speed-kph", "60",
                 *args])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and match in err[0]


def test_sensitivity_spans_never_turn_round(hill, weather):
    """A reserve just under the start charge leaves the start and reserve no room to move:
    their rows stay at the base value instead of listing a reversed span."""
    vehicle = make_vehicle(battery={"usable_kwh": 6.0})
    result = check_claim(hill, vehicle, weather, Claim(distance_km=5.0),
                         ClaimOptions(draws=4, sensitivity_samples=2, start_soc=0.06,
                                      reserve_soc=0.05))
    for row in result.sensitivity:
        assert row["low"] <= row["base"] <= row["high"], row
    rows = {r["option"]: r for r in result.sensitivity}
    assert rows["start_soc"]["low"] == rows["start_soc"]["high"] == 0.06
    assert rows["reserve_soc"]["range_km_low"] == rows["reserve_soc"]["range_km_base"]
