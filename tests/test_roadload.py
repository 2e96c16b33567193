import numpy as np
import pytest

from tripsim import roadload
from tripsim.units import G_MPS2


def test_aero_sign_follows_air_speed():
    assert roadload.aero_force_n(1.2, 0.6, 400.0) == pytest.approx(144.0)
    assert roadload.aero_force_n(1.2, 0.6, -25.0) < 0


def test_mean_square_air_speed_is_exact_for_constant_acceleration():
    # v² is linear in distance under constant acceleration: mean over distance = (v0²+v1²)/2
    v0, v1 = 10.0, 20.0
    s = np.linspace(0, 1, 100001)
    v2 = v0**2 + (v1**2 - v0**2) * s
    assert roadload.mean_square_air_speed(v0, v1, 0.0) == pytest.approx(np.trapezoid(v2, s))


def test_mean_square_with_tailwind_faster_than_vehicle_is_negative():
    assert roadload.mean_square_air_speed(2.0, 2.0, -5.0) == pytest.approx(-9.0)


def test_rolling_and_grade_arrays_and_nan():
    grade = np.array([0.0, 0.1, np.nan])
    roll = roadload.rolling_force_n(1000.0, 0.01, grade)
    assert roll[0] == pytest.approx(1000 * G_MPS2 * 0.01)
    assert roll[1] < roll[0]
    assert np.isnan(roll[2])
    g = roadload.grade_force_n(1000.0, grade)
    assert g[0] == 0.0 and g[1] == pytest.approx(1000 * G_MPS2 * np.sin(np.arctan(0.1)))
    assert np.isnan(g[2])


def test_rolling_rises_with_speed():
    assert roadload.rolling_force_n(1000.0, 0.01, 0.0, 30.0, 1e-4) > roadload.rolling_force_n(
        1000.0, 0.01, 0.0, 0.0, 1e-4)


def test_inertia():
    assert roadload.inertia_force_n(1040.0, np.array([1.0, -2.0])) == pytest.approx([1040, -2080])
