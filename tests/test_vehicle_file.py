import pytest
from conftest import DEMO

from tripsim.errors import VehicleFileError
from tripsim.io import read_vehicle

MINIMAL = """
[body]
mass_kg = 1450.0
payload_kg = 80.0
cd = 0.27
frontal_area_m2 = 2.25
crr = 0.0085
[drivetrain]
efficiency = 0.90
regen_efficiency = 0.70
[battery]
usable_kwh = 58.0
[auxiliary]
base_w = 350.0
"""


def _write(tmp_path, text):
    p = tmp_path / "car.toml"
    p.write_text(text)
    return p


def test_minimal_file(tmp_path):
    v = read_vehicle(_write(tmp_path, MINIMAL))
    assert v.name == "car" and v.mass_kg == 1530.0
    assert v.body.drag_area_m2 == pytest.approx(0.6075)


@pytest.mark.parametrize("name", ["swift_tern", "harbour_crossover", "parcel_mule"])
def test_demo_vehicles(name):
    assert read_vehicle(DEMO / "vehicles" / f"{name}.toml").battery.usable_kwh > 10


@pytest.mark.parametrize(("old", "new", "match"), [
    ("cd = 0.27", "cd = 3.5", r"\[body\] cd = 3.5 is out of range \(expected ≤ 1.5\)"),
    ("crr = 0.0085", "crr = 0.0085\ncrrr = 1", r"\[body\] crrr: unknown key"),
    ("usable_kwh = 58.0", "", r"\[battery\] usable_kwh: required key is missing"),
    ("cd = 0.27\n", "", "give either cda_m2, or both cd and frontal_area_m2"),
    ("efficiency = 0.90\n", "efficiency = 1.2\n", r"\[drivetrain\] efficiency = 1.2"),
    ("mass_kg = 1450.0", 'mass_kg = "heavy"', r"\[body\] mass_kg = 'heavy'"),
    ("base_w = 350.0", "base_w = 350.0\n[[panels]]\narea_m2 = -1\nefficiency = 0.2",
     r"\[panels #1\] area_m2 = -1 is out of range"),
])
def test_bad_keys_are_named(tmp_path, old, new, match):
    with pytest.raises(VehicleFileError, match=match) as err:
        read_vehicle(_write(tmp_path, MINIMAL.replace(old, new, 1)))
    assert "car.toml" in str(err.value)


def test_not_toml_and_missing(tmp_path):
    with pytest.raises(VehicleFileError, match="not valid TOML"):
        read_vehicle(_write(tmp_path, "[body\nmass"))
    with pytest.raises(VehicleFileError, match="no such file"):
        read_vehicle(tmp_path / "nope.toml")


def test_curves_are_checked(tmp_path):
    text = MINIMAL + '\n[battery.ocv]\nx = [0.0, 0.5]\ny = [300.0, 350.0]\n'
    text = text.replace("[battery]\nusable_kwh = 58.0\n", "[battery]\nusable_kwh = 58.0\n", 1)
    with pytest.raises(VehicleFileError, match="must span 0 to 1"):
        read_vehicle(_write(tmp_path, text))
