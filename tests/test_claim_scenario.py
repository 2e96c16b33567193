"""Range claims as a scenario kind (``tripsim run``, sweeps) and on a Dask cluster.

The same claim reached three ways — ``tripsim claim``, a scenario file and a sweep row —
and with its departures shared out over a cluster must give the same figures: it is
one computation (:func:`tripsim.claims.range_claim.check_claim`).
"""

import json

import numpy as np
import pytest
from conftest import DEMO
from sweep_support import EPW, VEHICLE, cluster_client, small_gpx

import tripsim
from tripsim.claims.range_claim import Claim, ClaimOptions, check_claim
from tripsim.cli import main
from tripsim.errors import TripsimInputError
from tripsim.inputs import load_segments
from tripsim.io import read_vehicle
from tripsim.io.weather_files import read_weather
from tripsim.scenario import Scenario


@pytest.fixture(scope="module")
def route(tmp_path_factory):
    return small_gpx(tmp_path_factory.mktemp("claim_route"))


def _scenario(route, **claim) -> dict:
    return {"kind": "claim", "vehicle": VEHICLE, "speed_kph": 50.0,
            "route": {"file": str(route)}, "weather": {"source": EPW},
            "claim": {"km": 120.0, "options": {"draws": 8, "sensitivity_samples": 3},
                      **claim}}


def _run(args):
    try:
        return main(args)
    except SystemExit as exc:
        return exc.code


def _one_line_error(args, capsys) -> str:
    """Run a command that must fail on bad input: exit 2 and one line on stderr."""
    assert _run(args) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    return err[0]


def test_scenario_file_gives_what_the_claim_command_gives(route, tmp_path, capsys):
    toml = tmp_path / "claim.toml"
    toml.write_text(f"""kind = "claim"
vehicle = "{VEHICLE}"
speed_kph = 50
[route]
file = "{route}"
[weather]
source = "{EPW}"
[claim]
mi = 75
stated_temp_c = 10
cycle = "{DEMO / 'lab_cycle.csv'}"
[claim.options]
draws = 8
sensitivity_samples = 3
reserve_soc = 0.1
[outputs]
samples_csv = "samples.csv"
""")
    assert main(["run", str(toml), "--json"]) == 0
    from_file = json.loads(capsys.readouterr().out)
    assert main(["claim", str(route), "--vehicle", VEHICLE, "--weather", EPW, "--speed-kph",
                 "50", "--claim-mi", "75", "--stated-temp-c", "10", "--draws", "8",
                 "--sensitivity-samples", "3", "--reserve", "0.1", "--cycle",
                 str(DEMO / "lab_cycle.csv"), "--json"]) == 0
    from_flags = json.loads(capsys.readouterr().out)
    for key in ("range_km_p10", "range_km_p50", "range_km_p90", "share_meeting_claim",
                "wh_per_km_p50", "claim_mi"):
        assert from_file[key] == from_flags[key], key
    # the route is named by the scenario (its file) or by the track: the rest is the same
    assert from_file["verdict"].split(" driven ")[1] == from_flags["verdict"].split(" driven ")[1]
    assert from_file["lab_cycle"]["range_km"] == from_flags["lab_cycle"]["range_km"]
    assert from_file["sensitivity"] == from_flags["sensitivity"]
    assert (tmp_path / "samples.csv").read_text().count("\n") == 9  # header + 8 departures


@pytest.mark.parametrize(("claim", "top", "match"), [
    ({"mi": 80.0}, {}, "one of the two"),
    ({"km": None}, {}, "one of the two"),
    ({}, {"depart": "2026-05-01T08:00"}, "samples its departures"),
    ({}, {"start_soc": 0.9}, r"\[claim.options\] start_soc"),
    ({}, {"drive": {"speed_factor": 1.1}}, r"\[claim.options\] speed_factor"),
    ({}, {"weather": None}, "weather year"),
    ({}, {"outputs": {"trace": "t.csv"}}, "not an output of claim"),
])
def test_claim_scenario_refuses_what_does_not_fit(route, claim, top, match):
    from pydantic import ValidationError

    data = _scenario(route, **claim)
    data.update(top)
    with pytest.raises((TripsimInputError, ValidationError), match=match):
        Scenario.model_validate(data)


def test_claim_of_a_simulation_is_refused(route):
    from pydantic import ValidationError

    with pytest.raises((TripsimInputError, ValidationError), match="applies to claims"):
        Scenario.model_validate({**_scenario(route), "kind": "simulate", "weather": None})


def test_bad_claim_key_in_a_file_is_one_line(route, tmp_path, capsys):
    toml = tmp_path / "bad.toml"
    toml.write_text(f'kind = "claim"\nvehicle = "{VEHICLE}"\n[route]\nfile = "{route}"\n'
                    f'[weather]\nsource = "{EPW}"\n[claim]\nkm = 100\n'
                    '[claim.options]\ndraws = -4\n')
    assert "[claim.options] draws" in _one_line_error(["run", str(toml)], capsys)


@pytest.fixture(scope="module")
def parts(route):
    """Route (as a scenario reads it: the defaults of ``[route]``), vehicle, weather."""
    return load_segments(route), read_vehicle(VEHICLE), read_weather(EPW)


