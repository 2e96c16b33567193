import numpy as np
import pandas as pd
import pytest
from conftest import make_vehicle, straight_route

from tripsim.errors import TripsimInputError
from tripsim.report.text import format_summary
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate

REQUIRED_TRACE = ["clock", "start_m", "speed_mps", "accel_mps2", "f_aero_n", "f_rolling_n",
                  "f_grade_n", "f_inertia_n", "wheel_power_w", "traction_battery_w",
                  "aux_power_w", "cum_battery_wh", "soc", "lat_deg", "lon_deg", "elevation_m"]


@pytest.fixture
def hilly():
    r = straight_route(20_000.0, n_points=41, stops=[10, 30])
    z = 200 + 60 * np.sin(np.linspace(0, 6, 41))
    return segment_route(r.with_elevation(z, "file"))


def test_trace_has_the_columns_and_one_row_a_segment(hilly, vehicle):
    trip = simulate(hilly, vehicle, depart="2026-03-01T09:00+01:00")
    assert len(trip.trace) == len(hilly)
    assert set(REQUIRED_TRACE) <= set(trip.trace.columns)
    assert trip.trace["clock"].iloc[0] == pd.Timestamp("2026-03-01T09:00+01:00")
    assert trip.trace["clock"].is_monotonic_increasing


def test_breakdown_adds_up_to_battery_energy(hilly, vehicle):
    for cond in (Conditions(), Conditions(temp_c=-10, wind_speed_mps=8, wind_from_deg=90)):
        s = simulate(hilly, vehicle, conditions=cond).summary
        assert sum(s.breakdown_wh.values()) == pytest.approx(s.battery_wh, rel=1e-9)
        assert s.wh_per_mi == pytest.approx(s.wh_per_km * 1.609344)


def test_rint_breakdown_adds_up(hilly):
    v = make_vehicle(battery={"usable_kwh": 58.0, "internal_resistance_ohm": 0.1,
                              "ocv": {"x": [0, 1], "y": [330, 400]}})
    s = simulate(hilly, v, battery_model="rint").summary
    assert s.breakdown_wh["battery_losses_wh"] > 0
    assert sum(s.breakdown_wh.values()) == pytest.approx(s.battery_wh, rel=1e-6)


def test_no_regen_into_a_full_battery(vehicle):
    down = segment_route(straight_route(5000.0, n_points=11, climb_m=-300.0))
    full = simulate(down, vehicle, start_soc=1.0).summary
    half = simulate(down, vehicle, start_soc=0.5).summary
    assert half.regen_wh > 100
    assert full.regen_wh < half.regen_wh
    assert full.final_soc <= 1.0
    assert sum(full.breakdown_wh.values()) == pytest.approx(full.battery_wh, rel=1e-9)


def test_stranding_says_where_and_soc_stays_non_negative():
    small = make_vehicle(battery={"usable_kwh": 2.0})
    seg = segment_route(straight_route(30_000.0, n_points=31))
    trip = simulate(seg, small)
    s = trip.summary
    assert s.stranded and 8 < s.stranded_at_km < 15
    assert s.final_soc == 0.0 and s.min_soc == 0.0 and s.shortfall_wh > 0
    assert trip.trace["soc"].min() >= 0.0
    assert not trip.trace["reached"].iloc[-1] and trip.trace["reached"].iloc[0]


def test_headwind_costs_energy(vehicle):
    seg = segment_route(straight_route(10_000.0, azimuth_deg=90.0))
    calm = simulate(seg, vehicle).summary.battery_wh
    head = simulate(seg, vehicle, conditions=Conditions(wind_speed_mps=8, wind_from_deg=90)
                    ).summary.battery_wh
    tail = simulate(seg, vehicle, conditions=Conditions(wind_speed_mps=8, wind_from_deg=270)
                    ).summary.battery_wh
    assert tail < calm < head


def test_missing_limits_need_a_speed(vehicle):
    seg = segment_route(straight_route(1000.0, speed_kph=None))
    with pytest.raises(TripsimInputError, match="--speed-kph"):
        simulate(seg, vehicle)
    assert simulate(seg, vehicle, default_speed_kph=60).summary.max_speed_kph == pytest.approx(60)


def test_bad_options(vehicle):
    seg = segment_route(straight_route(1000.0))
    with pytest.raises(TripsimInputError, match="start SoC"):
        simulate(seg, vehicle, start_soc=1.5)
    with pytest.raises(TripsimInputError, match="internal-resistance"):
        simulate(seg, vehicle, battery_model="rint")
    with pytest.raises(TripsimInputError, match="--temp-c: nan is not a finite number"):
        Conditions(temp_c=np.nan)
    with pytest.raises(TripsimInputError, match=r"--pressure-hpa: 2000 is out of range \(expected "
                       r"≥ 300 and ≤ 1100\)"):
        Conditions(pressure_pa=200_000.0)
    with pytest.raises(TripsimInputError, match="--wind-from-deg: inf is not a finite number"):
        Conditions(wind_from_deg=np.inf)


