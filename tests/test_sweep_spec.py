"""Sweep specs: reading, checking, the grid and the seeded draws, runs' scenarios."""

import json

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO
from sweep_support import EPW, VEHICLE, simulate_spec

from tripsim.cli import main
from tripsim.errors import TripsimInputError
from tripsim.io.vehicle_file import read_vehicle
from tripsim.sweep import load_spec
from tripsim.sweep.expand import unit_draws
from tripsim.sweep.tasks import flatten, overlay_vehicle, scenario_data

GPX = DEMO / "harbour_loop.gpx"


def test_grid_is_every_combination_first_axis_slowest():
    sweep = load_spec(simulate_spec(GPX, {
        "drive.speed_factor": [0.9, 1.0],
        "conditions": {"temp_c": {"start": -10, "stop": 30, "step": 20}},
        "depart.date": {"start": "2026-01-05", "stop": "2026-01-19", "step_days": 7}}))
    plan = sweep.plan
    assert sweep.n_runs == len(plan) == 2 * 3 * 3
    assert list(plan.columns) == ["drive.speed_factor", "conditions.temp_c", "depart.date"]
    assert plan["conditions.temp_c"].tolist()[:3] == [-10, -10, -10]
    assert plan["depart.date"].tolist()[:3] == ["2026-01-05", "2026-01-12", "2026-01-19"]
    assert plan["drive.speed_factor"].tolist() == [0.9] * 9 + [1.0] * 9
    assert len(plan.drop_duplicates()) == 18
    assert sweep.shape_text == "2 drive.speed_factor × 3 conditions.temp_c × 3 depart.date"


def test_ranges_include_both_ends():
    sweep = load_spec(simulate_spec(GPX, {
        "drive.speed_factor": {"start": 0.8, "stop": 1.1, "step": 0.1},
        "conditions.temp_c": {"start": 0, "stop": 10, "num": 3}}))
    plan = sweep.plan
    assert sorted(set(plan["drive.speed_factor"])) == [0.8, 0.9, 1.0, 1.1]
    assert sorted(set(plan["conditions.temp_c"])) == [0.0, 5.0, 10.0]


def test_latin_hypercube_is_seeded_and_stratified():
    spec = simulate_spec(GPX, {"conditions.temp_c": {"dist": "uniform", "low": -10, "high": 30},
                               "conditions.wind_speed_mps": {"dist": "normal", "mean": 3,
                                                             "sd": 2, "low": 0, "high": 8},
                               "drive.speed_factor": [0.9, 1.1]},
                         draws={"n": 20, "method": "lhs"}, seed=5)
    a, b = load_spec(spec).plan, load_spec(spec).plan
    pd.testing.assert_frame_equal(a, b)
    other = load_spec({**spec, "seed": 6}).plan
    assert not np.allclose(a["conditions.temp_c"], other["conditions.temp_c"])
    # each grid point runs the same 20 draws (common random numbers)
    first, second = a.iloc[:20], a.iloc[20:]
    assert (first["drive.speed_factor"] == 0.9).all()
    assert (second["drive.speed_factor"] == 1.1).all()
    np.testing.assert_array_equal(first["conditions.temp_c"], second["conditions.temp_c"])
    # a Latin hypercube puts one draw in each of the 20 equal strata of every axis
    strata = np.floor((first["conditions.temp_c"] + 10) / 40 * 20)
    assert sorted(strata) == list(range(20))
    wind = first["conditions.wind_speed_mps"]
    assert wind.between(0, 8).all()


def test_unit_draws_methods():
    lhs = unit_draws(50, 3, method="lhs", seed=1)
    mc = unit_draws(50, 3, method="monte-carlo", seed=1)
    assert lhs.shape == mc.shape == (50, 3)
    assert ((lhs >= 0) & (lhs < 1)).all() and ((mc >= 0) & (mc < 1)).all()
    for j in range(3):
        assert sorted(np.floor(lhs[:, j] * 50)) == list(range(50))
    np.testing.assert_array_equal(mc, unit_draws(50, 3, method="monte-carlo", seed=1))


def test_choice_and_triangular_draws():
    spec = simulate_spec(GPX, {
        "weather.source": {"dist": "choice", "values": [EPW, "clear-sky"], "weights": [3, 1]},
        "vehicle.body.payload_kg": {"dist": "triangular", "low": 80, "mode": 100, "high": 200},
        "depart.date": {"dist": "choice", "start": "2026-01-01", "stop": "2026-12-31",
                        "step_days": 1}}, draws={"n": 400})
    plan = load_spec(spec).plan
    share = (plan["weather.source"] == EPW).mean()
    assert share == pytest.approx(0.75, abs=0.01)  # stratified: almost exact
    assert plan["vehicle.body.payload_kg"].between(80, 200).all()
    assert plan["vehicle.body.payload_kg"].median() < 140
    assert plan["depart.date"].str.startswith("2026-").all()


