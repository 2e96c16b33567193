import numpy as np
import pandas as pd
import pytest

from tripsim.drive import DriveOptions, clock, segment_times_s, speed_profile, target_speed_mps
from tripsim.errors import TripsimInputError


def _profile(n=400, seg=25.0, target=30.0, stops=(), **kw):
    length = np.full(n, seg)
    stop = np.zeros(n + 1, dtype=bool)
    stop[list(stops)] = True
    return length, speed_profile(length, np.full(n, target), stop, accel_mps2=1.2,
                                 decel_mps2=1.8, **kw)


def test_starts_and_ends_at_rest_and_respects_target():
    _, v = _profile()
    assert v[0] == 0.0 and v[-1] == 0.0
    assert v.max() == pytest.approx(30.0)


def test_acceleration_and_braking_limits_hold():
    length, v = _profile(stops=(200,))
    accel = np.diff(v**2) / (2 * length)
    assert accel.max() <= 1.2 + 1e-9
    assert accel.min() >= -1.8 - 1e-9
    assert v[200] == 0.0


def test_motor_power_limits_climb_speed():
    n = 2000
    grade = np.full(n, 0.10)  # 10 % climb, no rolling or drag
    _, v = _profile(n=n, target=40.0, power_w=30_000.0, inertial_mass_kg=1560.0,
                    mass_kg=1500.0, grade=grade)
    # power-limited equilibrium: P / F ≈ 20 m/s with F = m g sin(atan 0.1)
    force = 1500 * 9.80665 * 0.1 / np.sqrt(1.01)
    assert v[n // 2] == pytest.approx(30_000 / force, rel=0.02)


def test_curve_target():
    t = target_speed_mps(np.array([30.0, 30.0]), np.array([0.0, 1 / 50.0]), speed_factor=1.0,
                         lateral_accel_mps2=2.0, top_speed_mps=50.0)
    assert t[0] == 30.0 and t[1] == pytest.approx(10.0)


def test_segment_times_constant_acceleration_and_triangle():
    t = segment_times_s(np.array([100.0, 10.0]), np.array([10.0, 30.0, 0.0]), accel_mps2=1.0,
                        decel_mps2=1.0)
    assert t[0] == pytest.approx(5.0)
    t2 = segment_times_s(np.array([8.0]), np.array([0.0, 0.0]), accel_mps2=1.0, decel_mps2=1.0)
    assert t2[0] == pytest.approx(2 * np.sqrt(8.0))  # accelerate 4 m, brake 4 m


def test_clock_needs_a_time_zone():
    idx = clock(pd.Timestamp("2026-01-01T08:00+01:00"), np.array([60.0, 60.0, 60.0]))
    assert str(idx[2].tz) == "UTC+01:00" and idx[2].minute == 2
    with pytest.raises(TripsimInputError, match="time zone"):
        clock(pd.Timestamp("2026-01-01T08:00"), np.array([1.0]))


def test_drive_options_are_checked():
    with pytest.raises(TripsimInputError, match=r"--accel-mps2: 0 is out of range \(expected "
                       r"≥ 0.05 and ≤ 10\)"):
        DriveOptions(accel_mps2=0.0)
    with pytest.raises(TripsimInputError, match="--speed-factor: nan is not a finite number"):
        DriveOptions(speed_factor=float("nan"))
    with pytest.raises(TripsimInputError, match="--signal-wait-s: True: expected a number"):
        DriveOptions(signal_wait_s=True)
    with pytest.raises(TripsimInputError, match="--stop-at-sign: unknown option|stop_at_sign"):
        DriveOptions(stop_at_sign=True)
    assert DriveOptions().replace(speed_factor=0.9).speed_factor == 0.9