def test_compiled_force_pass_equals_the_numpy_functions(hilly, vehicle):
    from tripsim import roadload

    tr = simulate(hilly, vehicle, conditions=Conditions(wind_speed_mps=6, wind_from_deg=30)).trace
    v0, v1 = tr["v_start_mps"].to_numpy(), tr["v_end_mps"].to_numpy()
    aero = roadload.aero_force_n(tr["density_kg_m3"].to_numpy(), vehicle.body.drag_area_m2,
                                 roadload.mean_square_air_speed(v0, v1, tr["headwind_mps"]))
    roll = roadload.rolling_force_n(vehicle.mass_kg, vehicle.body.crr, tr["grade"].to_numpy(),
                                    0.5 * (v0 + v1), vehicle.body.crr_per_mps)
    np.testing.assert_allclose(tr["f_aero_n"], aero, rtol=1e-12)
    np.testing.assert_allclose(tr["f_rolling_n"], roll, rtol=1e-12)


def test_an_empty_battery_ends_the_trip_and_says_so():
    """Before, a 75 kWh car reported 119.9 kWh drawn and an arrival clock."""
    small = make_vehicle(battery={"usable_kwh": 2.0})
    seg = segment_route(straight_route(30_000.0, n_points=31))
    s = simulate(seg, small, start_soc=0.9).summary
    assert s.stranded and s.arrive is None
    assert s.battery_wh == pytest.approx(0.9 * s.capacity_wh, rel=1e-9)
    assert s.needed_wh > s.battery_wh
    assert s.shortfall_wh == pytest.approx(s.needed_wh - s.battery_wh)
    assert s.driven_km == pytest.approx(s.stranded_at_km)
    assert s.wh_per_km == pytest.approx(s.battery_wh / s.driven_km)
    assert sum(s.breakdown_wh.values()) == pytest.approx(s.battery_wh, rel=1e-9)
    assert pd.Timestamp(s.stranded_clock) > pd.Timestamp(s.depart)
    # clocks to the second
    assert "." not in s.depart and "." not in s.stranded_clock
    text = format_summary(s)
    assert "None" not in text and "no arrival" in text and s.stranded_clock in text
    assert f"{s.stranded_at_km:.1f} km of 30.0 km" in text


def test_a_departure_without_offset_is_local_time_of_the_route(vehicle):
    berlin = segment_route(straight_route(3000.0, lat0=52.5, lon0=13.4))
    summer = simulate(berlin, vehicle, depart="2026-07-01T08:00").trace["clock"].iloc[0]
    winter = simulate(berlin, vehicle, depart="2026-01-05T08:00").trace["clock"].iloc[0]
    assert summer.utcoffset() == pd.Timedelta(hours=2)
    assert winter.utcoffset() == pd.Timedelta(hours=1)
    default = simulate(berlin, vehicle).trace["clock"].iloc[0]
    assert (default.hour, default.utcoffset()) == (8, pd.Timedelta(hours=2))
    with pytest.raises(TripsimInputError, match="daylight-saving"):
        simulate(berlin, vehicle, depart="2026-03-29T02:30")


def test_rotating_mass_belongs_to_the_vehicle_not_the_payload():
    v = make_vehicle(body={"mass_kg": 1000.0, "payload_kg": 500.0, "rotating_mass_factor": 1.1})
    assert v.inertial_mass_kg == pytest.approx(1000.0 * 1.1 + 500.0)


def test_cold_is_counted_once():
    """A pack that is kept warm keeps its capacity; one that is not loses it (no heating)."""
    warmed = make_vehicle(auxiliary={"base_w": 300.0, "battery_heat_below_c": 5.0,
                                     "battery_heat_w_per_k": 25.0})
    cold = make_vehicle(auxiliary={"base_w": 300.0, "battery_heat_w_per_k": 0.0})
    assert warmed.capacity_factor(-15.0) == pytest.approx(warmed.capacity_factor(5.0))
    assert cold.capacity_factor(-15.0) < cold.capacity_factor(5.0)
    seg = segment_route(straight_route(10_000.0))
    a = simulate(seg, warmed, conditions=Conditions(temp_c=-15.0)).summary
    b = simulate(seg, cold, conditions=Conditions(temp_c=-15.0)).summary
    assert a.capacity_wh > b.capacity_wh and a.aux_wh > b.aux_wh
