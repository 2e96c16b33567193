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


def test_numbers_are_strict_but_integers_count(tmp_path):
    """Issue 8, item 6: `efficiency = true` was read as 1.0."""
    v = read_vehicle(_write(tmp_path, MINIMAL.replace("mass_kg = 1450.0", "mass_kg = 1450")))
    assert v.body.mass_kg == 1450.0
    for old, new, match in [("efficiency = 0.90", "efficiency = true", "valid number"),
                            ("mass_kg = 1450.0", 'mass_kg = "1450"', "valid number"),
                            ("mass_kg = 1450.0", "mass_kg = nan", "finite number"),
                            ("base_w = 350.0", "base_w = inf", "finite number")]:
        with pytest.raises(VehicleFileError, match=match):
            read_vehicle(_write(tmp_path, MINIMAL.replace(old, new)))


def test_heat_pump_cop_and_charge_curve_must_be_positive(tmp_path):
    """Issue 8, item 7: a COP of 0 or -2 was clamped to 1; a zero curve planned 666-min stops."""
    cop = MINIMAL + "heat_pump = true\nheat_pump_cop = {{ x = [-20.0, 10.0], y = [{y}, 3.0] }}\n"
    assert read_vehicle(_write(tmp_path, cop.format(y=0.8))).auxiliary.heat_pump_cop.y[0] == 0.8
    for y in ("0.0", "-2.0", "11.0"):
        with pytest.raises(VehicleFileError, match=r"\[auxiliary\]: heat_pump_cop.y \(COP\) must "
                           r"be in \(0, 10\]"):
            read_vehicle(_write(tmp_path, cop.format(y=y)))
    curve = MINIMAL + "[charging]\ndc_max_kw = 50.0\ncurve = {{ x = {x}, y = {y} }}\n"
    ok = read_vehicle(_write(tmp_path, curve.format(x="[0.0, 0.8, 1.0]", y="[50.0, 30.0, 5.0]")))
    assert ok.charging.curve.y[-1] == 5.0
    for x, y, match in [("[0.0, 1.0]", "[50.0, 0.0]", "got 0 kW at SoC 1"),
                        ("[0.0, 1.0]", "[-5.0, 50.0]", "got -5 kW at SoC 0"),
                        ("[0.0, 1.5]", "[50.0, 20.0]", "within 0 to 1")]:
        with pytest.raises(VehicleFileError, match=match):
            read_vehicle(_write(tmp_path, curve.format(x=x, y=y)))


def test_connectors_are_known_and_normalised(tmp_path):
    text = MINIMAL + '[charging]\nconnectors = ["Type2", "ccs", "CHAdeMO"]\n'
    v = read_vehicle(_write(tmp_path, text))
    assert v.charging.connectors == ["type2", "type2_combo", "chademo"]
    with pytest.raises(VehicleFileError, match=r"\[charging\] connectors: connector 'warp' is "
                       "unknown"):
        read_vehicle(_write(tmp_path, MINIMAL + '[charging]\nconnectors = ["warp"]\n'))


def test_efficiency_map_refuses_nan_speeds(tmp_path):
    text = MINIMAL + ("[drivetrain.efficiency_map]\nspeed_kph = [0.0, nan, 120.0]\n"
                      "torque_nm = [0.0, 300.0]\n"
                      "efficiency = [[0.8, 0.9], [0.8, 0.9], [0.8, 0.9]]\n")
    with pytest.raises(VehicleFileError, match=r"efficiency_map.speed_kph.1 = nan"):
        read_vehicle(_write(tmp_path, text))