@pytest.mark.parametrize(("axes", "extra", "match"), [
    ({"conditions.temp": [1]}, {}, r"\[axes\] conditions.temp: 'temp' is not a key of "
                                   r"\[conditions\]"),
    ({"conditions.temp_c": [10, 99]}, {}, r"\[axes\] conditions.temp_c: 99: 99 is out of range"),
    ({"kind": ["plan"]}, {}, r"\[axes\] kind: a sweep runs one kind"),
    ({"vehicle.body.mass": [1]}, {}, r"\[axes\] vehicle.body.mass: not a vehicle parameter"),
    ({"conditions.temp_c": {"dist": "uniform", "low": 0, "high": 1}}, {},
     r"\[axes\] conditions.temp_c: a distribution needs \[draws\]"),
    ({"conditions.temp_c": [1]}, {"draws": {"n": 3}}, r"\[draws\]: no axis has a distribution"),
    ({"conditions.temp_c": {"start": 0, "stop": 10}}, {}, "needs either step or num"),
    ({"conditions.temp_c": {"dist": "normal", "mean": 0, "sd": -1}}, {"draws": {"n": 2}},
     r"sd = -1: expected > 0"),
    ({"conditions.temp_c": {"dist": "gamma"}}, {"draws": {"n": 2}}, "dist = 'gamma'"),
    ({"depart": ["2026-01-01T08:00"], "depart.time": ["09:00"]}, {}, "not both"),
    ({"depart.time": ["25:00"]}, {}, r"depart.time: '25:00': expected a time of day"),
    ({"drive.speed_factor": []}, {}, "an empty list"),
    ({}, {"draws": {"n": 0}}, r"\[draws\] n: 0 is out of range"),
    ({}, {"seeds": 1}, r"seeds: unknown option"),
])
def test_bad_specs_name_the_axis(axes, extra, match):
    with pytest.raises(TripsimInputError, match=match):
        load_spec(simulate_spec(GPX, axes, **extra))


def test_base_scenario_errors_name_the_table(tmp_path):
    spec = simulate_spec(GPX, {}, scenario={"conditions": {"temp_c": 300}})
    with pytest.raises(TripsimInputError, match=r"\[scenario.conditions\] temp_c: 300"):
        load_spec(spec)
    with pytest.raises(TripsimInputError, match=r"\[scenario.outputs\]"):
        load_spec(simulate_spec(GPX, {}, scenario={"outputs": {"trace": "t.csv"}}))
    path = tmp_path / "s.toml"
    path.write_text('name = "x"\n[scenario]\nkind = "simulate"\n')
    with pytest.raises(TripsimInputError, match=r"s.toml: \[scenario\] route: required"):
        load_spec(path)
    path.write_text("[scenario\n")
    with pytest.raises(TripsimInputError, match="s.toml: not valid TOML"):
        load_spec(path)


def test_cli_refuses_a_bad_spec(tmp_path, capsys):
    path = tmp_path / "s.toml"
    path.write_text(f'[scenario]\nvehicle = "{VEHICLE}"\nroute = {{ file = "{GPX}" }}\n'
                    '[axes]\n"conditions.temp_c" = [20, 200]\n')
    assert main(["sweep", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "s.toml: [axes] conditions.temp_c: 200" in err
    assert not (tmp_path / "out").exists()


def test_the_demo_specs_are_valid():
    harbour = load_spec(DEMO / "sweep_harbour.toml")
    assert harbour.n_runs == 26 * 2 * 3 * 2 and harbour.kind == "simulate"
    sizes = load_spec(DEMO / "sweep_parcel_sizes.toml")
    assert sizes.n_runs == 2 * 12 and sizes.kind == "fleet"
    assert sizes.plan["vehicle.battery.usable_kwh"].between(40, 120).all()


def test_a_run_scenario_sets_its_axes_and_departure():
    base = {"kind": "simulate", "depart": "2026-03-01T09:15:00-02:00", "route": {"file": "r.gpx",
                                                                                 "segment_m": 10}}
    data = scenario_data(base, ("depart.date", "route.file", "vehicle.body.mass_kg"),
                         ("2026-07-04", "other.gpx", 999.0))
    assert data["depart"] == "2026-07-04T09:15:00-02:00"
    assert data["route"] == {"file": "other.gpx", "segment_m": 10}
    assert "vehicle" not in data and base["route"]["file"] == "r.gpx"  # the base is unchanged
    data = scenario_data({"kind": "simulate"}, ("depart.time",), ("17:45",))
    assert data["depart"] == "2026-06-21T17:45:00"


def test_vehicle_parameters_over_the_file():
    tern = read_vehicle(VEHICLE)
    heavy = overlay_vehicle(tern, (("body.mass_kg", 600.0), ("battery.usable_kwh", 20.0)))
    assert heavy.body.mass_kg == 600.0 and heavy.battery.usable_kwh == 20.0
    assert heavy.body.cd == tern.body.cd and heavy.panels == tern.panels
    slick = overlay_vehicle(tern, (("body.cda_m2", 0.18),))
    assert slick.body.drag_area_m2 == 0.18 and slick.body.cd is None
    bigger = overlay_vehicle(tern, (("panel_area_m2", 4.0),))
    assert sum(p.area_m2 for p in bigger.panels) == pytest.approx(4.0)
    assert bigger.panels[0].area_m2 / bigger.panels[1].area_m2 == pytest.approx(3.0)
    assert overlay_vehicle(tern, (("panel_area_m2", 0.0),)).panels == []
    tilted = overlay_vehicle(tern, (("panels.roof.tilt_deg", 10.0),))
    assert tilted.panels[0].tilt_deg == 10.0 and tilted.panels[1].tilt_deg == 20.0
    with pytest.raises(TripsimInputError, match="no panel named 'hood'"):
        overlay_vehicle(tern, (("panels.hood.area_m2", 1.0),))
    with pytest.raises(TripsimInputError, match="mass_kg"):
        overlay_vehicle(tern, (("body.mass_kg", -5.0),))


def test_flatten_keeps_numbers_and_words():
    row = flatten({"a": 1.5, "b": {"c": 2, "d": {"e": None}}, "caution": "x", "stops": [{"k": 1}],
                   "warnings": ["w1", "w2"], "n": np.int64(3), "ok": True})
    assert row == {"a": 1.5, "b.c": 2, "b.d.e": None, "warnings": "w1; w2", "n": 3, "ok": True}
    assert isinstance(row["n"], int)
    json.dumps(row)
