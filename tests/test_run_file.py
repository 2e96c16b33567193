"""``tripsim run FILE``: a scenario list checks every output first and writes all or none."""

import json
import shutil

import pytest
from conftest import DEMO

from tripsim.cli import main

LIST = """
[defaults]
vehicle = "vehicles/swift_tern.toml"
speed_kph = 50
route.file = "harbour_loop.gpx"

[[scenario]]
name = "mild"
conditions.temp_c = 20
outputs.trace = "{out}/mild.csv"

[[scenario]]
name = "cold"
conditions.temp_c = -10
outputs.trace = "{out}/cold.csv"
{extra}
"""


@pytest.fixture
def region(tmp_path):
    for name in ("harbour_loop.gpx", "vehicles"):
        src = DEMO / name
        (shutil.copytree if src.is_dir() else shutil.copy)(src, tmp_path / name)
    (tmp_path / "out").mkdir()
    return tmp_path


def _write(region, extra="", out="out"):
    path = region / "runs.toml"
    path.write_text(LIST.format(out=out, extra=extra))
    return str(path)


def _code(args):
    try:
        return main(args)
    except SystemExit as exc:
        return exc.code


def test_runs_every_scenario_and_writes_each_output(region, capsys):
    assert _code(["run", _write(region), "--json", "--quiet"]) == 0
    runs = json.loads(capsys.readouterr().out)["runs"]
    assert [r["name"] for r in runs] == ["mild", "cold"]
    # the cabin heater and the cold pack make the cold run dearer on the same loop
    assert runs[1]["wh_per_km"] > runs[0]["wh_per_km"]
    assert (region / "out" / "mild.csv").stat().st_size > 0
    assert (region / "out" / "cold.csv").stat().st_size > 0


def test_a_later_scenario_failing_writes_nothing(region, capsys, monkeypatch):
    extra = '\n[[scenario]]\nname = "broken"\nweather.source = "nothere.epw"\n'
    _write(region, extra)
    monkeypatch.chdir(region)
    assert _code(["run", "runs.toml", "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    # one line, the file and the scenario, and the weather file as typed in it
    assert err == "tripsim: error: runs.toml: scenario 'broken': nothere.epw: no such file"
    assert list((region / "out").iterdir()) == []


def test_an_output_folder_missing_names_the_key_before_any_run(region, capsys):
    assert _code(["run", _write(region, out="nowhere"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "scenario 'mild': outputs.trace: nowhere/mild.csv: the folder nowhere does not exist" \
        in err


def test_two_scenarios_writing_one_file_is_refused(region, capsys):
    text = LIST.format(out="out", extra="").replace("cold.csv", "mild.csv")
    path = region / "runs.toml"
    path.write_text(text)
    assert _code(["run", str(path), "--quiet"]) == 2
    assert "mild.csv is also an output of scenario 'mild'" in capsys.readouterr().err
    assert list((region / "out").iterdir()) == []