def test_departures_on_the_cluster_equal_this_process(parts):
    segments, vehicle, weather = parts
    claim = Claim(distance_km=100.0)
    opts = ClaimOptions(draws=10, sensitivity_samples=4)
    here = check_claim(segments, vehicle, weather, claim, opts, default_speed_kph=50.0)
    there = check_claim(segments, vehicle, weather, claim, opts, default_speed_kph=50.0,
                        client=cluster_client())
    for col in ("range_km", "wh_per_km", "available_wh", "hours", "solar_wh"):
        assert np.allclose(here.samples[col], there.samples[col], rtol=1e-9, atol=1e-9), col
    assert [r["range_km_low"] for r in here.sensitivity] == pytest.approx(
        [r["range_km_low"] for r in there.sensitivity], rel=1e-9)
    assert here.verdict() == there.verdict()


def test_claim_sweep_rows_equal_the_claims(route, parts, tmp_path):
    spec = {"name": "claims", "scenario": _scenario(route),
            "axes": {"claim.options.speed_factor": [0.9, 1.1]}}
    rows = tripsim.sweep(spec, client=cluster_client(), out=str(tmp_path / "sw"))
    rows = rows.compute() if hasattr(rows, "compute") else rows
    rows = rows.sort_values("claim.options.speed_factor").reset_index(drop=True)
    assert rows["ok"].all() and len(rows) == 2
    segments, vehicle, weather = parts
    for factor, row in zip((0.9, 1.1), rows.itertuples(index=False), strict=True):
        direct = check_claim(segments, vehicle, weather, Claim(distance_km=120.0),
                             ClaimOptions(draws=8, sensitivity_samples=3,
                                          speed_factor=factor),
                             default_speed_kph=50.0).to_dict()
        got = row._asdict()
        assert got["range_km_p50"] == pytest.approx(direct["range_km_p50"], rel=1e-9)
        assert got["share_meeting_claim"] == pytest.approx(direct["share_meeting_claim"])
    assert rows["range_km_p50"].iloc[0] > rows["range_km_p50"].iloc[1]  # slower goes farther


def test_claim_workers_option_is_checked(route, capsys):
    err = _one_line_error(["claim", str(route), "--vehicle", VEHICLE, "--weather", EPW,
                           "--speed-kph", "50", "--claim-km", "100", "--draws", "2",
                           "--workers", "0"], capsys)
    assert "--workers" in err and "expected 1 to" in err


def test_a_conflict_in_a_claim_file_names_the_claims_key(route, tmp_path, capsys):
    toml = tmp_path / "reserve.toml"
    toml.write_text(f'kind = "claim"\nvehicle = "{VEHICLE}"\nspeed_kph = 50\n[route]\n'
                    f'file = "{route}"\n[weather]\nsource = "{EPW}"\n[claim]\nkm = 100\n'
                    '[claim.options]\ndraws = 2\nstart_soc = 0.5\nreserve_soc = 0.6\n')
    assert "[claim.options] reserve_soc: 0.6 must be below" in _one_line_error(
        ["run", str(toml)], capsys)
    # a problem found while computing names the file's key too, not the flag
    toml.write_text(toml.read_text().replace("start_soc = 0.5\nreserve_soc = 0.6\n",
                                             'corridor = "loop"\n'))
    assert "[claim.options] corridor: the route ends" in _one_line_error(
        ["run", str(toml)], capsys)


def test_a_claim_is_not_checked_under_a_clear_sky(route):
    from pydantic import ValidationError

    with pytest.raises((TripsimInputError, ValidationError), match="typical weather year"):
        Scenario.model_validate({**_scenario(route), "weather": {"source": "clear-sky"}})


def test_a_lab_cycle_axis_is_read_per_run(route, tmp_path):
    """A sweep axis over the claim's lab cycle: each run reads its own (a missing file is
    that run's failure row, not an ok row without a cycle)."""
    spec = {"name": "cycles", "scenario": _scenario(route),
            "axes": {"claim.cycle": [str(DEMO / "lab_cycle.csv"), "nowhere.csv"]}}
    spec["scenario"]["claim"]["options"]["sensitivity_samples"] = 0
    rows = tripsim.sweep(spec, workers=0).set_index("claim.cycle")
    good, bad = rows.loc[str(DEMO / "lab_cycle.csv")], rows.loc["nowhere.csv"]
    assert good["ok"] and good["lab_cycle.range_km"] > 0
    assert not bad["ok"] and "nowhere.csv" in bad["error"]


def test_a_sweep_folder_without_parts_is_started_afresh(tmp_path):
    """A sweep stopped by bad input before its first part leaves its folder usable by the
    corrected spec (before: refused as "the results of another sweep")."""
    from tripsim.io.sweep_results import open_sweep_folder

    out = tmp_path / "sw"
    assert open_sweep_folder(out, {"fingerprint": "first"}) is False
    assert open_sweep_folder(out, {"fingerprint": "corrected"}) is False
    assert json.loads((out / "sweep.json").read_text())["fingerprint"] == "corrected"


def test_claim_command_on_a_local_cluster_equals_one_process(route, capsys):
    args = ["claim", str(route), "--vehicle", VEHICLE, "--weather", EPW, "--speed-kph", "50",
            "--claim-km", "100", "--draws", "4", "--sensitivity-samples", "2", "--json"]
    assert main(args) == 0
    here = json.loads(capsys.readouterr().out)
    assert main([*args, "--workers", "1"]) == 0
    captured = capsys.readouterr()
    there = json.loads(captured.out)
    for key in ("range_km_p10", "range_km_p50", "range_km_p90", "wh_per_km_p50"):
        assert there[key] == pytest.approx(here[key], rel=1e-9), key
    for a, b in zip(there["sensitivity"], here["sensitivity"], strict=True):
        for end in ("range_km_low", "range_km_high"):
            assert a[end] == pytest.approx(b[end], rel=1e-9), (a["option"], end)
    assert "Traceback" not in captured.err
