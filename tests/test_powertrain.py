import numpy as np
import pytest

from tripsim.compiled import jitted
from tripsim.powertrain import (
    drive_efficiency,
    drive_params,
    map_efficiency,
    power_split,
    regen_fade,
    split_wheel_power,
)
from tripsim.vehicle import Drivetrain


def test_split_conserves_energy():
    dt = Drivetrain(efficiency=0.9, regen_efficiency=0.7, regen_max_kw=50.0, regen_fade_kph=10.0)
    p = np.array([20_000.0, -10_000.0, -200_000.0, -5_000.0])
    v = np.array([20.0, 20.0, 20.0, 1.0])
    s = split_wheel_power(dt, p, v, p / v)
    brake = np.maximum(-p, 0)
    assert s.battery_w[0] == pytest.approx(20_000 / 0.9)
    assert s.regen_w[1] == pytest.approx(7_000.0)
    assert s.regen_w[2] == pytest.approx(50_000.0)  # capped
    assert s.regen_w[3] == pytest.approx(5_000 * 0.7 * 0.36)  # fades below 10 km/h
    np.testing.assert_allclose(s.regen_w + s.regen_loss_w + s.friction_w, brake)


def test_fade_shapes():
    assert regen_fade(np.array([0.0, 100.0]), 10.0).tolist() == [0.0, 1.0]
    assert regen_fade(np.array([0.0]), 0.0).tolist() == [1.0]


def test_efficiency_map_bilinear_and_clipped():
    dt = Drivetrain(regen_efficiency=0.7, wheel_radius_m=0.5, efficiency_map={
        "speed_kph": [0.0, 100.0], "torque_nm": [0.0, 1000.0],
        "efficiency": [[0.80, 0.90], [0.85, 0.95]]})
    p = drive_params(dt)
    eff = drive_efficiency(np.array([50 / 3.6, 500 / 3.6]), np.array([1000.0, 0.0]), p)
    assert eff[0] == pytest.approx((0.80 + 0.90 + 0.85 + 0.95) / 4)
    assert eff[1] == pytest.approx(0.85)  # clipped to 100 km/h, 0 Nm
    twin = jitted(map_efficiency)
    assert twin(50.0, 500.0, p.map_speed_kph, p.map_torque_nm, p.map_efficiency) == eff[0]


def test_compiled_split_equals_the_numpy_function():
    dt = Drivetrain(efficiency=0.88, regen_efficiency=0.65, regen_max_kw=40.0)
    p = drive_params(dt)
    twin = jitted(power_split)
    for w, v in [(30_000.0, 25.0), (-80_000.0, 20.0), (-3_000.0, 1.5), (0.0, 10.0)]:
        assert twin(w, v, w / v, p) == tuple(float(x) for x in power_split(w, v, w / v, p))
